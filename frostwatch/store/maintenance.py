"""The store's upkeep: the daemon's write settings, retention and WAL checkpoints.

    tune_store(store)                               # once, when the daemon opens its store
    remove_old_rows(store, readings_before_utc, rejections_before_utc) -> readings removed
    checkpoint(store, "TRUNCATE")                   # after housekeeping; "PASSIVE" on the way out
"""

from __future__ import annotations

import datetime as dt

from frostwatch.store.db import Store, to_ms

# SQLite's default checkpoints every 1000 WAL pages (4 MiB). A page changed by many commits in a row
# (the newest readings leaf, meta) is written once per checkpoint, so fewer checkpoints write less
# (bench/storage.py); the WAL file is truncated back to the limit after each checkpoint.
WAL_AUTOCHECKPOINT_BYTES = 16 * 2**20
WAL_AUTOCHECKPOINT_PAGES = WAL_AUTOCHECKPOINT_BYTES // 4096  # at SQLite's default page size (kept for readers)
WAL_SIZE_LIMIT_BYTES = 8 * 2**20
RETENTION_BATCH_ROWS = 5000  # readings deleted per transaction: each write transaction stays short
CHECKPOINT_MODES = ("PASSIVE", "FULL", "RESTART", "TRUNCATE")


def wal_autocheckpoint_pages(page_size_bytes: int) -> int:
    """Pages of WAL between automatic checkpoints: WAL_AUTOCHECKPOINT_BYTES whatever the page size."""
    return max(1000, WAL_AUTOCHECKPOINT_BYTES // page_size_bytes)


def tune_store(store: Store) -> None:
    """The daemon's write settings on top of Store.open (synchronous=FULL stays: finding 9)."""
    with store.lock:
        page = store.conn.execute("PRAGMA page_size").fetchone()[0]
        store.conn.execute(f"PRAGMA wal_autocheckpoint={wal_autocheckpoint_pages(page)}")
        store.conn.execute(f"PRAGMA journal_size_limit={WAL_SIZE_LIMIT_BYTES}")


def remove_old_rows(store: Store, readings_before_utc: dt.datetime, rejections_before_utc: dt.datetime) -> int:
    """Delete readings older than one instant and rejections older than another, in bounded
    batches; returns the number of readings removed."""
    cut = to_ms(readings_before_utc)
    rejections_cut = to_ms(rejections_before_utc)
    removed = 0
    while True:
        with store.transaction() as c:
            n = c.execute(
                "DELETE FROM readings WHERE (time_utc_ms, station, quantity) IN "
                "(SELECT time_utc_ms, station, quantity FROM readings WHERE time_utc_ms < ? LIMIT ?)",
                (cut, RETENTION_BATCH_ROWS),
            ).rowcount
            c.execute("DELETE FROM rejections WHERE received_utc_ms < ?", (rejections_cut,))
        removed += n
        if n < RETENTION_BATCH_ROWS:
            return removed


def checkpoint(store: Store, mode: str = "PASSIVE") -> None:
    """Checkpoint the WAL into the database file (`mode` one of CHECKPOINT_MODES)."""
    if mode not in CHECKPOINT_MODES:
        raise ValueError(f"checkpoint mode {mode!r}: expected one of {', '.join(CHECKPOINT_MODES)}")
    with store.lock:
        store.conn.execute(f"PRAGMA wal_checkpoint({mode})")
