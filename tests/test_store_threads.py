"""The store's one connection shared by the daemon's threads (issue 18, item 7): "cannot start a
transaction within a transaction" at start-up, which left a delivery in flight and sent one alert
twice. Two causes, both fixed in frostwatch/store/db.py: reads through sqlite-utils opened a
SAVEPOINT (a transaction) without the store's lock, so another thread's BEGIN IMMEDIATE could land
inside it; and a COMMIT that failed left its transaction open for the next BEGIN."""

from __future__ import annotations

import datetime as dt
import sqlite3
import sys
import threading

import pytest

from frostwatch.models import Alert
from frostwatch.store import Store

T0 = dt.datetime(2027, 4, 15, 9, tzinfo=dt.UTC)


@pytest.fixture
def store(tmp_path):
    s = Store.open(tmp_path / "fw.db")
    yield s
    s.close()


def test_reads_on_one_thread_never_break_transactions_on_another(store):
    """Pass: one thread reads alerts, events, projections and rejections in a tight loop while
    another writes events and alerts; not one write fails (before: "cannot start a transaction
    within a transaction", or "no such savepoint" on the reading side)."""
    store.add_alert(Alert(T0, "east", "protect", 4, "start", "east: ACT", "east/2027-04-14/001-act"))
    errors: list[str] = []
    stop = threading.Event()

    def reader():
        while not stop.is_set():
            try:
                store.alerts(T0 - dt.timedelta(days=1), T0 + dt.timedelta(days=1))
                store.events(T0 - dt.timedelta(days=1), T0 + dt.timedelta(days=1))
                store.projections(T0 - dt.timedelta(days=1), T0 + dt.timedelta(days=1))
                store.rejections()
                store.get_meta("x")
                store.count("alerts")
            except Exception as exc:  # noqa: BLE001 - collected and reported below
                errors.append(f"reader: {type(exc).__name__}: {exc}")

    old = sys.getswitchinterval()
    sys.setswitchinterval(1e-6)  # switch threads as often as possible: the race shows at once
    th = [threading.Thread(target=reader) for _ in range(2)]
    try:
        for t in th:
            t.start()
        for i in range(400):
            try:
                store.add_event(T0, "daemon", "tick", str(i))
                store.set_meta("x", str(i))
            except Exception as exc:  # noqa: BLE001
                errors.append(f"writer: {type(exc).__name__}: {exc}")
    finally:
        stop.set()
        for t in th:
            t.join(10)
        sys.setswitchinterval(old)
    assert errors == [], errors[:5]
    assert store.count("events") == 400


def test_a_commit_that_fails_leaves_no_transaction_open(store):
    """Pass: a COMMIT refused by a deferred foreign key raises, and the connection is out of the
    transaction, so the next write works (before: it failed with "cannot start a transaction
    within a transaction", and so did every write after it)."""
    with store.lock:
        store.conn.execute("CREATE TABLE p (id INTEGER PRIMARY KEY)")
        store.conn.execute("CREATE TABLE c (pid INTEGER REFERENCES p(id) DEFERRABLE INITIALLY DEFERRED)")
    with pytest.raises(sqlite3.IntegrityError):
        with store.transaction() as c:
            c.execute("INSERT INTO c VALUES (99)")  # no p row 99: refused at COMMIT
    assert not store.conn.in_transaction
    store.add_event(T0, "daemon", "after", "a failed commit")
    assert store.count("events") == 1 and store.count("c") == 0
