"""The SQLite store: the one place that speaks SQL.

WAL journal, synchronous=FULL (a committed reading survives power loss, reliability.md finding 9),
readings keyed time first (time, station, quantity) so that batched commits stay cheap on an SD
card (finding 10). One connection, shared by the daemon's threads: every use of it holds the
store's lock, reads included, and reads never open a transaction (sqlite-utils' `query` wraps
each read in a SAVEPOINT, which on a shared connection let another thread's BEGIN IMMEDIATE land
inside it: "cannot start a transaction within a transaction"). Raises `StoreError` when the file
cannot be opened or migrated; `damaged_message` words a damaged file for the command line.

Several processes may create one new store at the same moment (the daemon and the status page both
start at boot): `PRAGMA journal_mode=WAL` can fail at once with "database is locked" while another
process switches the new file to WAL (SQLite's busy handler does not cover that switch), so the
switch and the first migrations are retried with a bounded backoff (`OPEN_RETRY_S`), and a store
still locked after that is refused with one sentence naming it (tests/test_store_first_open.py).

Upgrading in place: an older store is migrated when it is opened, every row kept (the schema
version is PRAGMA user_version); a store written by a newer frostwatch is refused before anything
is written to it (tests/test_upgrade.py, with a store made by 0.1.0).
"""

from __future__ import annotations

import datetime as dt
import random
import sqlite3
import threading
import time
from collections.abc import Iterable, Iterator
from contextlib import contextmanager
from pathlib import Path

from frostwatch.errors import StoreError
from frostwatch.models import Alert, Projection
from frostwatch.store.detail import projection_detail_json
from frostwatch.store.failures import (  # noqa: F401 - store_failure re-exported
    _newer_schema_message,
    _refuse_newer_schema,
    damaged_message,
    is_damage,
    store_failure,
)
from frostwatch.store.readings import ReadingsTable
from frostwatch.store.schema import MIGRATIONS, SCHEMA_VERSION
from frostwatch.store.times import from_ms, to_ms  # noqa: F401 - from_ms re-exported

# stores opened by this process, most recent last (closed ones too): the command line names the
# file when SQLite reports damage from deep inside a command
OPENED: list[Path] = []

# The page size of a new store. Every commit writes each page it touched to the WAL (and a
# checkpoint writes it again), and the readings table appends several rows per commit: 1 KiB
# pages halve the bytes per commit against SQLite's 4 KiB default (bench/storage.py). A store
# made before keeps its page size (changing it means rewriting the whole file).
PAGE_SIZE_BYTES = 1024

# How long opening a store keeps retrying the WAL switch and the migrations while another process
# holds the file ("database is locked"), and the longest pause between two tries.
OPEN_RETRY_S = 10.0
OPEN_RETRY_MAX_PAUSE_S = 0.2


class Store(ReadingsTable):
    """A frostwatch SQLite database. Use `Store.open(path)`; close with `close()` or `with`."""

    def __init__(self, conn: sqlite3.Connection, path: Path):
        self.conn = conn
        self._db = None
        self.path = path
        self.lock = threading.RLock()

    @property
    def db(self):
        """The connection as a `sqlite_utils.Database`, made on first use: sqlite_utils imports
        pandas when it is installed, 0.2-0.4 s that `frostwatch status` should not pay."""
        if self._db is None:
            import sqlite_utils

            self._db = sqlite_utils.Database(self.conn)
        return self._db

    # -- opening and migrations ----------------------------------------------------------------
    @classmethod
    def open(cls, path: str | Path, *, synchronous: str = "FULL") -> Store:
        p = Path(path)
        try:
            new = not p.exists() or p.stat().st_size == 0
            retry = _LockRetry(p)
            if not new:  # read-only, before a pragma could write to it
                retry.run("read its schema version", lambda: _refuse_newer_schema(p))
            p.parent.mkdir(parents=True, exist_ok=True)
            conn = sqlite3.connect(str(p), timeout=10.0, check_same_thread=False, isolation_level=None)
            try:
                if new:  # small pages: each commit rewrites fewer bytes of the SD card (bench/storage.py)
                    conn.execute(f"PRAGMA page_size={PAGE_SIZE_BYTES}")
                retry.run("switch it to WAL", lambda: conn.execute("PRAGMA journal_mode=WAL"))
                conn.execute(f"PRAGMA synchronous={synchronous}")
                conn.execute("PRAGMA busy_timeout=10000")
                conn.execute("PRAGMA foreign_keys=ON")
                store = cls(conn, p)
                retry.run("create or upgrade its tables", store.migrate)
            except BaseException:
                conn.close()
                raise
        except sqlite3.DatabaseError as exc:
            if is_damage(exc):
                raise StoreError(damaged_message(p, exc, opening=True)) from None
            raise StoreError(f"{p}: cannot open the store: {exc}") from None
        except OSError as exc:
            raise StoreError(f"{p}: cannot open the store: {exc.strerror or exc}") from None
        if p in OPENED:
            OPENED.remove(p)
        OPENED.append(p)
        return store

    def migrate(self) -> None:
        """Apply the migrations this store lacks, each in its own BEGIN IMMEDIATE transaction.

        The version is read again inside each transaction: the daemon and the status page may
        open a new store at the same moment (both start at boot), and the one that waited for the
        lock must find the other's tables made, not make them again ("table readings already
        exists").
        """
        version = self.conn.execute("PRAGMA user_version").fetchone()[0]
        if version > SCHEMA_VERSION:
            raise StoreError(_newer_schema_message(self.path, version))
        for target in sorted(v for v in MIGRATIONS if v > version):
            with self.lock:
                self.conn.execute("BEGIN IMMEDIATE")
                try:
                    now = self.conn.execute("PRAGMA user_version").fetchone()[0]
                    if now > SCHEMA_VERSION:
                        raise StoreError(_newer_schema_message(self.path, now))
                    if now < target:
                        for statement in sql_statements(MIGRATIONS[target]):
                            self.conn.execute(statement)
                        self.conn.execute(f"PRAGMA user_version={target}")
                    self.conn.execute("COMMIT")
                except BaseException:
                    if self.conn.in_transaction:
                        self.conn.execute("ROLLBACK")
                    raise

    @property
    def schema_version(self) -> int:
        with self.lock:
            return self.conn.execute("PRAGMA user_version").fetchone()[0]

    def close(self) -> None:
        with self.lock:
            self.conn.close()

    def query(self, sql: str, args: Iterable = ()) -> list[dict]:
        """Rows of a read as dicts, under the lock, without opening a transaction."""
        with self.lock:
            cur = self.conn.execute(sql, list(args))
            keys = [d[0] for d in cur.description]
            return [dict(zip(keys, row, strict=True)) for row in cur.fetchall()]

    def __enter__(self) -> Store:
        return self

    def __exit__(self, *exc: object) -> None:
        self.close()

    @contextmanager
    def transaction(self) -> Iterator[sqlite3.Connection]:
        """BEGIN IMMEDIATE ... COMMIT (reliability.md finding 11); rolls back on error."""
        with self.lock:
            self.conn.execute("BEGIN IMMEDIATE")
            try:
                yield self.conn
                self.conn.execute("COMMIT")
            except BaseException:
                # a failed COMMIT (a deferred constraint, a full disk) may leave the transaction
                # open: end it, or the next BEGIN fails "within a transaction"
                if self.conn.in_transaction:
                    try:
                        self.conn.execute("ROLLBACK")
                    except sqlite3.Error:
                        pass
                raise

    # -- projections, alerts, events ------------------------------------------------------------
    def add_projection(self, p: Projection) -> None:
        self.add_projections([p])

    def add_projections(self, projections: Iterable[Projection]) -> None:
        """Store projections in one transaction (one commit per evaluation, not per block)."""
        self.add_projection_rows([self._projection_row(p) for p in projections])

    def add_projection_rows(self, rows: list[tuple]) -> None:
        """Rows made by `_projection_row` (in another process, for a parallel replay), in one transaction."""
        with self.transaction() as c:
            c.executemany(
                "INSERT OR REPLACE INTO projections(time_utc_ms, block, predicted_min_c, predicted_min_at_utc_ms, "
                "t10_crossing_utc_ms, band_c, regime, method, detail_json) VALUES (?,?,?,?,?,?,?,?,?)",
                rows,
            )

    @staticmethod
    def _projection_row(p: Projection) -> tuple:
        ms = lambda t: to_ms(t) if t else None  # noqa: E731
        return (
            to_ms(p.time_utc), p.block, p.predicted_min_c, ms(p.predicted_min_at_utc),
            ms(p.crossings_utc.get("t10")), p.band_c, p.regime, p.method, projection_detail_json(p),
        )

    def projections(self, start_utc: dt.datetime, end_utc: dt.datetime, block: str | None = None) -> list[dict]:
        sql = "SELECT * FROM projections WHERE time_utc_ms BETWEEN ? AND ?"
        args: list = [to_ms(start_utc), to_ms(end_utc)]
        if block:
            sql += " AND block = ?"
            args.append(block)
        return self.query(sql + " ORDER BY time_utc_ms", args)

    def add_alert(self, a: Alert) -> bool:
        """Write an alert before anything sends it; False if its key is already stored."""
        with self.transaction() as c:
            cur = c.execute(
                "INSERT OR IGNORE INTO alerts(key, time_utc_ms, block, level, rank, advice, message, resolves, short) "
                "VALUES (?,?,?,?,?,?,?,?,?)",
                (a.key, to_ms(a.time_utc), a.block, a.level, a.rank, a.advice, a.message, a.resolves, a.short or None),
            )
            return cur.rowcount == 1

    def alerts(self, start_utc: dt.datetime, end_utc: dt.datetime) -> list[dict]:
        return self.query("SELECT * FROM alerts WHERE time_utc_ms BETWEEN ? AND ? ORDER BY time_utc_ms, id",
                          [to_ms(start_utc), to_ms(end_utc)])

    def add_event(self, time_utc: dt.datetime, kind: str, subject: str, detail: str) -> None:
        with self.transaction() as c:
            c.execute(
                "INSERT INTO events(time_utc_ms, kind, subject, detail) VALUES (?,?,?,?)",
                (to_ms(time_utc), kind, subject, detail),
            )

    def events(self, start_utc: dt.datetime, end_utc: dt.datetime, kind: str | None = None) -> list[dict]:
        sql = "SELECT * FROM events WHERE time_utc_ms BETWEEN ? AND ?"
        args: list = [to_ms(start_utc), to_ms(end_utc)]
        if kind:
            sql += " AND kind = ?"
            args.append(kind)
        return self.query(sql + " ORDER BY time_utc_ms, id", args)

    def get_meta(self, key: str) -> str | None:
        with self.lock:
            row = self.conn.execute("SELECT value FROM meta WHERE key=?", (key,)).fetchone()
        return row[0] if row else None

    def set_meta(self, key: str, value: str) -> None:
        with self.transaction() as c:
            c.execute("INSERT OR REPLACE INTO meta(key, value) VALUES (?,?)", (key, value))

    def integrity_ok(self) -> bool:
        with self.lock:
            return self.conn.execute("PRAGMA integrity_check").fetchone()[0] == "ok"


def is_locked(exc: BaseException) -> bool:
    """SQLITE_BUSY or SQLITE_LOCKED (any extended code): another connection holds the file."""
    code = getattr(exc, "sqlite_errorcode", None)
    if code is not None:
        return code & 0xFF in (sqlite3.SQLITE_BUSY, sqlite3.SQLITE_LOCKED)
    text = str(exc).lower()
    return isinstance(exc, sqlite3.OperationalError) and ("locked" in text or "busy" in text)


class _LockRetry:
    """Retries a step of opening a store while another process holds the file, with a growing pause
    (jittered),
    until OPEN_RETRY_S have passed since the first try (one budget for all the steps)."""

    def __init__(self, path: Path):
        self.path = path
        self.deadline = time.monotonic() + OPEN_RETRY_S
        self.pause_s = 0.005

    def run(self, what: str, step):
        while True:
            try:
                return step()
            except sqlite3.OperationalError as exc:
                if not is_locked(exc):
                    raise
                left_s = self.deadline - time.monotonic()
                if left_s <= 0:
                    raise StoreError(
                        f"{self.path}: cannot open the store: could not {what} because another process "
                        f"kept it locked for {OPEN_RETRY_S:g} s (SQLite: {exc}); stop the other "
                        "frostwatch command or daemon using this file and try again") from None
                time.sleep(min(self.pause_s * random.uniform(0.5, 1.0), left_s))  # jitter: no lockstep
                self.pause_s = min(self.pause_s * 2, OPEN_RETRY_MAX_PAUSE_S)


def sql_statements(script: str) -> list[str]:
    """The complete statements of an SQL script, in order (sqlite3.complete_statement decides where
    one ends, so a trigger's inner semicolons stay inside it)."""
    statements, pending = [], ""
    for line in script.splitlines(keepends=True):
        pending += line
        if sqlite3.complete_statement(pending):
            if pending.strip():
                statements.append(pending.strip())
            pending = ""
    if pending.strip():
        statements.append(pending.strip())
    return statements
