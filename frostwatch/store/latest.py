"""The newest reading of every station and quantity (what `frostwatch status` lists per station)."""

from __future__ import annotations

import datetime as dt

from frostwatch.store.db import Store, to_ms


def latest_readings_since(store: Store, since_utc: dt.datetime) -> list[tuple[str, str, int, float]]:
    """(station, quantity, time_utc_ms, value) of the newest reading of each station and quantity
    since an instant. Readings are keyed by time first: read a window, never the whole table."""
    with store.lock:
        return store.conn.execute(
            "SELECT station, quantity, max(time_utc_ms), value FROM readings WHERE time_utc_ms >= ? "
            "GROUP BY station, quantity",
            (to_ms(since_utc),),
        ).fetchall()
