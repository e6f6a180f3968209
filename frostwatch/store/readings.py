"""The readings and rejections tables: storing a batch (duplicates, conflicts and rows that cannot
be stored set aside, never lost), reading a time window.

`ReadingsTable` is a part of `frostwatch.store.db.Store`; it uses the store's `conn`, `lock`,
`path`, `transaction` and `query`.
"""

from __future__ import annotations

import datetime as dt
import math
import sqlite3
from array import array
from collections.abc import Iterable, Iterator

import numpy as np

from frostwatch.errors import StoreError
from frostwatch.models import Reading, Rejection
from frostwatch.store.failures import _iso_or_repr, damaged_message, is_damage, store_failure
from frostwatch.store.times import from_ms, to_ms


class ReadingsTable:
    def add_readings(
        self, readings: Iterable[Reading], source: str, origins: list[tuple[str, int | None]] | None = None
    ) -> tuple[int, int, list[Rejection]]:
        """Store readings in one transaction. Returns (stored, exact duplicates, conflicts).

        An exact duplicate (same time, station, quantity and value) is stored once; the same key
        with a different value is a conflict, returned as a Rejection and kept aside. `origins`
        (one (source, line) per reading) lets a conflict name the file and line it came from.
        """
        try:
            with self.transaction() as c:
                return self._insert_readings(c, readings, source, origins)
        except sqlite3.Error as exc:
            if is_damage(exc):
                raise StoreError(damaged_message(self.path, exc)) from None
            raise StoreError(f"{self.path}: cannot store readings: {exc}") from None

    def add_ingest(
        self,
        readings: list[Reading],
        rejections: list[Rejection],
        received_utc: dt.datetime,
        source: str,
        origins: list[tuple[str, int | None, str]] | None = None,
    ) -> tuple[int, int, list[Rejection]]:
        """Readings and rejections of one ingest batch in one transaction (one fsync).

        Returns (stored, exact duplicates, rows set aside): the set-aside rows are conflicts
        (already stored) as `add_readings` reports them, and readings that could not be stored,
        each stored as a rejection with its reason. A batch that fails for one row is retried
        row by row, so the others commit and only the bad one is set aside. Raises `StoreError`
        only when the store itself cannot write (`store_failure` says why: disk full, I/O
        error, locked, read-only); nothing of the batch is then kept, so it can be retried whole.
        `origins` gives each reading's (source, line, raw text) for its rejection.
        """
        try:
            with self.transaction() as c:
                stored, dup, conflicts = self._insert_readings(c, readings, source, origins)
                self._insert_rejections(c, [*rejections, *conflicts], received_utc)
            return stored, dup, conflicts
        except Exception as exc:  # noqa: BLE001 - sorted below: the store's fault or one row's
            if store_failure(exc) is not None:
                raise StoreError(f"{self.path}: cannot store readings: {store_failure(exc)}") from exc
            batch_error = exc
        stored = dup = 0
        aside: list[Rejection] = []
        for i, r in enumerate(readings):
            try:
                with self.transaction() as c:
                    s1, d1, c1 = self._insert_readings(c, [r], source, [origins[i]] if origins else None)
                stored, dup = stored + s1, dup + d1
                aside += c1
            except Exception as exc:  # noqa: BLE001 - this row is set aside with its reason
                if store_failure(exc) is not None:
                    raise StoreError(f"{self.path}: cannot store readings: {store_failure(exc)}") from exc
                where = origins[i] if origins else (source, None, "")
                aside.append(Rejection(
                    where[0], where[1],
                    f"{r.station} {r.quantity} at {_iso_or_repr(r.time_utc)} could not be stored "
                    f"({type(exc).__name__}: {str(exc)[:160]}); set aside, the rest of the batch was stored",
                    where[2] or f"{_iso_or_repr(r.time_utc)},{r.station},{r.quantity},{r.value!r}"[:200],
                ))
        try:
            with self.transaction() as c:
                self._insert_rejections(c, [*rejections, *aside], received_utc)
        except Exception as exc:  # noqa: BLE001
            raise StoreError(
                f"{self.path}: cannot store rejected rows: {store_failure(exc) or type(exc).__name__ + ': ' + str(exc)}"
                f" (after the batch failed with {type(batch_error).__name__}: {batch_error})"
            ) from exc
        return stored, dup, aside

    def _insert_readings(self, c: sqlite3.Connection, readings: Iterable[Reading], source: str,
                         origins: list[tuple[str, int | None, str]] | None) -> tuple[int, int, list[Rejection]]:
        stored = dup = 0
        conflicts: list[Rejection] = []
        for i, r in enumerate(readings):
            ms = to_ms(r.time_utc)
            cur = c.execute(
                "INSERT OR IGNORE INTO readings(time_utc_ms, station, quantity, value, source) VALUES (?,?,?,?,?)",
                (ms, r.station, r.quantity, r.value, source),
            )
            if cur.rowcount == 1:
                stored += 1
                continue
            (old,) = c.execute(
                "SELECT value FROM readings WHERE time_utc_ms=? AND station=? AND quantity=?",
                (ms, r.station, r.quantity),
            ).fetchone()
            if math.isclose(old, r.value, rel_tol=0, abs_tol=1e-9):
                dup += 1
            else:
                where = origins[i] if origins is not None else (source, None, "")
                conflicts.append(Rejection(
                    where[0], where[1],
                    f"{r.station} {r.quantity} at {r.time_utc.isoformat()} is {r.value:g} here but "
                    f"{old:g} is already stored; the first value is kept",
                    f"{r.time_utc.isoformat()},{r.station},{r.quantity},{r.value}",
                ))
        return stored, dup, conflicts

    @staticmethod
    def _insert_rejections(c: sqlite3.Connection, rejections: Iterable[Rejection], received_utc: dt.datetime) -> int:
        rows = [(to_ms(received_utc), r.source, r.line, r.reason, r.raw[:2000]) for r in rejections]
        if rows:
            c.executemany("INSERT INTO rejections(received_utc_ms, source, line, reason, raw) VALUES (?,?,?,?,?)", rows)
        return len(rows)

    def add_rejections(self, rejections: Iterable[Rejection], received_utc: dt.datetime) -> int:
        rows = [
            (to_ms(received_utc), r.source, r.line, r.reason, r.raw[:2000]) for r in rejections
        ]
        if not rows:
            return 0
        try:
            with self.transaction() as c:
                c.executemany(
                    "INSERT INTO rejections(received_utc_ms, source, line, reason, raw) VALUES (?,?,?,?,?)", rows
                )
        except sqlite3.Error as exc:
            if is_damage(exc):
                raise StoreError(damaged_message(self.path, exc)) from None
            raise StoreError(f"{self.path}: cannot store rejected rows: {exc}") from None
        return len(rows)

    def has_rejection(self, source: str, raw: str) -> bool:
        """Whether a rejection of this source with this raw text is already stored."""
        with self.lock:
            return self.conn.execute(
                "SELECT 1 FROM rejections WHERE source=? AND raw=? LIMIT 1", (source, raw[:2000])
            ).fetchone() is not None

    def count(self, table: str) -> int:
        if not table.replace("_", "").isalnum():
            raise ValueError(f"not a table name: {table!r}")
        with self.lock:
            return self.conn.execute(f"SELECT count(*) FROM [{table}]").fetchone()[0]

    def readings_window(
        self,
        start_utc: dt.datetime,
        end_utc: dt.datetime,
        stations: Iterable[str] | None = None,
    ) -> dict[tuple[str, str], tuple[np.ndarray, np.ndarray]]:
        """Readings with start <= time <= end, as {(station, quantity): (t_s, values)} sorted by time.

        `t_s` are float seconds since the epoch. Reads a time window only (the key is time first),
        never the whole table.
        """
        sql = "SELECT time_utc_ms, station, quantity, value FROM readings WHERE time_utc_ms BETWEEN ? AND ?"
        args: list = [to_ms(start_utc), to_ms(end_utc)]
        st = list(stations) if stations is not None else None
        if st is not None:
            sql += f" AND station IN ({','.join('?' * len(st))})"
            args += st
        # rows go straight into compact arrays, a few thousand at a time: a window of 300,000
        # readings never exists as Python tuples all at once (the health check reads 90 minutes
        # every minute; whole lists of rows left the allocator's heaps fragmented, bench/soak)
        groups: dict[tuple[str, str], tuple[array, array]] = {}
        with self.lock:
            cur = self.conn.execute(sql, args)
            while rows := cur.fetchmany(4096):
                for ms, s, q, v in rows:
                    g = groups.get((s, q))
                    if g is None:
                        g = groups[(s, q)] = (array("d"), array("d"))
                    g[0].append(ms)
                    g[1].append(v)
        return {key: (np.frombuffer(t, dtype=float) / 1000.0, np.array(v, dtype=float)) for key, (t, v) in groups.items()}

    def reading_time_range(self) -> tuple[dt.datetime, dt.datetime] | None:
        with self.lock:
            lo, hi = self.conn.execute("SELECT min(time_utc_ms), max(time_utc_ms) FROM readings").fetchone()
        return None if lo is None else (from_ms(lo), from_ms(hi))

    def iter_readings(self, start_utc: dt.datetime | None = None, end_utc: dt.datetime | None = None) -> Iterator[tuple[int, str, str, float]]:
        lo = to_ms(start_utc) if start_utc else -(2**62)
        hi = to_ms(end_utc) if end_utc else 2**62
        with self.lock:
            cur = self.conn.execute(
                "SELECT time_utc_ms, station, quantity, value FROM readings WHERE time_utc_ms BETWEEN ? AND ? "
                "ORDER BY time_utc_ms, station, quantity",
                (lo, hi),
            )
            rows = cur.fetchall()
        yield from rows

    def rejections(self) -> list[dict]:
        return self.query("SELECT * FROM rejections ORDER BY id")
