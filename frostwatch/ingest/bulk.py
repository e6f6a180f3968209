"""Sensor logs at season scale: a vectorised parse (pandas) with the row parser for every row it
cannot take, so each bad row is still named `FILE:LINE: reason`, exactly as the row parser does.

    cols, rejections = read_log_columns(path, known_stations)
    cols.time_ms, cols.station, cols.quantity, cols.value, cols.line   # one entry per good row

How a row is read (DESIGN.md 1.1 and 1.4: bad rows reported, good rows used):

- The fast path takes a row only when nothing about it needs judgement: exactly as many fields as
  the header, no quotes, a time of the strict form `YYYY-MM-DDTHH:MM:SS[.fff](+HH:MM|Z)`, a
  declared station, a known quantity, a finite number, a known unit, and a value inside the
  plausible range (`frostwatch.ingest.parse.check_value`'s rules, on arrays).
- Every other row, and every line of a file that is not plain UTF-8 with `\\n` or `\\r\\n` line
  ends, goes through `frostwatch.ingest.parse.parse_log_row`, the row parser the daemon and the
  small logs use: a row it accepts is used, a row it rejects is reported with its line and reason.
  So the fast path can only be faster, never different (tests/test_bulk_log.py compares the two
  on every kind of bad row).

Values are converted with `frostwatch.units` converters on arrays (the same arithmetic as the
row parser's, element by element), numbers read by Python's own `float` (no 1-ulp surprises).
Memory: a few arrays of one entry per row (about 40 bytes a row, plus the file's bytes while
it is parsed), never a Python object per reading.
"""

from __future__ import annotations

import csv
import io
from collections.abc import Collection
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from frostwatch.errors import IngestError
from frostwatch.ingest.csvlog import header_error, parse_sensor_log_bytes
from frostwatch.ingest.parse import LOG_COLUMNS, REQUIRED_COLUMNS, parse_log_row
from frostwatch.models import Reading, Rejection
from frostwatch.units import QUANTITIES, array_converter

# times the fast path reads (pandas and datetime.fromisoformat agree on every one of them: years
# 1900-2199, inside pandas' nanosecond range, at most milliseconds, so whole milliseconds before
# 1970 too; typical-year files splice years from the 1960s on); any other form, right or wrong,
# is for the row parser
_STRICT_TIME = (r"(?:19\d\d|2[01]\d\d)-[01]\d-[0-3]\dT(?:[01]\d|2[0-3]):[0-5]\d:[0-5]\d(?:\.\d{3})?"
                r"(?:[+-](?:[01]\d|2[0-3]):[0-5]\d|Z)")
_STRICT_TIME_RE = None  # compiled on first use


def _strict_time_mask(texts: np.ndarray) -> np.ndarray:
    """Whether each text (a numpy array of str) is a full match of `_STRICT_TIME`, the same
    answers as the regular expression: its ASCII forms are checked character by character on
    arrays (each position's class), and only the texts that fail that check go to the regular
    expression (its `\\d` also takes other scripts' digits)."""
    import re

    global _STRICT_TIME_RE
    if _STRICT_TIME_RE is None:
        _STRICT_TIME_RE = re.compile(_STRICT_TIME)
    n = len(texts)
    ok = np.zeros(n, dtype=bool)
    u = np.asarray(texts, dtype=str) if n else np.zeros(0, dtype="U1")
    width = u.dtype.itemsize // 4
    if n and width >= 20:
        c = u.view(np.uint32).reshape(n, width)
        length = np.char.str_len(u)

        def at(i: int, chars: str) -> np.ndarray:  # chars: one character, or a range "0-5"
            lo, hi = ord(chars[0]), ord(chars[-1])
            return c[:, i] == lo if lo == hi else (c[:, i] >= lo) & (c[:, i] <= hi)

        def hour(i: int) -> np.ndarray:  # (?:[01]\d|2[0-3])
            return (at(i, "0-1") & at(i + 1, "0-9")) | (at(i, "2") & at(i + 1, "0-3"))

        def zone(i: int, before: np.ndarray) -> np.ndarray:  # (?:[+-]HH:[0-5]\d|Z) ending the text
            z = (length == i + 1) & at(i, "Z")
            if width >= i + 6:
                z |= ((length == i + 6) & (at(i, "+") | at(i, "-")) & hour(i + 1) & at(i + 3, ":") & at(i + 4, "0-5")
                      & at(i + 5, "0-9"))
            return z & before

        base = (((at(0, "1") & at(1, "9")) | (at(0, "2") & at(1, "0-1"))) & at(2, "0-9") & at(3, "0-9") & at(4, "-")
                & at(5, "0-1") & at(6, "0-9") & at(7, "-") & at(8, "0-3") & at(9, "0-9") & at(10, "T") & hour(11)
                & at(13, ":") & at(14, "0-5") & at(15, "0-9") & at(16, ":") & at(17, "0-5") & at(18, "0-9"))
        ok = zone(19, base)
        if width >= 24:
            ok |= zone(23, base & at(19, ".") & at(20, "0-9") & at(21, "0-9") & at(22, "0-9"))
    for i in np.flatnonzero(~ok).tolist():  # anything else, right or wrong: the regular expression
        ok[i] = _STRICT_TIME_RE.fullmatch(texts[i]) is not None
    return ok


CHUNK_ROWS = 100_000  # rows parsed at once: pandas holds a Python string per field of a chunk
_RH_PERCENT_UNITS = ("%", "percent", "pct", "")


@dataclass
class LogColumns:
    """The good rows of one or more logs as arrays (one entry per row, in file order).

    `station` and `quantity` are small integer codes into `stations` and `quantities`;
    `source` is the index into `sources` of the file a row came from, `line` its line there."""

    time_ms: np.ndarray  # int64, ms since 1970-01-01 UTC (as frostwatch.store.to_ms rounds)
    station: np.ndarray  # int32 codes
    quantity: np.ndarray  # int32 codes
    value: np.ndarray  # float64, canonical unit
    line: np.ndarray  # int64, 1-based line in its file
    source: np.ndarray  # int32 index into sources
    stations: list[str]
    quantities: list[str]
    sources: list[str]

    def __len__(self) -> int:
        return len(self.time_ms)

    @classmethod
    def empty(cls) -> LogColumns:
        z = np.zeros(0, dtype=np.int64)
        return cls(z, z.astype(np.int32), z.astype(np.int32), z.astype(float), z, z.astype(np.int32), [], [], [])

    def readings(self) -> list[Reading]:
        """The rows as Reading objects (for small logs and tests; a season should stay in arrays)."""
        from frostwatch.store.db import from_ms

        return [Reading(from_ms(int(m)), self.stations[s], self.quantities[q], float(v))
                for m, s, q, v in zip(self.time_ms, self.station, self.quantity, self.value, strict=True)]


def concat(parts: list[LogColumns]) -> LogColumns:
    """One LogColumns from several (codes remapped onto one vocabulary). The parts are emptied as
    they are copied, so a season's arrays exist about once, not twice."""
    parts = [p for p in parts if len(p)] or [LogColumns.empty()]
    stations = sorted({s for p in parts for s in p.stations})
    quantities = sorted({q for p in parts for q in p.quantities})
    st_ix = {s: i for i, s in enumerate(stations)}
    q_ix = {q: i for i, q in enumerate(quantities)}
    offsets = np.cumsum([0] + [len(p.sources) for p in parts[:-1]])
    for p, off in zip(parts, offsets.tolist(), strict=True):
        if p.stations:
            p.station = np.array([st_ix[s] for s in p.stations], dtype=np.int32)[p.station]
        if p.quantities:
            p.quantity = np.array([q_ix[q] for q in p.quantities], dtype=np.int32)[p.quantity]
        p.source = (p.source + off).astype(np.int32)
    fields = {}
    for name in ("time_ms", "station", "quantity", "value", "line", "source"):
        fields[name] = np.concatenate([getattr(p, name) for p in parts])
        for p in parts:
            setattr(p, name, None)
    return LogColumns(**fields, stations=stations, quantities=quantities,
                      sources=[src for p in parts for src in p.sources])


def _positions(buf: np.ndarray, byte: int, block: int = 1 << 22) -> np.ndarray:
    """Offsets of `byte` in `buf`, found a block at a time (no file-sized temporary array)."""
    found = [np.flatnonzero(buf[i:i + block] == byte) + i for i in range(0, len(buf), block)]
    return np.concatenate(found) if found else np.zeros(0, dtype=np.intp)


def _line_spans(data: bytes) -> tuple[np.ndarray, np.ndarray]:
    """Start and end (exclusive, without the line end) of every line, `\n` or `\r\n` ended."""
    buf = np.frombuffer(data, dtype=np.uint8)
    nl = _positions(buf, 10)
    starts = np.concatenate(([0], nl + 1))
    ends = np.concatenate((nl, [len(buf)]))
    if len(starts) and starts[-1] == len(buf):  # the file ends with a line end: no last empty line
        starts, ends = starts[:-1], ends[:-1]
    cr = (ends > starts) & (buf[np.maximum(ends - 1, 0)] == 13)
    return starts, ends - cr


def _fields_per_line(data: bytes, starts: np.ndarray, block: int = 1 << 22) -> np.ndarray:
    """Fields in each line (commas + 1), counted a block of bytes at a time."""
    buf = np.frombuffer(data, dtype=np.uint8)
    counts = np.ones(len(starts), dtype=np.int64)
    for i in range(0, len(buf), block):
        pos = np.flatnonzero(buf[i:i + block] == 44) + i
        counts += np.bincount(np.searchsorted(starts, pos, side="right") - 1, minlength=len(starts))
    return counts


def read_log_columns(path: str | Path, known_stations: Collection[str] | None) -> tuple[LogColumns, list[Rejection]]:
    """Read the sensor log at `path`: its good rows as arrays, its bad rows as Rejections.

    Raises IngestError when the file cannot be read or its header is wrong (as read_sensor_log)."""
    p = Path(path)
    try:
        data = p.read_bytes()
    except OSError as exc:
        raise IngestError(f"{p}: cannot read the sensor log: {exc.strerror or exc}") from None
    return parse_log_columns(data, str(path), known_stations)


def parse_log_columns(data: bytes, source: str, known_stations: Collection[str] | None) -> tuple[LogColumns, list[Rejection]]:
    """As read_log_columns, from the file's bytes."""
    plain = b'"' not in data and b"\x00" not in data and (b"\r" not in data or data.count(b"\r") == data.count(b"\r\n"))
    if plain:
        try:
            data.decode("utf-8")
        except UnicodeDecodeError:
            plain = False
    if not plain:  # quotes, lone carriage returns or bad UTF-8: the row parser, line by line
        lines: list[int] = []
        readings, rejections = parse_sensor_log_bytes(data, source, known_stations, lines)
        return _from_readings(readings, lines, source), rejections
    if data.startswith(b"\xef\xbb\xbf"):
        data = b"   " + data[3:]  # the BOM (utf-8-sig on line 1): blanked, keeping every offset
    starts, ends = _line_spans(data)
    if not len(starts):
        raise IngestError(f"{source}: the file is empty; expected a header line {','.join(LOG_COLUMNS)}")
    header = [h.strip().lower() for h in data[starts[0]:ends[0]].decode("utf-8").split(",")]
    columns = {name: i for i, name in enumerate(header) if name in LOG_COLUMNS}
    missing = [c for c in REQUIRED_COLUMNS if c not in columns]
    if missing:
        raise header_error(source, header, missing)
    is_regular = (_fields_per_line(data, starts) == len(header)) & (ends > starts)
    is_regular[0] = False  # the header
    regular = np.flatnonzero(is_regular)
    is_regular[0] = True
    odd = np.flatnonzero(~is_regular)  # blank, short or long rows: the row parser
    del is_regular
    parts, slow = [], [odd]
    for k in range(0, len(regular), CHUNK_ROWS):
        good = _fast_rows(data, starts, ends, regular[k:k + CHUNK_ROWS], header, columns, known_stations)
        slow.append(good.pop("_slow"))
        parts.append(LogColumns(good["time_ms"], good["station"], good["quantity"], good["value"], good["line"],
                                np.zeros(len(good["line"]), dtype=np.int32), good["stations"], good["quantities"],
                                [source]))
    slow_lines = np.unique(np.concatenate(slow))
    rejections: list[Rejection] = []
    rows_readings, rows_lines = [], []
    for i in slow_lines.tolist():
        raw = data[starts[i]:ends[i]].decode("utf-8")
        try:
            fields = next(csv.reader([raw]), [])
        except csv.Error as exc:
            rejections.append(Rejection(source, i + 1, f"cannot split the row: {exc}", ""))
            continue
        if not fields or all(not f.strip() for f in fields):
            continue  # a blank line is not a reading, nor an error
        r = parse_log_row(fields, columns, known_stations, source, i + 1, raw)
        if isinstance(r, Reading):
            rows_readings.append(r)
            rows_lines.append(i + 1)
        else:
            rejections.append(r)
    if rows_readings:
        parts.append(_from_readings(rows_readings, rows_lines, source))
    for p in parts:
        p.sources = []
    cols = concat(parts)
    cols.source = np.zeros(len(cols), dtype=np.int32)
    cols.sources = [source]
    if rows_readings:  # file order, as the row parser gives them (one array at a time)
        order = np.argsort(cols.line, kind="stable")
        for name in ("time_ms", "station", "quantity", "value", "line"):
            setattr(cols, name, getattr(cols, name)[order])
    return cols, rejections


def _from_readings(readings: list[Reading], lines: list[int], source: str) -> LogColumns:
    from frostwatch.store.db import to_ms

    stations = sorted({r.station for r in readings})
    quantities = sorted({r.quantity for r in readings})
    s_ix = {s: i for i, s in enumerate(stations)}
    q_ix = {q: i for i, q in enumerate(quantities)}
    return LogColumns(
        np.array([to_ms(r.time_utc) for r in readings], dtype=np.int64),
        np.array([s_ix[r.station] for r in readings], dtype=np.int32),
        np.array([q_ix[r.quantity] for r in readings], dtype=np.int32),
        np.array([r.value for r in readings], dtype=float),
        np.array(lines, dtype=np.int64),
        np.zeros(len(readings), dtype=np.int32),
        stations, quantities, [source],
    )


def _fast_rows(data: bytes, starts: np.ndarray, ends: np.ndarray, regular: np.ndarray, header: list[str],
               columns: dict[str, int], known_stations: Collection[str] | None) -> dict:
    """Regular rows (0-based line indexes, ascending) parsed on arrays. Returns the good ones and
    `_slow`: the line indexes the row parser must judge."""
    import pandas as pd

    empty = {"time_ms": np.zeros(0, np.int64), "station": np.zeros(0, np.int32), "quantity": np.zeros(0, np.int32),
             "value": np.zeros(0), "line": np.zeros(0, np.int64), "stations": [], "quantities": [],
             "_slow": np.zeros(0, np.int64)}
    if not len(regular):
        return empty
    # the regular lines only, in order: runs of consecutive lines are copied as whole slices
    breaks = np.flatnonzero(np.diff(regular) != 1)
    run_first = np.concatenate(([regular[0]], regular[breaks + 1]))
    run_last = np.concatenate((regular[breaks], [regular[-1]]))
    if len(run_first) == 1:
        text = data[starts[run_first[0]]:ends[run_last[0]]]
    else:
        text = b"\n".join(data[starts[a]:ends[b]] for a, b in zip(run_first.tolist(), run_last.tolist(), strict=True))
    frame = pd.read_csv(io.BytesIO(text), header=None, names=list(range(len(header))), dtype=str, na_filter=False,
                        skip_blank_lines=False, engine="c", quoting=csv.QUOTE_NONE)
    if len(frame) != len(regular):  # never expected: then let the row parser judge every line
        return {**empty, "_slow": regular}
    n = len(frame)
    # times, stations, quantities and units repeat (every sensor of a minute shares its time): each
    # distinct text is judged once, then spread back over the rows by its code
    t_codes, t_uni = pd.factorize(frame[columns["time"]].to_numpy())
    t_series = pd.Series(t_uni, dtype=object)
    ok_u = _strict_time_mask(t_uni)
    when = pd.to_datetime(t_series.where(ok_u, "1970-01-01T00:00:00Z"), format="ISO8601", utc=True, errors="coerce")
    ok_u &= ~when.isna().to_numpy()
    ms_u = when.dt.tz_localize(None).to_numpy(dtype="datetime64[ms]").astype(np.int64)
    ms_u[~ok_u] = 0
    ok = ok_u[t_codes]
    st_codes, stations = _clean_codes(frame[columns["station"]].to_numpy(),
                                      lambda x: bool(x) and (known_stations is None or x in known_stations))
    ok &= st_codes >= 0
    q_codes, quantities = _clean_codes(frame[columns["quantity"]].to_numpy(), lambda x: x in QUANTITIES)
    ok &= q_codes >= 0
    if "unit" in columns:
        u_codes, units = pd.factorize(frame[columns["unit"]].to_numpy())
    else:
        u_codes, units = np.zeros(n, dtype=np.intp), np.array([""], dtype=object)
    # values repeat too (an hourly log of tenths has a few hundred distinct texts): each distinct
    # text is judged and read once, element by element as on every row
    v_codes, v_uni = pd.factorize(frame[columns["value"]].to_numpy())
    v_ok = np.isfinite(pd.to_numeric(pd.Series(v_uni, dtype=object), errors="coerce").to_numpy(dtype=float))
    ok &= np.append(v_ok, False)[v_codes]
    value = np.full(n, np.nan)
    if ok.any():  # Python's float for the value, as the row parser: no 1-ulp differences
        v_read = np.full(len(v_uni), np.nan)
        texts = v_uni[v_ok]
        try:
            v_read[v_ok] = texts.astype(float)
        except (ValueError, TypeError):  # a text pandas reads and float() does not: the row parser
            v_read[v_ok] = [_float_or_nan(x) for x in texts]
        value[ok] = np.append(v_read, np.nan)[v_codes[ok]]
        ok &= ~np.isnan(value)
    # units: a few (quantity, unit) spellings per log, each converted on its array
    pair = np.where(ok, q_codes.astype(np.int64) * len(units) + u_codes, -1)
    canonical = np.full(n, np.nan)
    for code in np.unique(pair[pair >= 0]).tolist():
        q, unit = quantities[code // len(units)], str(units[code % len(units)])
        sel = pair == code
        fn = array_converter(q, unit)
        if fn is None:
            ok[sel] = False  # unknown unit: the row parser says which
            continue
        v = np.asarray(fn(value[sel]), dtype=float)
        quantity = QUANTITIES[q]
        bad = ~np.isfinite(v) | (v < quantity.low) | (v > quantity.high)
        if quantity.kind == "flag":
            bad |= (v != 0.0) & (v != 1.0)
        if q == "relative_humidity" and unit.strip() in _RH_PERCENT_UNITS:
            bad |= (v > 0.0) & (v <= 1.0)
        ok[sel] &= ~bad
        canonical[sel] = v
    keep = np.flatnonzero(ok)
    return {
        "time_ms": ms_u[t_codes[keep]],  # whole milliseconds: the strict form has at most three decimals
        "station": st_codes[keep].astype(np.int32), "quantity": q_codes[keep].astype(np.int32),
        "value": canonical[keep], "line": regular[keep].astype(np.int64) + 1,
        "stations": stations, "quantities": quantities, "_slow": regular[~ok],
    }


def _clean_codes(texts: np.ndarray, valid) -> tuple[np.ndarray, list[str]]:
    """Codes of the stripped texts into a list of the valid ones (-1 for an invalid text)."""
    import pandas as pd

    codes, uniques = pd.factorize(texts)
    clean = [str(u).strip() for u in uniques]
    names = sorted({c for c in clean if valid(c)})
    ix = {c: i for i, c in enumerate(names)}
    lookup = np.array([ix.get(c, -1) for c in clean] + [-1], dtype=np.int64)
    return lookup[codes], names


def _float_or_nan(text: str) -> float:
    try:
        return float(text)
    except (ValueError, OverflowError):
        return float("nan")


def series_of_columns(cols, rows: np.ndarray | None = None, key_order: str = "store") -> dict[tuple[str, str], tuple[np.ndarray, np.ndarray]]:
    """{(station, quantity): (t_s, values)} of the selected rows (a bool mask), sorted by time.
    Keys come in the order a time-ordered read of the store meets them (`Store.readings_window`),
    or with key_order="file" in the order the rows first name them."""
    idx = np.arange(len(cols)) if rows is None else np.flatnonzero(rows)
    group = cols.station[idx].astype(np.int64) * max(1, len(cols.quantities)) + cols.quantity[idx]
    order = np.lexsort((cols.time_ms[idx], group))
    idx, group = idx[order], group[order]
    bounds = np.flatnonzero(np.diff(group)) + 1
    out = {}
    for a, b in zip(np.concatenate(([0], bounds)).tolist(), np.concatenate((bounds, [len(idx)])).tolist(), strict=True):
        if b <= a:
            continue
        g = int(group[a])
        key = (cols.stations[g // max(1, len(cols.quantities))], cols.quantities[g % max(1, len(cols.quantities))])
        sel = idx[a:b]
        out[key] = (cols.time_ms[sel] / 1000.0, cols.value[sel].astype(float), int(sel.min()))
    if key_order == "file":
        ranked = sorted(out.items(), key=lambda kv: kv[1][2])
    else:
        ranked = sorted(out.items(), key=lambda kv: (kv[1][0][0], kv[0]))
    return {k: (t, v) for k, (t, v, _) in ranked}


__all__ = ["LogColumns", "read_log_columns", "parse_log_columns", "concat", "series_of_columns"]
