"""Read-only queries the night report, the season summary and the status page need.

Every function takes a `Store` and tolerates tables or columns that a later migration adds (the
alerts outbox fills `deliveries`, `acks` and `alert_state`); a missing table reads as empty.
Raises `StoreError` only when the database itself cannot be read.
"""

from __future__ import annotations

import datetime as dt
import sqlite3
from collections.abc import Iterable

from frostwatch.errors import StoreError
from frostwatch.store.db import Store, to_ms


def _has_table(store: Store, name: str) -> bool:
    with store.lock:
        row = store.conn.execute("SELECT 1 FROM sqlite_master WHERE type='table' AND name=?", (name,)).fetchone()
    return row is not None


def _query(store: Store, sql: str, args: Iterable = ()) -> list[dict]:
    try:
        with store.lock:
            cur = store.conn.execute(sql, list(args))
            cols = [c[0] for c in cur.description]
            return [dict(zip(cols, r, strict=True)) for r in cur.fetchall()]
    except sqlite3.Error as exc:
        raise StoreError(f"{store.path}: cannot read for the report: {exc}") from None


def deliveries_for(store: Store, alert_keys: Iterable[str]) -> dict[str, list[dict]]:
    """{alert key: [delivery rows, oldest first]}; empty when nothing has been delivered yet."""
    keys = list(alert_keys)
    out: dict[str, list[dict]] = {k: [] for k in keys}
    if not keys or not _has_table(store, "deliveries"):
        return out
    for i in range(0, len(keys), 500):
        chunk = keys[i:i + 500]
        rows = _query(store, f"SELECT * FROM deliveries WHERE alert_key IN ({','.join('?' * len(chunk))}) ORDER BY id",
                      chunk)
        for r in rows:
            out.setdefault(r["alert_key"], []).append(r)
    return out


def acks_for(store: Store, alert_keys: Iterable[str]) -> dict[str, list[dict]]:
    """{alert key: [acknowledgement rows (who, via, time_utc_ms), oldest first]}."""
    keys = list(alert_keys)
    out: dict[str, list[dict]] = {k: [] for k in keys}
    if not keys or not _has_table(store, "acks"):
        return out
    for i in range(0, len(keys), 500):
        chunk = keys[i:i + 500]
        rows = _query(store, f"SELECT * FROM acks WHERE alert_key IN ({','.join('?' * len(chunk))}) "
                             "ORDER BY time_utc_ms, id", chunk)
        for r in rows:
            out.setdefault(r["alert_key"], []).append(r)
    return out


def alert_states(store: Store, alert_keys: Iterable[str]) -> dict[str, dict]:
    """{alert key: its escalation row (state firing/acked/resolved/info ...)} where the outbox keeps one."""
    keys = list(alert_keys)
    if not keys or not _has_table(store, "alert_state"):
        return {}
    rows = _query(store, f"SELECT * FROM alert_state WHERE alert_key IN ({','.join('?' * len(keys))})", keys)
    return {r["alert_key"]: r for r in rows}


def protection_runs(store: Store, start_utc: dt.datetime, end_utc: dt.datetime) -> list[dict]:
    """Rows of `protection_runs` that overlap the window (runs recorded by hand or by the daemon)."""
    if not _has_table(store, "protection_runs"):
        return []
    return _query(
        store,
        "SELECT * FROM protection_runs WHERE start_utc_ms <= ? AND (stop_utc_ms IS NULL OR stop_utc_ms >= ?) "
        "ORDER BY start_utc_ms, id",
        (to_ms(end_utc), to_ms(start_utc)),
    )


def readings_digest_rows(store: Store, start_utc: dt.datetime, end_utc: dt.datetime) -> list[tuple]:
    """(time_utc_ms, station, quantity, value) of the window in key order, for the night's hash."""
    return _query_rows(
        store,
        "SELECT time_utc_ms, station, quantity, value FROM readings WHERE time_utc_ms BETWEEN ? AND ? "
        "ORDER BY time_utc_ms, station, quantity",
        (to_ms(start_utc), to_ms(end_utc)),
    )


def _query_rows(store: Store, sql: str, args: Iterable) -> list[tuple]:
    try:
        with store.lock:
            return store.conn.execute(sql, list(args)).fetchall()
    except sqlite3.Error as exc:
        raise StoreError(f"{store.path}: cannot read for the report: {exc}") from None


def latest_readings(store: Store, since_utc: dt.datetime,
                    until_utc: dt.datetime | None = None) -> dict[tuple[str, str], tuple[int, float]]:
    """{(station, quantity): (time_utc_ms, value)} of the newest reading since `since_utc` (and at
    or before `until_utc` when given)."""
    rows = _query_rows(
        store,
        "SELECT station, quantity, max(time_utc_ms), value FROM readings WHERE time_utc_ms BETWEEN ? AND ? "
        "GROUP BY station, quantity",
        (to_ms(since_utc), 2**62 if until_utc is None else to_ms(until_utc)),
    )
    return {(s, q): (int(ms), float(v)) for s, q, ms, v in rows}


def latest_projection_per_block(store: Store, since_utc: dt.datetime) -> dict[str, dict]:
    """{block: the newest stored projection row since `since_utc`}."""
    rows = _query(
        store,
        "SELECT p.* FROM projections p JOIN (SELECT block, max(time_utc_ms) AS t FROM projections "
        "WHERE time_utc_ms >= ? GROUP BY block) m ON p.block = m.block AND p.time_utc_ms = m.t",
        (to_ms(since_utc),),
    )
    return {r["block"]: r for r in rows}


def nights_with_readings(store: Store, start_utc: dt.datetime, end_utc: dt.datetime, step_h: float = 1.0) -> list[int]:
    """Distinct hour buckets (ms since the epoch, floored) that hold readings in the window."""
    step = int(step_h * 3600_000)
    rows = _query_rows(
        store,
        "SELECT DISTINCT (time_utc_ms / ?) * ? FROM readings WHERE time_utc_ms BETWEEN ? AND ?",
        (step, step, to_ms(start_utc), to_ms(end_utc)),
    )
    return sorted(int(r[0]) for r in rows)


def hourly_means(store: Store, start_utc: dt.datetime, end_utc: dt.datetime,
                 quantities: tuple[str, ...] = ("air_temperature", "wind_speed")) -> list[tuple[int, str, str, float]]:
    """(hour index, station, quantity, mean value) of every station's readings with start <= time < end,
    hour index = ms since 1970 UTC // 3 600 000: one aggregate over the readings' primary key, so a
    two-week window of a large farm stays cheap on a Pi (bench/offsets_query.py)."""
    marks = ",".join("?" * len(quantities))
    rows = _query(store, "SELECT time_utc_ms / 3600000 AS hour, station, quantity, AVG(value) AS mean FROM readings "
                         f"WHERE time_utc_ms >= ? AND time_utc_ms < ? AND quantity IN ({marks}) "
                         "GROUP BY hour, station, quantity", [to_ms(start_utc), to_ms(end_utc), *quantities])
    return [(r["hour"], r["station"], r["quantity"], r["mean"]) for r in rows]
