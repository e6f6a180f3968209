"""Two processes opening a new store at the same moment (the daemon and the status page both start at
boot): the one that waited for the write lock finds the other's tables made and opens the store, it
never fails with "table readings already exists" (seen once in the two-broker fleet test), nor with
"database is locked" while another one switches the new file to WAL; a store another process keeps
locked is refused with one sentence naming it."""

from __future__ import annotations

import multiprocessing
import sqlite3
import threading
import time
from pathlib import Path

import pytest

from frostwatch.errors import StoreError
from frostwatch.store import db as store_db
from frostwatch.store.db import Store, sql_statements
from frostwatch.store.schema import MIGRATIONS, SCHEMA_VERSION


def test_a_store_opened_while_another_process_creates_it_is_not_created_twice(tmp_path: Path):
    path = tmp_path / "frostwatch.db"
    other = sqlite3.connect(str(path), isolation_level=None, timeout=10.0)
    other.execute("PRAGMA journal_mode=WAL")
    other.execute("BEGIN IMMEDIATE")  # the other process is creating the tables and holds the lock
    result: dict = {}

    def open_store() -> None:
        try:
            result["store"] = Store.open(path)  # reads version 0, then waits for the lock
        except Exception as exc:  # noqa: BLE001 - the failure is the finding
            result["error"] = exc

    opener = threading.Thread(target=open_store)
    opener.start()
    time.sleep(0.5)
    for target in sorted(MIGRATIONS):
        for statement in sql_statements(MIGRATIONS[target]):
            other.execute(statement)
    other.execute(f"PRAGMA user_version={SCHEMA_VERSION}")
    other.execute("COMMIT")
    opener.join(30)
    other.close()

    assert "error" not in result, f"second opener failed: {result.get('error')}"
    store = result["store"]
    assert store.schema_version == SCHEMA_VERSION
    store.close()


PROCESSES = 4
ROUNDS = 60


def _open_each_new_store(folder: str, rounds: int, barrier, results) -> None:
    """One of several processes: for each round, wait until all are ready, then open that round's
    new store (a fresh path each round) at the same moment as the others."""
    for r in range(rounds):
        barrier.wait(timeout=120)
        try:
            Store.open(Path(folder) / f"store-{r}.db").close()
            results.put((r, "ok"))
        except Exception as exc:  # noqa: BLE001 - the failure is the finding
            results.put((r, f"{type(exc).__name__}: {exc}"))


def _schema(path: Path) -> tuple[int, str, list[tuple]]:
    with sqlite3.connect(str(path)) as con:
        version = con.execute("PRAGMA user_version").fetchone()[0]
        mode = con.execute("PRAGMA journal_mode").fetchone()[0]
        objects = con.execute("SELECT type, name, sql FROM sqlite_master ORDER BY type, name").fetchall()
    con.close()
    return version, mode, objects


def test_four_processes_creating_one_new_store_at_once_all_open_it_with_one_schema(tmp_path: Path):
    alone = tmp_path / "alone.db"
    Store.open(alone).close()
    expected = _schema(alone)
    folder = tmp_path / "raced"
    folder.mkdir()
    ctx = multiprocessing.get_context("spawn")  # no fork of pytest's threads
    barrier, results = ctx.Barrier(PROCESSES), ctx.Queue()
    procs = [ctx.Process(target=_open_each_new_store, args=(str(folder), ROUNDS, barrier, results))
             for _ in range(PROCESSES)]
    for p in procs:
        p.start()
    try:
        outcomes = [results.get(timeout=120) for _ in range(PROCESSES * ROUNDS)]
    finally:
        for p in procs:
            p.join(30)
            if p.is_alive():
                p.kill()
    failures = sorted(o for o in outcomes if o[1] != "ok")
    assert not failures, f"{len(failures)} of {len(outcomes)} opens failed, first: {failures[:3]}"
    for r in range(ROUNDS):
        assert _schema(folder / f"store-{r}.db") == expected, f"round {r}"


def test_a_store_another_process_keeps_locked_is_refused_with_one_sentence_naming_it(tmp_path: Path,
                                                                                    monkeypatch):
    path = tmp_path / "frostwatch.db"
    holder = sqlite3.connect(str(path), isolation_level=None)
    holder.execute("BEGIN EXCLUSIVE")  # a new file in rollback mode, held: no one can switch it to WAL
    monkeypatch.setattr(store_db, "OPEN_RETRY_S", 0.3)
    monkeypatch.setattr(sqlite3, "connect", _with_timeout(sqlite3.connect, 0.05))
    try:
        with pytest.raises(StoreError) as err:
            Store.open(path)
    finally:
        holder.execute("ROLLBACK")
        holder.close()
    text = str(err.value)
    assert text.startswith(f"{path}: cannot open the store: ") and "\n" not in text
    assert "another process" in text and "database is locked" in text
    Store.open(path).close()  # once the other process lets go, the store opens


def _with_timeout(connect, timeout_s: float):
    """sqlite3.connect with a short busy timeout, so the refusal comes after a fraction of a second."""
    def short(*args, **kwargs):
        kwargs["timeout"] = timeout_s
        return connect(*args, **kwargs)
    return short


def test_sql_statements_keep_a_trigger_whole():
    script = """
    CREATE TABLE a (x INTEGER);
    -- a comment between statements
    CREATE TRIGGER t AFTER INSERT ON a BEGIN
        UPDATE a SET x = x + 1 WHERE rowid = new.rowid;
        SELECT 1;
    END;
    CREATE INDEX a_x ON a (x);
    """
    parts = sql_statements(script)
    assert len(parts) == 3
    assert parts[1].count(";") == 3 and parts[1].rstrip().endswith("END;")
