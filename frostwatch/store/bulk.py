"""Readings of a whole season into the store: large transactions, arrays in, the same duplicate
rules as `Store.add_readings` (an exact duplicate is stored once; the same time, station and
quantity with another value is a conflict: the first value is kept and the other set aside).

    stored, duplicates, conflicts = add_reading_columns(store, cols, source)
    series = series_of_columns(cols, kept)     # {(station, quantity): (t_s, values)}

"First" is the order of the rows (file order); a reading already stored counts as first.
"""

from __future__ import annotations

import math
import sqlite3
from dataclasses import dataclass

import numpy as np

from frostwatch.errors import StoreError
from frostwatch.ingest.bulk import series_of_columns  # noqa: F401  (its home is the log reading; also read from here)
from frostwatch.models import Rejection
from frostwatch.store.db import Store, damaged_message, from_ms, is_damage

ROWS_PER_TRANSACTION = 250_000  # one commit (fsync) per quarter million readings
_INSERT = "INSERT OR IGNORE INTO readings(time_utc_ms, station, quantity, value, source) VALUES (?,?,?,?,?)"


@dataclass
class ColumnsStored:
    stored: int
    duplicates: int
    conflicts: list[Rejection]
    kept: np.ndarray  # bool per row: the row whose value the store now holds for its key
    store_had_readings: bool  # the store held readings in the rows' time span before this


def _keys(cols) -> np.ndarray:
    """One int64 per row for (time, station, quantity)."""
    n_st, n_q = max(1, len(cols.stations)), max(1, len(cols.quantities))
    return (cols.time_ms.astype(np.int64) * n_st + cols.station) * n_q + cols.quantity


def _existing(store: Store, cols, lo_ms: int, hi_ms: int) -> dict[tuple[int, str, str], float]:
    """The stored readings in [lo, hi] of the stations and quantities in `cols` (only read when
    the store holds readings in that span: a re-run of the same log, or logs that overlap)."""
    stations, quantities = set(cols.stations), set(cols.quantities)
    out: dict[tuple[int, str, str], float] = {}
    with store.lock:
        cur = store.conn.execute(
            "SELECT time_utc_ms, station, quantity, value FROM readings WHERE time_utc_ms BETWEEN ? AND ?", (lo_ms, hi_ms))
        while rows := cur.fetchmany(4096):
            for ms, s, q, v in rows:
                if s in stations and q in quantities:
                    out[(ms, s, q)] = v
    return out


def _conflict(cols, i: int, old: float) -> Rejection:
    t = from_ms(int(cols.time_ms[i])).isoformat()
    st, q, v = cols.stations[cols.station[i]], cols.quantities[cols.quantity[i]], float(cols.value[i])
    return Rejection(cols.sources[cols.source[i]], int(cols.line[i]),
                     f"{st} {q} at {t} is {v:g} here but {old:g} is already stored; the first value is kept",
                     f"{t},{st},{q},{v}")


def add_reading_columns(store: Store, cols, source: str, progress=None) -> ColumnsStored:
    """Store the rows of `cols` (frostwatch.ingest.bulk.LogColumns) in transactions of
    ROWS_PER_TRANSACTION rows. Returns what was stored, the exact duplicates, the conflicts (as
    Rejections naming each row's file and line) and which rows the store now holds."""
    n = len(cols)
    kept = np.zeros(n, dtype=bool)
    if n == 0:
        return ColumnsStored(0, 0, [], kept, False)
    lo, hi = int(cols.time_ms.min()), int(cols.time_ms.max())
    with store.lock:
        had = store.conn.execute("SELECT 1 FROM readings WHERE time_utc_ms BETWEEN ? AND ? LIMIT 1", (lo, hi)).fetchone()
    # the first row of each key (file order) is the candidate; a later one is a duplicate or conflict
    keys = _keys(cols)
    order = np.argsort(keys, kind="stable")
    sk = keys[order]
    first_in_run = np.concatenate(([True], sk[1:] != sk[:-1]))
    first = np.zeros(n, dtype=bool)
    first[order[first_in_run]] = True
    head = np.maximum.accumulate(np.where(first_in_run, np.arange(n), 0))  # the run's first position
    first_of = np.empty(n, dtype=np.int64)
    first_of[order] = order[head]  # for each row, the row that is first of its key
    del order, sk, first_in_run, head, keys
    existing = _existing(store, cols, lo, hi) if had else {}
    conflicts: list[tuple[int, Rejection]] = []  # (row, rejection): reported in row order
    dup = 0
    new = first.copy()
    if existing:
        for i in np.flatnonzero(first).tolist():
            old = existing.get((int(cols.time_ms[i]), cols.stations[cols.station[i]], cols.quantities[cols.quantity[i]]))
            if old is None:
                continue
            new[i] = False
            if math.isclose(old, float(cols.value[i]), rel_tol=0, abs_tol=1e-9):
                dup += 1
            else:
                conflicts.append((i, _conflict(cols, i, old)))
    later = np.flatnonzero(~first)
    for i in later.tolist():
        j = int(first_of[i])
        key = (int(cols.time_ms[j]), cols.stations[cols.station[j]], cols.quantities[cols.quantity[j]])
        old = existing.get(key, float(cols.value[j]))
        if math.isclose(old, float(cols.value[i]), rel_tol=0, abs_tol=1e-9):
            dup += 1
        else:
            conflicts.append((i, _conflict(cols, i, old)))
    conflicts.sort(key=lambda c: c[0])
    kept[:] = new  # a key stored before keeps its stored value: no row of ours holds it
    idx = np.flatnonzero(new)
    stored = 0
    st_names = np.array(cols.stations, dtype=object)
    q_names = np.array(cols.quantities, dtype=object)
    try:
        for a in range(0, len(idx), ROWS_PER_TRANSACTION):
            part = idx[a:a + ROWS_PER_TRANSACTION]
            rows = zip(cols.time_ms[part].tolist(), st_names[cols.station[part]].tolist(),
                       q_names[cols.quantity[part]].tolist(), cols.value[part].tolist(),
                       [source] * len(part), strict=True)
            with store.transaction() as c:
                before = c.total_changes
                c.executemany(_INSERT, rows)
                stored += c.total_changes - before
            if progress:
                progress(a + len(part), len(idx))
    except sqlite3.Error as exc:
        if is_damage(exc):
            raise StoreError(damaged_message(store.path, exc)) from None
        raise StoreError(f"{store.path}: cannot store readings: {exc}") from None
    return ColumnsStored(stored, dup, [r for _, r in conflicts], kept, bool(had))
