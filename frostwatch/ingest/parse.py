"""Pure parsing: a sensor-log row or an MQTT payload becomes a `Reading` or a `Rejection`.

Nothing here raises on bad input: every problem becomes a `Rejection` with a reason that says
what is wrong, the value, and what was expected. Parsing is total: any exception while reading one
message or row (an `OverflowError` from a 401-digit integer or from a year-1 time at +14:00, a
`RecursionError`, anything) becomes that message's or row's rejection, and the rest flows on. A
message gives at most one rejection, however many of its keys are wrong (the offending keys are
listed once, truncated). No I/O, no clock (receipt time is passed in).

This module reads sensor-log rows and MQTT payloads in the native form; the checks of one value and
one message's readings are in `frostwatch.ingest.values`, other JSON layouts ([[mappings]]) in
`frostwatch.ingest.layouts`.
"""

from __future__ import annotations

import datetime as dt
from collections.abc import Collection, Sequence

from frostwatch.ingest.layouts import Mapping, _parse_mapped
from frostwatch.ingest.values import (  # noqa: F401 - re-exported for the readers of logs and MQTT
    TIME_FORMATS,
    BadValue,
    _cut,
    _keys_listed,
    _loads_strict,
    _readings,
    _unexpected,
    check_value,
    parse_number,
    parse_time_utc,
    shown,
)
from frostwatch.models import Reading, Rejection
from frostwatch.units import QUANTITIES

LOG_COLUMNS = ("time", "station", "quantity", "value", "unit")

REQUIRED_COLUMNS = ("time", "station", "quantity", "value")


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
            raise BadValue(f"unknown station {shown(station)}; declare it under [[stations]] in the config")
        if quantity not in QUANTITIES:
            raise BadValue(f"unknown quantity {shown(quantity)}; expected one of {', '.join(QUANTITIES)}")
        t = parse_time_utc(fields[columns["time"]])
        value = parse_number(fields[columns["value"]], quantity)
        unit = fields[columns["unit"]] if "unit" in columns and columns["unit"] < len(fields) else ""
        v = check_value(quantity, value, unit)
    except BadValue as exc:
        return Rejection(source, line, _cut(str(exc)), raw)
    except Exception as exc:  # noqa: BLE001 - parsing is total: one row costs only itself
        return Rejection(source, line, _unexpected(exc), raw)
    return Reading(t, station, quantity, v)


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
    rejected. Total: it never raises; the result is the message's readings and at most one
    rejection naming every offending key once.
    """
    try:
        return _parse_mqtt(topic, payload, prefix, received_utc, known_stations, max_payload_bytes,
                           max_future_s, max_age_s, mappings)
    except Exception as exc:  # noqa: BLE001 - parsing is total: one message costs only itself
        raw = bytes(payload[:200]).decode("utf-8", "replace") if isinstance(payload, (bytes, bytearray)) else ""
        return [Rejection(f"mqtt:{topic}", None, _unexpected(exc), raw)]


def _parse_mqtt(
    topic: str,
    payload: bytes,
    prefix: str,
    received_utc: dt.datetime,
    known_stations: Collection[str] | None,
    max_payload_bytes: int,
    max_future_s: float,
    max_age_s: float | None,
    mappings: Sequence[Mapping],
) -> list[Reading | Rejection]:
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
            raise BadValue(f"topic {shown(topic, 120)} is not {prefix}/STATION or {prefix}/STATION/QUANTITY")
        station = parts[len(pre)]
        if known_stations is not None and station not in known_stations:
            raise BadValue(f"unknown station {shown(station)}; declare it under [[stations]] in the config")
        items: list[tuple[str, object, str | None, object]] = []
        if len(parts) == len(pre) + 2:
            quantity = parts[-1]
            if quantity not in QUANTITIES:
                raise BadValue(f"unknown quantity {shown(quantity)}; expected one of {', '.join(QUANTITIES)}")
            doc = _loads_strict(payload)
            if isinstance(doc, dict):
                unknown = [k for k in doc if k not in ("time", "value", "unit")]
                if unknown:
                    raise BadValue(f"unexpected keys {_keys_listed(unknown)}; expected time, value, unit")
                if "value" not in doc:
                    raise BadValue("JSON payload has no 'value'")
                unit = doc.get("unit")
                if unit is not None and not isinstance(unit, str):
                    raise BadValue(f"unit {shown(unit)} is not a string")
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
        return [Rejection(source, None, _cut(str(exc)), raw)]

    return _readings(items, station, source, raw, received_utc, max_future_s, max_age_s)
