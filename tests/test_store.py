"""The SQLite store: durable settings, migrations, duplicates kept once, windows by time."""

import datetime as dt
import sqlite3

import pytest

from frostwatch.errors import StoreError
from frostwatch.models import Reading
from frostwatch.store import Store
from frostwatch.store.schema import SCHEMA_VERSION

T0 = dt.datetime(2027, 4, 15, 4, 0, tzinfo=dt.UTC)


def r(minutes: int, station="east-low", quantity="air_temperature", value=1.0) -> Reading:
    return Reading(T0 + dt.timedelta(minutes=minutes), station, quantity, value)


def test_wal_full_sync_and_schema_version(tmp_path):
    with Store.open(tmp_path / "fw.db") as s:
        assert s.conn.execute("PRAGMA journal_mode").fetchone()[0] == "wal"
        assert s.conn.execute("PRAGMA synchronous").fetchone()[0] == 2  # FULL
        assert s.schema_version == SCHEMA_VERSION


def test_write_close_reopen_read(tmp_path):
    """reliability.md finding 12: a write must survive close and reopen (no silent rollback)."""
    p = tmp_path / "fw.db"
    with Store.open(p) as s:
        assert s.add_readings([r(0), r(2)], "t")[0] == 2
    with Store.open(p) as s:
        assert s.count("readings") == 2
        assert s.integrity_ok()


def test_out_of_order_and_duplicates_stored_once(tmp_path):
    with Store.open(tmp_path / "fw.db") as s:
        stored, dups, conflicts = s.add_readings([r(4), r(0), r(2), r(0)], "t")
        assert (stored, dups, conflicts) == (3, 1, [])
        stored, dups, conflicts = s.add_readings([r(2, value=5.0)], "t2")
        assert stored == 0 and len(conflicts) == 1
        assert "5 here but 1 is already stored" in conflicts[0].reason
        win = s.readings_window(T0, T0 + dt.timedelta(minutes=10))
        t, v = win[("east-low", "air_temperature")]
        assert list(v) == [1.0, 1.0, 1.0] and list(t) == sorted(t)


def test_readings_window_reads_only_the_window(tmp_path):
    with Store.open(tmp_path / "fw.db") as s:
        s.add_readings([r(m) for m in range(0, 600, 10)], "t")
        win = s.readings_window(T0 + dt.timedelta(minutes=100), T0 + dt.timedelta(minutes=200))
        assert len(win[("east-low", "air_temperature")][0]) == 11
        plan = " ".join(
            row[3] for row in s.conn.execute(
                "EXPLAIN QUERY PLAN SELECT * FROM readings WHERE time_utc_ms BETWEEN 1 AND 2"
            )
        )
        assert "PRIMARY KEY" in plan or "SEARCH" in plan  # a range seek on the time-first key


def test_a_newer_schema_is_refused_with_a_clear_error(tmp_path):
    p = tmp_path / "fw.db"
    Store.open(p).close()
    c = sqlite3.connect(p)
    c.execute(f"PRAGMA user_version={SCHEMA_VERSION + 5}")
    c.commit()
    c.close()
    with pytest.raises(StoreError, match="newer than frostwatch"):
        Store.open(p)


def test_not_a_database_is_a_store_error(tmp_path):
    p = tmp_path / "fw.db"
    p.write_bytes(b"this is not sqlite" * 100)
    with pytest.raises(StoreError, match="cannot open the store"):
        Store.open(p)
