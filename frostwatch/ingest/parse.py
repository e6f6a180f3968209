"""Pure parsing: a sensor-log row or an MQTT payload becomes a `Reading` or a `Rejection`.

Nothing here raises on bad input: every problem becomes a `Rejection` with a reason that says
what is wrong, the value, and what was expected. No I/O, no clock (receipt time is passed in).
"""

from __future__ import annotations

import datetime as dt
import json
import math
from collections.abc import Collection, Sequence
from dataclasses import dataclass, field

from frostwatch.errors import UnitError
from frostwatch.models import Reading, Rejection
from frostwatch.units import QUANTITIES, to_canonical

LOG_COLUMNS = ("time", "station", "quantity", "value", "unit")
REQUIRED_COLUMNS = ("time", "station", "quantity", "value")


class BadValue(Exception):
    """Internal: a reason for rejecting one value."""


def parse_time_utc(text: str) -> dt.datetime:
    """Parse an ISO 8601 instant that carries a UTC offset or `Z`; return it in UTC.

    Raises `BadValue` for a time without an offset (it is an error, not a guess) or one that
    cannot be read.
    """
    s = text.strip()
    if not s:
        raise BadValue("empty time; expected ISO 8601 with a UTC offset, e.g. 2027-04-14T21:00:00-07:00")
    try:
        t = dt.datetime.fromisoformat(s)
    except ValueError:
        raise BadValue(f"time {s!r} is not ISO 8601; expected e.g. 2027-04-14T21:00:00-07:00") from None
    if t.tzinfo is None or t.utcoffset() is None:
        raise BadValue(f"time {s!r} has no UTC offset; add one (e.g. -07:00 or Z): a local time is not guessed")
    return t.astimezone(dt.UTC)


def check_value(quantity: str, value: float, unit: str | None) -> float:
    """Convert to the canonical unit and check plausibility; return the canonical value.

    Raises `BadValue` with the reason.
    """
    if not math.isfinite(value):
        raise BadValue(f"{quantity} value {value!r} is not a finite number")
    q = QUANTITIES[quantity]
    try:
        v = to_canonical(quantity, value, unit)
    except UnitError as exc:
        raise BadValue(str(exc)) from None
    if not math.isfinite(v):
        raise BadValue(f"{quantity} value {value!r} {unit or ''} is not a finite number after conversion")
    if quantity == "relative_humidity" and 0.0 < v <= 1.0 and (unit or "%").strip() in ("%", "percent", "pct", ""):
        raise BadValue(f"relative_humidity {value:g} looks like a fraction; expected percent 0-100 (or give unit 1)")
    if q.kind == "flag" and v not in (0.0, 1.0):
        raise BadValue(f"{quantity} {value:g} is not 0 or 1; expected 0 (off) or 1 (running)")
    if not q.low <= v <= q.high:
        shown = f"{value:g} {unit}".strip() if unit else f"{value:g}"
        raise BadValue(
            f"{quantity} {shown} is out of the plausible range {q.low:g}..{q.high:g} {q.canonical_unit}"
        )
    return v


def parse_number(text: str, quantity: str) -> float:
    s = text.strip()
    if not s:
        raise BadValue(f"empty value for {quantity}; expected a number")
    try:
        v = float(s)
    except ValueError:
        raise BadValue(f"value {s!r} for {quantity} is not a number") from None
    if not math.isfinite(v):
        raise BadValue(f"value {s!r} for {quantity} is not a finite number")
    return v


def parse_log_row(
    fields: list[str],
    columns: dict[str, int],
    known_stations: Collection[str] | None,
    source: str,
    line: int,
    raw: str,
) -> Reading | Rejection:
    """One CSV row (already split) -> a Reading in canonical units, or a Rejection naming the line."""
    n_needed = max(columns[c] for c in REQUIRED_COLUMNS) + 1
    if len(fields) < n_needed:
        return Rejection(source, line, f"{len(fields)} columns; expected {len(columns)} ({','.join(columns)})", raw)
    try:
        station = fields[columns["station"]].strip()
        quantity = fields[columns["quantity"]].strip()
        if not station:
            raise BadValue("empty station id")
        if known_stations is not None and station not in known_stations:
            raise BadValue(f"unknown station {station!r}; declare it under [[stations]] in the config")
        if quantity not in QUANTITIES:
            raise BadValue(f"unknown quantity {quantity!r}; expected one of {', '.join(QUANTITIES)}")
        t = parse_time_utc(fields[columns["time"]])
        value = parse_number(fields[columns["value"]], quantity)
        unit = fields[columns["unit"]] if "unit" in columns and columns["unit"] < len(fields) else ""
        v = check_value(quantity, value, unit)
    except BadValue as exc:
        return Rejection(source, line, str(exc), raw)
    return Reading(t, station, quantity, v)


# ---- MQTT native form (DESIGN.md 1.2) --------------------------------------------------------

MAX_JSON_DEPTH = 8


def _reject_constant(name: str) -> float:
    raise BadValue(f"{name} is not a finite number")


def _loads_strict(payload: bytes) -> object:
    try:
        text = payload.decode("utf-8")
    except UnicodeDecodeError:
        raise BadValue("payload is not valid UTF-8") from None
    depth = 0
    for ch in text:  # cheap guard against deeply nested documents before json recursion
        if ch in "[{":
            depth += 1
            if depth > MAX_JSON_DEPTH:
                raise BadValue(f"payload nests deeper than {MAX_JSON_DEPTH} levels")
        elif ch in "]}":
            depth -= 1
    try:
        return json.loads(text, parse_constant=_reject_constant)
    except BadValue:
        raise
    except (ValueError, RecursionError) as exc:
        raise BadValue(f"payload is neither a number nor valid JSON: {exc}") from None


def _number(obj: object, quantity: str) -> float:
    if isinstance(obj, bool) or not isinstance(obj, (int, float)):
        raise BadValue(f"{quantity} value {obj!r} is not a number")
    v = float(obj)
    if not math.isfinite(v):
        raise BadValue(f"{quantity} value {obj!r} is not a finite number")
    return v


def parse_mqtt_message(
    topic: str,
    payload: bytes,
    prefix: str,
    received_utc: dt.datetime,
    known_stations: Collection[str] | None,
    max_payload_bytes: int = 65536,
    max_future_s: float = 600.0,
    max_age_s: float | None = None,
    mappings: Sequence[Mapping] = (),
) -> list[Reading | Rejection]:
    """A message in the native form of DESIGN.md 1.2 -> readings and/or rejections.

    `{prefix}/{station}/{quantity}` with a bare number (time = receipt) or
    `{"time": ..., "value": ..., "unit": ...}`; `{prefix}/{station}` with several quantities.

    A bare number takes `received_utc` as its time, so a message the broker redelivers after a
    crash (committed, but its PUBACK never reached the broker) arrives at a later time and is
    stored twice. Only a payload with its own time field is stored exactly once (the store keeps
    one value per time, station and quantity): recommend the JSON form with "time".
    A topic matched by one of `mappings` (the config's [[mappings]]) is read with that mapping
    instead. Times more than `max_future_s` ahead of receipt, or older than `max_age_s`, are
    rejected.
    """
    source = f"mqtt:{topic}"
    raw = payload[:200].decode("utf-8", "replace")
    if len(payload) > max_payload_bytes:
        return [Rejection(source, None, f"payload of {len(payload)} bytes exceeds the limit of {max_payload_bytes}", raw)]
    for m in mappings:
        station = m.station_for(topic)
        if station is not None:
            return _parse_mapped(m, station, topic, payload, received_utc, known_stations, max_future_s, max_age_s)
    try:
        parts = topic.split("/")
        pre = prefix.strip("/").split("/")
        if parts[: len(pre)] != pre or len(parts) not in (len(pre) + 1, len(pre) + 2):
            raise BadValue(f"topic {topic!r} is not {prefix}/STATION or {prefix}/STATION/QUANTITY")
        station = parts[len(pre)]
        if known_stations is not None and station not in known_stations:
            raise BadValue(f"unknown station {station!r}; declare it under [[stations]] in the config")
        items: list[tuple[str, object, str | None, object]] = []
        if len(parts) == len(pre) + 2:
            quantity = parts[-1]
            if quantity not in QUANTITIES:
                raise BadValue(f"unknown quantity {quantity!r}; expected one of {', '.join(QUANTITIES)}")
            doc = _loads_strict(payload)
            if isinstance(doc, dict):
                unknown = set(doc) - {"time", "value", "unit"}
                if unknown:
                    raise BadValue(f"unexpected keys {sorted(unknown)}; expected time, value, unit")
                if "value" not in doc:
                    raise BadValue("JSON payload has no 'value'")
                unit = doc.get("unit")
                if unit is not None and not isinstance(unit, str):
                    raise BadValue(f"unit {unit!r} is not a string")
                items.append((quantity, doc["value"], unit, doc.get("time")))
            else:
                items.append((quantity, doc, None, None))
        else:
            doc = _loads_strict(payload)
            if not isinstance(doc, dict):
                raise BadValue("payload on a station topic must be a JSON object of quantities")
            for key, val in doc.items():
                if key == "time":
                    continue
                items.append((key, val, None, doc.get("time")))
            if not items:
                raise BadValue("JSON object holds no quantity")
    except BadValue as exc:
        return [Rejection(source, None, str(exc), raw)]

    return _readings(items, station, source, raw, received_utc, max_future_s, max_age_s)


def _check_time(t: dt.datetime, received_utc: dt.datetime, max_future_s: float, max_age_s: float | None) -> None:
    ahead = (t - received_utc).total_seconds()
    if ahead > max_future_s:
        raise BadValue(f"time {t.isoformat()} is {ahead / 60:.0f} min ahead of the receipt time; check the sensor's clock")
    if max_age_s is not None and -ahead > max_age_s:
        raise BadValue(f"time {t.isoformat()} is older than the retention horizon")


def _readings(
    items: list[tuple[str, object, str | None, object]],
    station: str,
    source: str,
    raw: str,
    received_utc: dt.datetime,
    max_future_s: float,
    max_age_s: float | None,
    time_format: str = "iso8601",
) -> list[Reading | Rejection]:
    out: list[Reading | Rejection] = []
    for quantity, val, unit, time_obj in items:
        try:
            if quantity not in QUANTITIES:
                raise BadValue(f"unknown quantity {quantity!r}; expected one of {', '.join(QUANTITIES)}")
            t = received_utc if time_obj is None else _time_of(time_obj, time_format)
            _check_time(t, received_utc, max_future_s, max_age_s)
            v = check_value(quantity, _number(val, quantity), unit)
            out.append(Reading(t, station, quantity, v))
        except BadValue as exc:
            out.append(Rejection(source, None, f"{quantity}: {exc}", raw))
    return out


# ---- other JSON layouts, mapped in the config ([[mappings]]) ---------------------------------

TIME_FORMATS = ("iso8601", "unix_s", "unix_ms")


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


def _time_of(obj: object, time_format: str) -> dt.datetime:
    if time_format == "iso8601":
        if not isinstance(obj, str):
            raise BadValue(f"time {obj!r} is not an ISO 8601 string")
        return parse_time_utc(obj)
    if isinstance(obj, bool) or not isinstance(obj, (int, float)) or not math.isfinite(obj):
        raise BadValue(f"time {obj!r} is not a number of {'seconds' if time_format == 'unix_s' else 'milliseconds'} since 1970")
    s = float(obj) / (1000.0 if time_format == "unix_ms" else 1.0)
    try:
        return dt.datetime.fromtimestamp(s, tz=dt.UTC)
    except (OverflowError, OSError, ValueError):
        raise BadValue(f"time {obj!r} is out of range") from None


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
            raise BadValue(f"unknown station {station!r} (mapping {m.topic!r}); declare it under [[stations]] or in the mapping's station_map")
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
        return [Rejection(source, None, str(exc), raw)]
    return _readings(items, station, source, raw, received_utc, max_future_s, max_age_s, m.time_format)
