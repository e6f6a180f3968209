"""The real daemon publishes its site's state for a fleet view (issue 17, part 1), on a real
Mosquitto: retained per-block states on frostwatch/SITE/state/BLOCK, a heartbeat, "online", and
a last will that says "offline" when the daemon dies. Its own fleet topics are never read as
readings."""

from __future__ import annotations

import datetime as dt
import json
import sqlite3

import pytest
from fleet_helpers import DaemonProc, Recorder, wait_until, write_config

pytestmark = [pytest.mark.broker]

SITE = "cedar-bench-orchard"
ROOT = f"frostwatch/{SITE}"


@pytest.fixture
def site_daemon(tmp_path, mosquitto):
    cfg = write_config(tmp_path, mosquitto.port, "\n[fleet]\nheartbeat_s = 5\n")
    d = DaemonProc(cfg)
    yield d, tmp_path / "frostwatch.db"
    if d.alive():
        d.terminate()


def test_daemon_publishes_retained_states_heartbeat_and_online(site_daemon, mosquitto):
    d, db = site_daemon
    rec = Recorder(mosquitto.port, f"{ROOT}/#")
    try:
        d.start()
        topics = [f"{ROOT}/state/{b}" for b in ("east", "river", "hill")] + [f"{ROOT}/heartbeat", f"{ROOT}/info"]
        assert wait_until(lambda: all(rec.last(t) for t in topics) and rec.last(f"{ROOT}/online") == b"online", 60), \
            d.log_text()[-3000:]
        for b in ("east", "river", "hill"):
            doc = json.loads(rec.last(f"{ROOT}/state/{b}"))
            assert doc["v"] == 1 and doc["site"] == SITE and doc["block"] == b
            assert isinstance(doc["rank"], int) and isinstance(doc["monitored"], bool) and doc["level"]
            # no sensor has reported: never shown as monitored
            assert doc["monitored"] is False and doc["reason"]
        # the heartbeat after the first evaluation names it
        assert wait_until(lambda: json.loads(rec.last(f"{ROOT}/heartbeat"))["evaluated_at"], 20)
        hb = json.loads(rec.last(f"{ROOT}/heartbeat"))
        assert hb["every_s"] == 5 and hb["changed_at"] <= hb["evaluated_at"]
        assert wait_until(lambda: rec.last(f"{ROOT}/info") is not None, 10)
        info = json.loads(rec.last(f"{ROOT}/info"))
        assert info["name"] == "Cedar Bench Orchard" and info["blocks"] == 3
        # no sensor reports in this test: the site says so (the daemon's sensor-health problems)
        assert wait_until(lambda: any("silent" in p for p in json.loads(rec.last(f"{ROOT}/info"))["problems"]), 30)
        # each state is retained: a subscriber arriving later gets all of them at once
        late = Recorder(mosquitto.port, f"{ROOT}/#")
        assert wait_until(lambda: all(late.last(t) for t in topics), 10)
        assert all(r for t, _, r in late.msgs if t in topics)
        late.stop()
    finally:
        rec.stop()
    # the daemon's own fleet topics are neither readings nor rejections
    with sqlite3.connect(db) as con:
        bad = con.execute("SELECT count(*) FROM rejections WHERE source LIKE ?", (f"mqtt:{ROOT}/%",)).fetchone()[0]
    assert bad == 0


def test_killed_daemon_is_marked_offline_by_its_will(site_daemon, mosquitto):
    d, _ = site_daemon
    rec = Recorder(mosquitto.port, f"{ROOT}/online")
    try:
        d.start()
        assert wait_until(lambda: rec.last(f"{ROOT}/online") == b"online", 60), d.log_text()[-3000:]
        d.kill()
        assert wait_until(lambda: rec.last(f"{ROOT}/online") == b"offline", 10), "no last will after kill -9"
        d.start()
        assert wait_until(lambda: rec.last(f"{ROOT}/online") == b"online", 60), d.log_text()[-3000:]
        assert d.terminate() == 0
        assert rec.last(f"{ROOT}/online") == b"offline"  # a clean stop says so too
    finally:
        rec.stop()


def test_publishing_can_be_turned_off(tmp_path, mosquitto):
    cfg = write_config(tmp_path, mosquitto.port, "\n[fleet]\npublish = false\n")
    d = DaemonProc(cfg)
    rec = Recorder(mosquitto.port, "frostwatch/#")
    try:
        d.start()
        assert wait_until(lambda: rec.last("frostwatch/status/online") == b"online", 60), d.log_text()[-3000:]
        assert wait_until(lambda: any(t.startswith("frostwatch/status/blocks/") for t, _, _ in rec.msgs), 60)
        assert not [t for t, _, _ in rec.msgs if t.startswith(ROOT)]
    finally:
        rec.stop()
        d.terminate()


def test_an_acknowledged_alert_is_published_as_acknowledged(tmp_path):
    """acknowledged_by_block reads the store: the latest alert of rank >= 3 per block, acked or not."""
    from frostwatch.config import load_config
    from frostwatch.fleet.uplink import acknowledged_by_block
    from frostwatch.models import Alert
    from frostwatch.store import Store

    cfg = load_config(write_config(tmp_path, 1883))
    now = dt.datetime(2027, 4, 15, 10, 0, tzinfo=dt.UTC)
    store = Store.open(cfg.storage.path)
    try:
        from frostwatch.alerts.outbox import Outbox

        ob = Outbox(store, cfg)
        mk = lambda key, block, level, rank, minutes: Alert(now - dt.timedelta(minutes=minutes), block, level, rank,  # noqa: E731
                                                           "advice", f"{level} {block}", key)
        ob.submit([mk("k-east", "east", "protect", 4, 30), mk("k-river", "river", "wait", 2, 20),
                   mk("k-hill", "hill", "ready", 3, 10)], now - dt.timedelta(minutes=30))
        assert ob.acknowledge("k-east", "maria", "cli", now)
        got = acknowledged_by_block(store, now - dt.timedelta(hours=18), now)
    finally:
        store.close()
    assert got == {"east": True, "river": None, "hill": False}
