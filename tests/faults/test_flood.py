"""The cost of bad input is bounded (issue 18, item 3): one rejection row per message, a per-source
hourly limit with a counted summary, rejections kept 30 days, and the shipped broker config's
payload limit refusing huge messages at the door. Real Mosquitto, real daemon, real files."""

from __future__ import annotations

import datetime as dt
import json
import re
import types
from pathlib import Path

import pytest
from fault_helpers import DaemonProc, connect_publisher, publish, query, reading, wait_until, write_config

from frostwatch.config import Broker as BrokerSettings
from frostwatch.config import load_config
from frostwatch.daemon import Core
from frostwatch.ingest.limits import RejectionLimiter
from frostwatch.models import Reading, Rejection
from frostwatch.store import Store

REPO = Path(__file__).resolve().parents[2]
SHIPPED_CONF = REPO / "deploy" / "mosquitto" / "frostwatch.conf"


def _big_station_payload(t: dt.datetime, keys: int = 5000) -> bytes:
    """The issue's attack: a 58.9 KB station message with 5,000 unknown keys."""
    doc = {"time": t.isoformat(), **{f"q{i:04d}": 1 for i in range(keys)}}
    return json.dumps(doc).encode()


def _shipped(setting: str) -> int:
    m = re.search(rf"^{setting}\s+(\d+)", SHIPPED_CONF.read_text(), re.M)
    assert m, f"{setting} missing from {SHIPPED_CONF}"
    return int(m.group(1))


def test_shipped_broker_limits_fit_readings_and_match_the_daemon():
    """Pass: the shipped Mosquitto config refuses payloads over 8 KiB (message_size_limit) and
    packets over 9 KiB, and the daemon's default max_payload_bytes is the same 8 KiB (before: 64 KiB,
    so a 58.9 KB message of 5,000 keys reached the parser)."""
    assert _shipped("message_size_limit") == BrokerSettings().max_payload_bytes == 8192
    assert 8192 <= _shipped("max_packet_size") <= 16384
    assert len(_big_station_payload(dt.datetime(2027, 4, 15, tzinfo=dt.UTC))) > 58_000


@pytest.mark.broker
def test_the_shipped_payload_limit_keeps_huge_messages_from_the_daemon(tmp_path, mosquitto):
    """Pass: a broker running the shipped limit lines drops 30 messages of 58.9 KB before the daemon
    sees them (no rejection row, no log line), and a good reading after them is stored."""
    import socket

    with socket.socket() as s:  # a second broker of the same kind as the fixture's, with the limits
        s.bind(("127.0.0.1", 0))
        port = s.getsockname()[1]
    limits = "".join(line + "\n" for line in SHIPPED_CONF.read_text().splitlines()
                      if line.startswith(("message_size_limit", "max_packet_size")))
    b = type(mosquitto)(tmp_path / "limited", port, extra_conf=limits)
    b.start()
    try:
        cfg = write_config(tmp_path, b.port)
        db = tmp_path / "frostwatch.db"
        d = DaemonProc(cfg)
        d.start()
        flooder = connect_publisher(b.port, "flooder")
        pub = connect_publisher(b.port, "flood-pub")
        try:
            assert wait_until(lambda: "connected to" in d.log_text(), 20)
            t0 = dt.datetime.now(dt.UTC).replace(microsecond=0) - dt.timedelta(minutes=5)
            for _ in range(30):  # the broker disconnects a client sending a packet over max_packet_size
                if flooder.is_connected():
                    flooder.publish("frostwatch/east-low", _big_station_payload(t0), qos=0)
            assert publish(pub, [reading("river-low", t0, 4.0)])
            assert wait_until(lambda: query(db, "SELECT count(*) FROM readings") == [(1,)], 20)
            assert query(db, "SELECT count(*) FROM rejections") == [(0,)]
            assert "q0001" not in d.log_text()
        finally:
            flooder.loop_stop()
            pub.loop_stop()
            d.terminate()
    finally:
        b.kill()


@pytest.mark.broker
def test_a_flood_of_huge_and_bad_messages_costs_one_row_each_up_to_the_hourly_limit(tmp_path, mosquitto):
    """Pass, with a broker that lets everything through (defence in depth): 30 messages of 58.9 KB
    with 5,000 unknown keys cost 30 rejection rows of at most 500 characters of reason and 200 of
    raw text (before: 5,000 rows each), 30 log lines at most; with the hourly limit at 10, 50 small
    bad messages on one topic store 10 rows plus, when the daemon stops, one summary row counting
    the other 40; good readings between them are all stored."""
    cfg = write_config(tmp_path, mosquitto.port,
                       tail="\n[storage]\nrejections_per_source_per_hour = 10\n")
    text = cfg.read_text()
    # the demo's [storage] table is earlier in the file: merge the key into it
    text = text.replace("\n[storage]\nrejections_per_source_per_hour = 10\n", "\n")
    text = text.replace("[storage]\n", "[storage]\nrejections_per_source_per_hour = 10\n", 1)
    cfg.write_text(text)
    db = tmp_path / "frostwatch.db"
    d = DaemonProc(cfg)
    d.start()
    pub = connect_publisher(mosquitto.port, "flood-pub-2")
    try:
        assert wait_until(lambda: "connected to" in d.log_text(), 20)
        t0 = dt.datetime.now(dt.UTC).replace(microsecond=0) - dt.timedelta(minutes=30)
        msgs = []
        for i in range(30):
            msgs.append(("frostwatch/river-low-b", _big_station_payload(t0)))
            msgs.append(reading("river-low", t0 + dt.timedelta(seconds=i), 4.0))
        for i in range(50):
            msgs.append(("frostwatch/hill-low/air_temperature", json.dumps({"time": t0.isoformat(), "value": 99}).encode()))
            msgs.append(reading("east-low", t0 + dt.timedelta(seconds=i), 4.0))
        assert publish(pub, msgs, wait_s=60)
        assert wait_until(lambda: query(db, "SELECT count(*) FROM readings") == [(80,)], 40), d.log_text()[-2000:]
        assert wait_until(lambda: query(db, "SELECT count(*) FROM rejections") == [(20,)], 10), \
            query(db, "SELECT source, count(*) FROM rejections GROUP BY source")
        assert d.terminate() == 0
        rows = query(db, "SELECT source, reason, raw FROM rejections ORDER BY id")
        big = [r for r in rows if r[0] == "mqtt:frostwatch/river-low-b" and "more rejected" not in r[1]]
        assert len(big) == 10 and all(len(r[1]) <= 500 and len(r[2]) <= 200 for r in big)
        summaries = [r for r in rows if "more rejected messages" in r[1]]
        assert {r[0] for r in summaries} == {"mqtt:frostwatch/river-low-b", "mqtt:frostwatch/hill-low/air_temperature"}
        counted = {r[0]: int(r[1].split()[0]) for r in summaries}
        assert counted == {"mqtt:frostwatch/river-low-b": 20, "mqtt:frostwatch/hill-low/air_temperature": 40}
        log_lines = [ln for ln in d.log_text().splitlines() if "rejected mqtt:" in ln]
        assert len(log_lines) <= 22 and max(len(ln) for ln in log_lines) < 1200
    finally:
        pub.loop_stop()
        d.terminate()


def test_limiter_stores_per_hour_per_source_then_one_summary_per_window():
    lim = RejectionLimiter(per_hour=3, max_sources=2)
    rs = [Rejection(f"mqtt:t{i % 3}", None, f"bad {i}", "raw") for i in range(12)]
    kept = lim.admit(rs, 1000.0)
    # t0 and t1 are tracked; t2 goes to the shared bucket once two sources are tracked
    assert len(kept) == 9
    assert lim.due(1000.0 + 3599) == []
    later = lim.due(1000.0 + 3600)
    assert len(later) == 3 and all("1 more rejected messages" in r.reason for r in later)
    assert lim.admit([Rejection("mqtt:t0", None, "x", "r")], 9000.0) != []


def test_housekeeping_keeps_rejections_30_days_and_readings_their_own_retention(demo_config):
    """Pass: the morning housekeeping removes rejections older than storage.rejection_retention_days
    (30 by default; before, they lived as long as readings, 400 days) and keeps readings of the
    same age."""
    cfg = load_config(demo_config)
    assert cfg.storage.rejection_retention_days == 30.0
    now = dt.datetime(2027, 4, 15, 14, tzinfo=dt.UTC)
    with Store.open(cfg.storage.path) as store:
        for days in (29, 31, 60):
            t = now - dt.timedelta(days=days)
            store.add_rejections([Rejection("mqtt:x", None, f"{days} days old", "")], t)
            store.add_readings([Reading(t, "east-low", "air_temperature", 3.0)], "mqtt")
        Core.job_housekeeping(types.SimpleNamespace(cfg=cfg, store=store), now, None)
        assert [r["reason"] for r in store.rejections()] == ["29 days old"]
        assert store.count("readings") == 3
