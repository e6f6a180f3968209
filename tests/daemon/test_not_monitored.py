"""Never green when blind, through real processes: the status page (`frostwatch status-page`) on an
empty store, on a store whose last reading is 3 h old, and after the daemon is killed with
SIGKILL shows every block NOT MONITORED with the reason, as a grey card with a red edge, never a
green one and never "no alert" (checked in the DOM headless Chromium loads, and by the absence of
the page's green in its screenshots at 412 px and 1280 px, kept in test-artifacts/status-page/).
At night the daemon raises each such block as an `unmonitored` alert of its own and never sends
an all-clear (or "minimum n/a") for a block with no data.

The site is the demo farm moved in longitude so that it is about 01:30 local time whenever the
test runs (daemon_helpers.night_site_config).
"""

from __future__ import annotations

import datetime as dt
import json
import re
import sqlite3
import time

import pytest
from daemon_helpers import (
    DaemonProc,
    StatusPageProc,
    chromium_page,
    connect_publisher,
    crop_history_msgs,
    green_pixels,
    night_site_config,
    publish_all,
    run_cli,
    wait_until,
)

from frostwatch.config import load_config
from frostwatch.models import Reading
from frostwatch.store import Store

pytestmark = pytest.mark.broker

DAEMON = ("night_interval_min = 0.25\nbatch_delay_s = 0.3\nheartbeat_s = 1\nheartbeat_store_s = 1\n"
          "health_interval_s = 5\nlearn_nights = 1\n")
CROP = ("east-low", "river-low", "river-low-b", "hill-low")
PAGE_CACHE_S = 1.0  # the page's cache, 20 s as shipped: the waits below are for the page to see a change
HEARTBEAT_SLACK_S = 4.0  # 15 s as shipped: after the kill, the page waits 2 store intervals (2 s) and this
QUICK_DAEMON = DAEMON.replace("night_interval_min = 0.25", "night_interval_min = 0.05")  # a decision every 3 s


def _rows(db, sql, args=()):
    con = sqlite3.connect(str(db), timeout=10)
    try:
        return con.execute(sql, args).fetchall()
    except sqlite3.OperationalError:
        return []
    finally:
        con.close()


def _assert_blind_page(page: StatusPageProc, tmp_path, name: str, reason: str) -> dict:
    """Every block NOT MONITORED on the page, in its JSON and in Chromium's DOM; never green."""
    doc = json.loads(page.get("status.json"))
    assert [(b["level"], b["rank"], b["monitored"]) for b in doc["blocks"]] == [("go-look", 4, False)] * 3, doc
    for b in doc["blocks"]:
        assert re.search(reason, b["reason"]), b["reason"]
        assert b["headline"].startswith(f"{b['block']}: GO LOOK: NOT MONITORED")
    dom, shots = chromium_page(page.url, tmp_path, name)
    cards = re.findall(r'<section class="card ([^"]*)"[^>]*data-monitored="(\w+)"', dom)
    assert len(cards) == 3 and all(cls == "unmonitored" and m == "false" for cls, m in cards), cards
    assert dom.count('class="big not-monitored">NOT MONITORED') == 3
    assert "no alert" not in dom.lower() and "n/a" not in dom
    assert 'id="summary">NOT MONITORED: east, river, hill' in dom
    for shot in shots:
        assert green_pixels(shot) == 0, f"{shot}: green on a page where nothing is watched"
    return doc


def test_an_empty_store_is_not_monitored_and_the_daemon_says_so_at_night(tmp_path, mosquitto):
    cfg_path = night_site_config(tmp_path, mosquitto.port, DAEMON)
    db = load_config(cfg_path).storage.path
    page = StatusPageProc(cfg_path, cache_s=PAGE_CACHE_S)
    page.start()  # before any daemon: the page opens (and creates) the empty store
    daemon = DaemonProc(cfg_path)
    try:
        doc = _assert_blind_page(page, tmp_path, "empty-store-no-daemon", "never run")
        assert doc["daemon_alive"] is False and doc["data_as_of"] is None
        daemon.start()
        assert wait_until(lambda: len(_rows(db, "SELECT DISTINCT block FROM alerts WHERE level='go-look'")) == 3, 60), \
            daemon.log_text()
        time.sleep(0.5)
        alerts = _rows(db, "SELECT block, level, message FROM alerts")
        assert {(b, lvl) for b, lvl, _ in alerts if b != "farm"} == {(b, "go-look") for b in ("east", "river", "hill")}
        assert not [m for _, lvl, m in alerts if lvl == "rest"]  # never an all-clear for a block with no data
        for _, _, message in alerts:
            assert "n/a" not in message
        east = next(m for b, lvl, m in alerts if b == "east")
        assert east.startswith("east: GO LOOK: NOT MONITORED since ") and "no reading at all from its crop-height sensor" in east
        # the page keeps what it computed for PAGE_CACHE_S: wait for it to see the daemon
        assert wait_until(lambda: json.loads(page.get("status.json"))["daemon_alive"], 40, step_s=1.0)
        doc = _assert_blind_page(page, tmp_path, "empty-store-daemon-running", "no reading at all")
        assert doc["daemon_alive"] is True
        p = run_cli("status", "--config", str(cfg_path), "--json")
        assert p.returncode == 0, p.stderr
        assert [(b["block"], b["level"], b["monitored"]) for b in json.loads(p.stdout)["blocks"]] == \
            [(b["block"], b["level"], b["monitored"]) for b in doc["blocks"]]
    finally:
        page.stop()
        if daemon.alive():
            daemon.terminate()


def test_readings_three_hours_old_are_not_monitored_since_the_last_one(tmp_path, mosquitto):
    cfg_path = night_site_config(tmp_path, mosquitto.port, DAEMON)
    cfg = load_config(cfg_path)
    now = dt.datetime.now(dt.UTC).replace(microsecond=0)
    last = now - dt.timedelta(hours=3)
    with Store.open(cfg.storage.path) as store:
        store.add_readings([Reading(last - dt.timedelta(minutes=5 * k), st, "air_temperature", 4.0 + 0.1 * k + 0.01 * j)
                            for k in range(36) for j, st in enumerate(CROP)], "test")
    daemon = DaemonProc(cfg_path)
    page = StatusPageProc(cfg_path, cache_s=PAGE_CACHE_S)
    daemon.start()
    try:
        assert wait_until(lambda: len(_rows(cfg.storage.path, "SELECT DISTINCT block FROM decisions")) == 3, 60)
        page.start()
        local = last.astimezone(cfg.site.tz).strftime("%H:%M")
        doc = _assert_blind_page(page, tmp_path, "readings-3h-old", rf"since {local} \(3\.0 h ago\)")
        assert doc["daemon_alive"] is True
        assert all(b["since"] == last.isoformat().replace("+00:00", "Z") for b in doc["blocks"])
        assert wait_until(lambda: len(_rows(cfg.storage.path, "SELECT block FROM alerts WHERE level='go-look'")) == 3, 30)
        assert not _rows(cfg.storage.path, "SELECT key FROM alerts WHERE level='rest'")
    finally:
        page.stop()
        if daemon.alive():
            daemon.terminate()


@pytest.mark.slow  # the heartbeat must go stale (2 store intervals + HEARTBEAT_SLACK_S)
def test_after_the_daemon_is_killed_the_page_says_it_stopped_and_nothing_is_watched(tmp_path, mosquitto):
    cfg_path = night_site_config(tmp_path, mosquitto.port, QUICK_DAEMON)
    cfg = load_config(cfg_path)
    db = cfg.storage.path
    daemon = DaemonProc(cfg_path)
    page = StatusPageProc(cfg_path, cache_s=PAGE_CACHE_S, heartbeat_slack_s=HEARTBEAT_SLACK_S)
    daemon.start()
    try:
        assert wait_until(lambda: "connected to" in daemon.log_text(), 30), daemon.log_text()
        now = dt.datetime.now(dt.UTC).replace(microsecond=0)
        times = [now - dt.timedelta(minutes=2 * k) for k in range(15, -1, -1)]
        pub = connect_publisher(mosquitto.port)
        publish_all(pub, crop_history_msgs({st: [(t, round(6.0 - 0.05 * i + 0.01 * j, 2)) for i, t in enumerate(times)]
                                            for j, st in enumerate(CROP)}))
        page.start()
        # the daemon evaluates every 3 s here: wait for a decision that saw the readings
        def watched() -> bool:
            return all(b["monitored"] for b in json.loads(page.get("status.json"))["blocks"])

        assert wait_until(watched, 60, step_s=1.0), daemon.log_text()[-2000:]
        monitored = json.loads(page.get("status.json"))
        assert monitored["daemon_alive"] is True
        killed_at = dt.datetime.now(dt.UTC)
        daemon.kill()  # SIGKILL: no goodbye, the heartbeat just stops
        assert wait_until(lambda: not json.loads(page.get("status.json"))["daemon_alive"], 60, step_s=1.0)
        doc = _assert_blind_page(page, tmp_path, "daemon-killed", "daemon is not running: no heartbeat since")
        for b in doc["blocks"]:
            since = dt.datetime.fromisoformat(b["since"].replace("Z", "+00:00"))
            assert killed_at - dt.timedelta(seconds=10) <= since <= killed_at
            assert b["frost_level"] is not None  # the last frost level is kept beside NOT MONITORED
        dom = page.get()
        assert "The frostwatch daemon is NOT RUNNING: no heartbeat since" in dom
        assert len(_rows(db, "SELECT DISTINCT block FROM decisions WHERE monitored = 1")) == 3
    finally:
        page.stop()
        if daemon.alive():
            daemon.terminate()
