"""Two processes opening a new store at the same moment (the daemon and the status page both start at
boot): the one that waited for the write lock finds the other's tables made and opens the store, it
never fails with "table readings already exists" (seen once in the two-broker fleet test)."""

from __future__ import annotations

import sqlite3
import threading
import time
from pathlib import Path

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
