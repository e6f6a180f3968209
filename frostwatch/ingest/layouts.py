"""Other JSON layouts over MQTT, mapped in the config ([[mappings]]): which topics, which payload
fields hold which quantity, in which units, with which time field. Pure, like frostwatch.ingest.parse.
"""

from __future__ import annotations

import datetime as dt
from collections.abc import Collection
from dataclasses import dataclass, field

from frostwatch.ingest.values import BadValue, _cut, _loads_strict, _readings, shown
from frostwatch.models import Reading, Rejection


@dataclass(frozen=True)
class Mapping:
    """How to read one foreign JSON layout: which topics, which fields hold which quantity.

    `topic` is an MQTT topic filter in which one level may be `{station}` (that level names the
    station; the security rule is that the id comes from the topic, which broker ACLs enforce,
    never from the payload); otherwise `station` names it. `fields` maps a payload path
    (dot-separated, e.g. "uplink.temp") to a quantity, `units` a path to its unit (canonical if
    absent), `time_field` the path of the reading time (receipt time if None) read as
    `time_format`. `station_map` renames device ids found in the topic to station ids.
    """

    topic: str
    fields: dict[str, str]
    units: dict[str, str] = field(default_factory=dict)
    station: str | None = None
    time_field: str | None = None
    time_format: str = "iso8601"
    station_map: dict[str, str] = field(default_factory=dict)

    @property
    def subscription(self) -> str:
        return "/".join("+" if lv == "{station}" else lv for lv in self.topic.split("/"))

    def station_for(self, topic: str) -> str | None:
        """The station id if `topic` matches this mapping, else None."""
        pat, parts = self.topic.split("/"), topic.split("/")
        station = self.station
        for i, lv in enumerate(pat):
            if lv == "#":
                break
            if i >= len(parts):
                return None
            if lv == "{station}":
                station = self.station_map.get(parts[i], parts[i])
            elif lv != "+" and lv != parts[i]:
                return None
        else:
            if len(parts) != len(pat):
                return None
        return station


def _path(doc: object, path: str) -> object:
    cur = doc
    for key in path.split("."):
        if not isinstance(cur, dict) or key not in cur:
            raise KeyError(path)
        cur = cur[key]
    return cur


def _parse_mapped(
    m: Mapping,
    station: str,
    topic: str,
    payload: bytes,
    received_utc: dt.datetime,
    known_stations: Collection[str] | None,
    max_future_s: float,
    max_age_s: float | None,
) -> list[Reading | Rejection]:
    source = f"mqtt:{topic}"
    raw = payload[:200].decode("utf-8", "replace")
    try:
        if not station:
            raise BadValue(f"mapping {m.topic!r} names no station for topic {topic!r}")
        if known_stations is not None and station not in known_stations:
            raise BadValue(f"unknown station {shown(station)} (mapping {m.topic!r}); declare it under [[stations]] or in the mapping's station_map")
        doc = _loads_strict(payload)
        if not isinstance(doc, dict):
            raise BadValue(f"payload must be a JSON object for mapping {m.topic!r}")
        time_obj = None
        if m.time_field:
            try:
                time_obj = _path(doc, m.time_field)
            except KeyError:
                raise BadValue(f"payload has no time field {m.time_field!r} (mapping {m.topic!r})") from None
        items: list[tuple[str, object, str | None, object]] = []
        for path, quantity in m.fields.items():
            try:
                val = _path(doc, path)
            except KeyError:
                continue  # a layout may carry only some of its fields in a message
            items.append((quantity, val, m.units.get(path), time_obj))
        if not items:
            raise BadValue(f"payload holds none of the mapped fields {', '.join(m.fields)} (mapping {m.topic!r})")
    except BadValue as exc:
        return [Rejection(source, None, _cut(str(exc)), raw)]
    return _readings(items, station, source, raw, received_utc, max_future_s, max_age_s, m.time_format)
