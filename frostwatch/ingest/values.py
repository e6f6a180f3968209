"""One value and one message's readings, for every parser: times (ISO 8601 with an offset, Unix
seconds or milliseconds), numbers (finite only), units and plausible ranges, strict JSON (no
duplicate keys, no NaN, bounded depth), and the one rejection a message gets however many of its
quantities are wrong. Nothing here raises on bad input except `BadValue`, which the parsers turn
into a `Rejection`. No I/O, no clock.
"""

from __future__ import annotations

import datetime as dt
import json
import math
import re
from collections.abc import Sequence

from frostwatch.errors import UnitError
from frostwatch.models import Reading, Rejection
from frostwatch.units import QUANTITIES, to_canonical

MAX_REASON_CHARS = 500  # a rejection's reason never grows with the size of the input

MAX_KEYS_SHOWN = 10


class BadValue(Exception):
    """Internal: a reason for rejecting one value."""


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
        if _DECIMAL_COMMA.fullmatch(text.strip()):
            raise BadValue(f"payload {text.strip()!r} is not a number: write the decimal point as '.' "
                           f"({text.strip().replace(',', '.')})") from None
        raise BadValue(f"payload is neither a number nor valid JSON: {str(exc)[:160]}") from None


_DECIMAL_COMMA = re.compile(r"[-+]?\d+,\d+")  # "3,4": a sensor set to a decimal comma


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


TIME_FORMATS = ("iso8601", "unix_s", "unix_ms")


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
