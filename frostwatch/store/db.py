"""The SQLite store: the one place that speaks SQL.

WAL journal, synchronous=FULL (a committed reading survives power loss, reliability.md finding 9),
readings keyed time first (time, station, quantity) so that batched commits stay cheap on an SD
card (finding 10). One connection, shared by the daemon's threads: every use of it holds the
store's lock, reads included, and reads never open a transaction (sqlite-utils' `query` wraps
each read in a SAVEPOINT, which on a shared connection let another thread's BEGIN IMMEDIATE land
inside it: "cannot start a transaction within a transaction"). Raises `StoreError` when the file
cannot be opened or migrated; `damaged_message` words a damaged file for the command line.

Upgrading in place: an older store is migrated when it is opened, every row kept (the schema
version is PRAGMA user_version); a store written by a newer frostwatch is refused before anything
is written to it (tests/test_upgrade.py, with a store made by 0.1.0).
"""

from __future__ import annotations

import datetime as dt
import json
import math
import sqlite3
import threading
from array import array
from collections.abc import Iterable, Iterator
from contextlib import contextmanager
from pathlib import Path

import numpy as np

from frostwatch.errors import StoreError
from frostwatch.models import Alert, Projection, Reading, Rejection
from frostwatch.store.schema import MIGRATIONS, SCHEMA_VERSION


def to_ms(t: dt.datetime) -> int:
    """An aware datetime -> integer milliseconds since 1970-01-01 UTC."""
    return int(round(t.timestamp() * 1000))


def store_failure(exc: BaseException) -> str | None:
    """Why the store as a whole cannot write, in words for the health alert ("the disk is full
    ..."), or None when the error belongs to the row being written (a constraint, a value SQLite
    cannot take) and the rest of a batch may still be stored."""
    if isinstance(exc, StoreError):
        return str(exc)
    if isinstance(exc, OSError):
        return f"the file system refused a write ({exc.strerror or exc})"
    row_errors = (sqlite3.IntegrityError, sqlite3.DataError, sqlite3.InterfaceError, sqlite3.ProgrammingError)
    if not isinstance(exc, sqlite3.DatabaseError) or isinstance(exc, row_errors):
        return None  # a constraint or trigger, OverflowError, TypeError: the row's own fault
    text = str(exc).lower()
    if "full" in text:
        return "the disk is full (SQLite: database or disk is full); free space on it"
    if "disk i/o" in text or "i/o error" in text:
        return "the disk gives I/O errors (SQLite: disk I/O error); check the SD card or drive"
    if "locked" in text or "busy" in text:
        return "the store is locked by another process (SQLite: database is locked)"
    if "readonly" in text or "read-only" in text:
        return "the store is read-only (SQLite: attempt to write a readonly database); check its permissions"
    if "malformed" in text or "not a database" in text:
        return "the store file is damaged (SQLite: database disk image is malformed)"
    if "unable to open" in text:
        return "the store file cannot be opened"
    return None


def _iso_or_repr(t: object) -> str:
    try:
        return t.isoformat()  # type: ignore[attr-defined]
    except Exception:  # noqa: BLE001
        return repr(t)[:60]


def from_ms(ms: int) -> dt.datetime:
    """Integer milliseconds since the epoch -> an aware UTC datetime."""
    return dt.datetime.fromtimestamp(ms / 1000.0, tz=dt.UTC)


def _newer_schema_message(path: Path, version: int) -> str:
    from frostwatch import __version__

    return (f"{path}: this store has schema version {version}, newer than frostwatch {__version__} "
            f"understands (schema version {SCHEMA_VERSION}), so it was written by a newer frostwatch: "
            "install that version again; the file was left as it is")


def _refuse_newer_schema(path: Path) -> None:
    """Raise StoreError if the store at `path` has a newer schema. Only reads: no pragma that could
    write (journal_mode), and closing this one connection removes the WAL files it opened."""
    conn = sqlite3.connect(str(path), timeout=10.0)
    try:
        version = conn.execute("PRAGMA user_version").fetchone()[0]
    finally:
        conn.close()
    if version > SCHEMA_VERSION:
        raise StoreError(_newer_schema_message(path, version))


def damaged_message(path: Path | str, exc: BaseException, opening: bool = False) -> str:
    """One sentence for a store file SQLite finds damaged: which file, and what to do."""
    return (f"{path}: {'cannot open the store: ' if opening else ''}the store file is damaged "
            f"(SQLite: {str(exc).splitlines()[0] if str(exc) else exc!r}); stop "
            f"frostwatch, keep a copy of the file, then restore it from a backup or recover what it holds with "
            f"`sqlite3 {path} .recover | sqlite3 {path}.recovered` and point [storage] path at the recovered file")


def is_damage(exc: BaseException) -> bool:
    """SQLite's words for a damaged file (a zeroed or corrupt page, or not a database at all)."""
    text = str(exc).lower()
    return isinstance(exc, sqlite3.DatabaseError) and ("malformed" in text or "not a database" in text)


# stores opened by this process, most recent last (closed ones too): the command line names the
# file when SQLite reports damage from deep inside a command
OPENED: list[Path] = []

# The page size of a new store. Every commit writes each page it touched to the WAL (and a
# checkpoint writes it again), and the readings table appends several rows per commit: 1 KiB
# pages halve the bytes per commit against SQLite's 4 KiB default (bench/storage.py). A store
# made before keeps its page size (changing it means rewriting the whole file).
PAGE_SIZE_BYTES = 1024


class Store:
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
            if not new:
                _refuse_newer_schema(p)  # read-only, before a pragma could write to it
            p.parent.mkdir(parents=True, exist_ok=True)
            conn = sqlite3.connect(str(p), timeout=10.0, check_same_thread=False, isolation_level=None)
            try:
                if new:  # small pages: each commit rewrites fewer bytes of the SD card (bench/storage.py)
                    conn.execute(f"PRAGMA page_size={PAGE_SIZE_BYTES}")
                conn.execute("PRAGMA journal_mode=WAL")
                conn.execute(f"PRAGMA synchronous={synchronous}")
                conn.execute("PRAGMA busy_timeout=10000")
                conn.execute("PRAGMA foreign_keys=ON")
                store = cls(conn, p)
                store.migrate()
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
        version = self.conn.execute("PRAGMA user_version").fetchone()[0]
        if version > SCHEMA_VERSION:
            raise StoreError(_newer_schema_message(self.path, version))
        for target in sorted(v for v in MIGRATIONS if v > version):
            # executescript commits any open transaction first, so the script carries its own
            with self.lock:
                try:
                    self.conn.executescript(
                        "BEGIN IMMEDIATE;" + MIGRATIONS[target] + f"PRAGMA user_version={target}; COMMIT;"
                    )
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

    # -- readings ------------------------------------------------------------------------------
    def add_readings(
        self, readings: Iterable[Reading], source: str, origins: list[tuple[str, int | None]] | None = None
    ) -> tuple[int, int, list[Rejection]]:
        """Store readings in one transaction. Returns (stored, exact duplicates, conflicts).

        An exact duplicate (same time, station, quantity and value) is stored once; the same key
        with a different value is a conflict, returned as a Rejection and kept aside. `origins`
        (one (source, line) per reading) lets a conflict name the file and line it came from.
        """
        stored = dup = 0
        conflicts: list[Rejection] = []
        try:
            with self.transaction() as c:
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
                        where = origins[i] if origins is not None else (source, None)
                        conflicts.append(
                            Rejection(
                                where[0],
                                where[1],
                                f"{r.station} {r.quantity} at {r.time_utc.isoformat()} is {r.value:g} here but "
                                f"{old:g} is already stored; the first value is kept",
                                f"{r.time_utc.isoformat()},{r.station},{r.quantity},{r.value}",
                            )
                        )
        except sqlite3.Error as exc:
            if is_damage(exc):
                raise StoreError(damaged_message(self.path, exc)) from None
            raise StoreError(f"{self.path}: cannot store readings: {exc}") from None
        return stored, dup, conflicts

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

    # -- projections, alerts, events ------------------------------------------------------------
    def add_projection(self, p: Projection) -> None:
        self.add_projections([p])

    def add_projections(self, projections: Iterable[Projection]) -> None:
        """Store projections in one transaction (one commit per evaluation, not per block)."""
        rows = [self._projection_row(p) for p in projections]
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
            ms(p.crossings_utc.get("t10")), p.band_c, p.regime, p.method,
            json.dumps({
                "station": p.station, "air_temp_c": p.air_temp_c, "dew_point_c": p.dew_point_c,
                "wet_bulb_c": p.wet_bulb_c, "inversion_c": p.inversion_c,
                "projected_inversion_c": p.projected_inversion_c, "inversion_class": p.inversion_class,
                "wind_speed_m_s": p.wind_speed_m_s, "notes": list(p.notes),
                "crossings_utc": {k: (v.isoformat() if v else None) for k, v in p.crossings_utc.items()},
            }),
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
