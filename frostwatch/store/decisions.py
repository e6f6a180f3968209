"""SQL of the stored decisions (frostwatch.decision): written once per evaluation, read by every
screen. The `doc` column holds the decision as zlib-compressed JSON (`sqlite3 ... "SELECT
block, level FROM decisions"` still shows the columns; `zlib.decompress(doc)` the whole of it).
Raises `StoreError` when the database cannot be read or written.

    save(conn, decisions)                        # inside the evaluation's transaction
    latest(store, until_utc=now) -> {block: Decision}   # the newest decision of each block
    between(store, start, end, block=None)       # a night's decisions, oldest first
    changes_between(store, start, end, block)    # only where level, step or monitoring changed
    delete_before(store, cut_utc) -> int         # retention
"""

from __future__ import annotations

import datetime as dt
import json
import logging
import sqlite3
import zlib
from collections.abc import Iterable

from frostwatch.decision import Decision, decision_from_doc, decision_to_doc, decision_to_json  # noqa: F401 - decision_to_doc re-exported
from frostwatch.errors import StoreError
from frostwatch.store.db import Store, to_ms

log = logging.getLogger("frostwatch.store")
DOC_COMPRESSION = 6  # zlib level of the stored JSON document (a text document is read as well)

_INSERT = (
    "INSERT OR REPLACE INTO decisions(block, time_utc_ms, level, rank, frost_level, monitored, step, predicted_min_c, "
    "predicted_min_at_utc_ms, crossing_utc_ms, ready_by_utc_ms, version, doc) VALUES (?,?,?,?,?,?,?,?,?,?,?,?,?)"
)


def _ms(t: dt.datetime | None) -> int | None:
    return None if t is None else to_ms(t)


def row_of(d: Decision) -> tuple:
    # zlib-compressed JSON (about 0.9 KB instead of 2.4 KB): several decisions share a 4 KiB page,
    # where one uncompressed decision took a page of its own (4x the store size on a Pi's SD card)
    # the JSON text is json.dumps(decision_to_doc(d), separators=(",", ":"), allow_nan=False)
    doc = zlib.compress(decision_to_json(d).encode("utf-8"), DOC_COMPRESSION)
    return (d.block, to_ms(d.as_of_utc), d.level, d.rank, d.frost_level, int(d.monitored), d.step.value,
            d.projection.predicted_min_c, _ms(d.projection.predicted_min_at_utc), _ms(d.plan.crossing_utc),
            _ms(d.plan.ready_by_utc), d.version, doc)


def save(conn: sqlite3.Connection, decisions: Iterable[Decision]) -> int:
    """Insert decisions on an open transaction (the caller's); returns how many."""
    rows = [row_of(d) for d in decisions]
    if rows:
        conn.executemany(_INSERT, rows)
    return len(rows)


def save_decisions(store: Store, decisions: Iterable[Decision]) -> int:
    """Decisions in one transaction of their own (replay)."""
    return save_rows(store, [row_of(d) for d in decisions])


def save_rows(store: Store, rows: list[tuple]) -> int:
    """Rows made by `row_of` (in another process, for a parallel replay) in one transaction."""
    try:
        with store.transaction() as c:
            if rows:
                c.executemany(_INSERT, rows)
            return len(rows)
    except sqlite3.Error as exc:
        raise StoreError(f"{store.path}: cannot store decisions: {exc}") from None


def _decode(rows: list[tuple[str | bytes]]) -> list[Decision]:
    out = []
    for (doc,) in rows:
        try:
            text = zlib.decompress(doc).decode("utf-8") if isinstance(doc, bytes) else doc
            out.append(decision_from_doc(json.loads(text)))
        except (ValueError, TypeError, KeyError, zlib.error) as exc:  # a newer or damaged row: missing, logged
            log.warning("a stored decision could not be read (%s); it is left out", exc)
    return out


def _query(store: Store, sql: str, args: Iterable) -> list[tuple]:
    try:
        with store.lock:
            return store.conn.execute(sql, list(args)).fetchall()
    except sqlite3.OperationalError as exc:
        if "no such table" in str(exc):  # a store this frostwatch has not migrated (read-only use)
            return []
        raise StoreError(f"{store.path}: cannot read decisions: {exc}") from None
    except sqlite3.Error as exc:
        raise StoreError(f"{store.path}: cannot read decisions: {exc}") from None


def latest(store: Store, blocks: Iterable[str] | None = None, until_utc: dt.datetime | None = None) -> dict[str, Decision]:
    """{block: its newest decision made at or before `until_utc`} (each block read by its own
    index range, never the whole table)."""
    if blocks is None:
        blocks = [b for (b,) in _query(store, "SELECT DISTINCT block FROM decisions", ())]
    until = 2**62 if until_utc is None else to_ms(until_utc)
    out = {}
    for b in blocks:
        got = _decode(_query(store, "SELECT doc FROM decisions WHERE block = ? AND time_utc_ms <= ? "
                                    "ORDER BY time_utc_ms DESC LIMIT 1", (b, until)))
        if got:
            out[b] = got[0]
    return out


def between(store: Store, start_utc: dt.datetime, end_utc: dt.datetime, block: str | None = None) -> list[Decision]:
    """Decisions with start <= as_of <= end, oldest first (one block, or all)."""
    if block is None:
        rows = _query(store, "SELECT doc FROM decisions WHERE time_utc_ms BETWEEN ? AND ? ORDER BY time_utc_ms, block",
                      (to_ms(start_utc), to_ms(end_utc)))
    else:
        rows = _query(store, "SELECT doc FROM decisions WHERE block = ? AND time_utc_ms BETWEEN ? AND ? "
                             "ORDER BY time_utc_ms", (block, to_ms(start_utc), to_ms(end_utc)))
    return _decode(rows)


def changes_between(store: Store, start_utc: dt.datetime, end_utc: dt.datetime, block: str) -> list[Decision]:
    """A block's decisions with start <= as_of <= end where the level, the step or the monitoring
    state changed, and the last one (the night report's list), oldest first. The changes are
    found on the columns; only those decisions are decoded (a night holds hundreds)."""
    rows = _query(store, "SELECT time_utc_ms, level, step, monitored FROM decisions WHERE block = ? AND "
                         "time_utc_ms BETWEEN ? AND ? ORDER BY time_utc_ms", (block, to_ms(start_utc), to_ms(end_utc)))
    keep, last = [], None
    for t_ms, *state in rows:
        if state != last:
            keep.append(t_ms)
            last = state
    if rows and keep[-1] != rows[-1][0]:
        keep.append(rows[-1][0])
    docs = []
    for i in range(0, len(keep), 500):  # under SQLite's limit of bound parameters
        part = keep[i:i + 500]
        docs += _query(store, f"SELECT doc FROM decisions WHERE block = ? AND time_utc_ms IN ({','.join('?' * len(part))}) "
                              "ORDER BY time_utc_ms", (block, *part))
    return _decode(docs)


def at(store: Store, block: str, as_of_utc: dt.datetime) -> Decision | None:
    """The decision of `block` made at exactly `as_of_utc` (None if there is none)."""
    got = _decode(_query(store, "SELECT doc FROM decisions WHERE block = ? AND time_utc_ms = ?", (block, to_ms(as_of_utc))))
    return got[0] if got else None


def delete_before(store: Store, cut_utc: dt.datetime, batch: int = 5000) -> int:
    """Delete decisions older than `cut_utc` in bounded batches; returns how many."""
    removed = 0
    while True:
        with store.transaction() as c:
            n = c.execute("DELETE FROM decisions WHERE id IN (SELECT id FROM decisions WHERE time_utc_ms < ? LIMIT ?)",
                          (to_ms(cut_utc), batch)).rowcount
        removed += n
        if n < batch:
            return removed
