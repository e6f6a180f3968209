"""Pure parsing: a sensor-log row or an MQTT payload becomes a `Reading` or a `Rejection`.

Nothing here raises on bad input: every problem becomes a `Rejection` with a reason that says
what is wrong, the value, and what was expected. Parsing is total: any exception while reading one
message or row (an `OverflowError` from a 401-digit integer or from a year-1 time at +14:00, a
`RecursionError`, anything) becomes that message's or row's rejection, and the rest flows on. A
message gives at most one rejection, however many of its keys are wrong (the offending keys are
listed once, truncated). No I/O, no clock (receipt time is passed in).
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


MAX_REASON_CHARS = 500  # a rejection's reason never grows with the size of the input
MAX_KEYS_SHOWN = 10


def shown(obj: object, limit: int = 40) -> str:
    """`repr(obj)` cut to `limit` characters (a 401-digit integer must not fill a log line)."""
    if isinstance(obj, int) and not isinstance(obj, bool) and abs(obj) >= 10**limit:
        return f"an integer of {len(str(abs(obj)))} digits" if abs(obj) < 10**4000 else "an integer of over 4000 digits"
    text = repr(obj)
    return text if len(text) <= limit else text[: limit - 3] + "..."


def _unexpected(exc: BaseException) -> str:
    """The reason for an exception no rule foresaw, in one short line."""
    msg = str(exc).splitlines()[0] if str(exc) else ""
    return f"cannot be read ({type(exc).__name__}{': ' + msg[:120] if msg else ''})"


def _cut(reason: str) -> str:
    return reason if len(reason) <= MAX_REASON_CHARS else reason[: MAX_REASON_CHARS - 3] + "..."


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
        raise BadValue(f"time {shown(s, 60)} is not ISO 8601; expected e.g. 2027-04-14T21:00:00-07:00") from None
    if t.tzinfo is None or t.utcoffset() is None:
        raise BadValue(f"time {shown(s, 60)} has no UTC offset; add one (e.g. -07:00 or Z): a local time is not guessed")
    try:
        return t.astimezone(dt.UTC)
    except (OverflowError, ValueError):  # 0001-01-01T00:00:00+14:00 is before year 1 in UTC
        raise BadValue(f"time {shown(s, 60)} is out of range once converted to UTC; check the sensor's clock") from None


def check_value(quantity: str, value: float, unit: str | None) -> float:
    """Convert to the canonical unit and check plausibility; return the canonical value.

    Raises `BadValue` with the reason.
    """
    if not math.isfinite(value):
        raise BadValue(f"{quantity} value {shown(value)} is not a finite number")
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
        given = f"{value:g} {unit}".strip() if unit else f"{value:g}"
        raise BadValue(
            f"{quantity} {given} is out of the plausible range {q.low:g}..{q.high:g} {q.canonical_unit}"
        )
    return v


def parse_number(text: str, quantity: str) -> float:
    s = text.strip()
    if not s:
        raise BadValue(f"empty value for {quantity}; expected a number")
    try:
        v = float(s)
    except (ValueError, OverflowError):
        raise BadValue(f"value {shown(s)} for {quantity} is not a number") from None
    if not math.isfinite(v):
        raise BadValue(f"value {shown(s)} for {quantity} is not a finite number")
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


# ---- MQTT native form (DESIGN.md 1.2) --------------------------------------------------------

MAX_JSON_DEPTH = 8


def _reject_constant(name: str) -> float:
    raise BadValue(f"{name} is not a finite number")


def _no_duplicate_keys(pairs: list[tuple[str, object]]) -> dict:
    """json object_pairs_hook: a key given twice is an error, not "the last one wins"."""
    doc: dict = {}
    for k, v in pairs:
        if k in doc:
            raise BadValue(f"key {shown(k)} appears more than once in the JSON payload; each key may appear once")
        doc[k] = v
    return doc


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
        return json.loads(text, parse_constant=_reject_constant, object_pairs_hook=_no_duplicate_keys)
    except BadValue:
        raise
    except (ValueError, RecursionError) as exc:
        if "integer string conversion" in str(exc):
            raise BadValue("payload holds an integer of more than 4300 digits; not a reading") from None
        raise BadValue(f"payload is neither a number nor valid JSON: {str(exc)[:160]}") from None


def _number(obj: object, quantity: str) -> float:
    if isinstance(obj, bool) or not isinstance(obj, (int, float)):
        raise BadValue(f"{quantity} value {shown(obj)} is not a number")
    try:
        v = float(obj)
    except OverflowError:  # an integer beyond the float range, e.g. 401 digits
        raise BadValue(f"{quantity} value {shown(obj)} is too large to be a reading") from None
    if not math.isfinite(v):
        raise BadValue(f"{quantity} value {shown(obj)} is not a finite number")
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


def _keys_listed(keys: Sequence[object]) -> str:
    """Offending keys once, the first MAX_KEYS_SHOWN of them, each cut short."""
    head = ", ".join(shown(k, 30) for k in keys[:MAX_KEYS_SHOWN])
    more = len(keys) - MAX_KEYS_SHOWN
    return f"[{head}{f', ... {more} more' if more > 0 else ''}] ({len(keys)} in all)" if more > 0 else f"[{head}]"


def _one_rejection(source: str, raw: str, problems: list[tuple[str, str]]) -> Rejection:
    """The rejection of one message, whatever number of its quantities failed: unknown
    quantities are listed once (the list of known ones is given once), other reasons each
    once with the quantities they hit; the whole reason is cut to MAX_REASON_CHARS."""
    unknown = [q for q, why in problems if why == "unknown"]
    by_reason: dict[str, list[str]] = {}
    for q, why in problems:
        if why != "unknown":
            by_reason.setdefault(why, []).append(q)
    parts = []
    if unknown:
        parts.append(f"unknown quantities {_keys_listed(unknown)}; expected some of {', '.join(QUANTITIES)}")
    for why, qs in by_reason.items():
        parts.append(why if len(qs) == 1 else f"{why} (also {_keys_listed(qs[1:])})")
    return Rejection(source, None, _cut("; ".join(parts)), raw)


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
    problems: list[tuple[str, str]] = []  # (quantity, reason); "unknown" for an unknown quantity
    for quantity, val, unit, time_obj in items:
        try:
            if quantity not in QUANTITIES:
                if len(items) == 1:
                    raise BadValue(f"unknown quantity {shown(quantity)}; expected one of {', '.join(QUANTITIES)}")
                problems.append((quantity, "unknown"))
                continue
            t = received_utc if time_obj is None else _time_of(time_obj, time_format)
            _check_time(t, received_utc, max_future_s, max_age_s)
            v = check_value(quantity, _number(val, quantity), unit)
            out.append(Reading(t, station, quantity, v))
        except BadValue as exc:
            why = str(exc)
            problems.append((quantity, why if why.startswith(f"{quantity} ") else f"{quantity}: {why}"))
        except Exception as exc:  # noqa: BLE001 - parsing is total
            problems.append((quantity, f"{shown(quantity)}: {_unexpected(exc)}"))
    if problems:
        out.append(_one_rejection(source, raw, problems))
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
            raise BadValue(f"time {shown(obj)} is not an ISO 8601 string")
        if len(obj) > 64:
            raise BadValue(f"time {shown(obj)} is too long for an ISO 8601 time")
        return parse_time_utc(obj)
    unit = "seconds" if time_format == "unix_s" else "milliseconds"
    if isinstance(obj, bool) or not isinstance(obj, (int, float)):
        raise BadValue(f"time {shown(obj)} is not a number of {unit} since 1970")
    try:
        finite = math.isfinite(obj)
    except OverflowError:  # an integer beyond the float range
        raise BadValue(f"time {shown(obj)} is out of range") from None
    if not finite:
        raise BadValue(f"time {shown(obj)} is not a number of {unit} since 1970")
    s = float(obj) / (1000.0 if time_format == "unix_ms" else 1.0)
    try:
        return dt.datetime.fromtimestamp(s, tz=dt.UTC)
    except (OverflowError, OSError, ValueError):
        raise BadValue(f"time {shown(obj)} is out of range") from None


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
