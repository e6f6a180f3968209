"""Commit faults in the ingest writer (issue 18, item 1), through a real Mosquitto: a batch that
fails for one row is committed row by row, one that fails for one message is committed message
by message (the bad one set aside as a rejection and acknowledged), and a store that cannot
write at all is a named problem after `store_stall_s`, never a silent retry loop."""

from __future__ import annotations

import dataclasses
import datetime as dt
import time

import paho.mqtt.client as paho
import pytest
from fault_helpers import reading

from frostwatch import health
from frostwatch.config import load_config
from frostwatch.ingest.mqtt import IngestSettings, MqttIngest
from frostwatch.store import Store

pytestmark = pytest.mark.broker


def _wait(pred, timeout_s=20.0):
    deadline = time.monotonic() + timeout_s
    while time.monotonic() < deadline:
        if pred():
            return True
        time.sleep(0.05)
    return bool(pred())


@pytest.fixture
def ingest(demo_config, mosquitto):
    cfg = load_config(demo_config)
    cfg = dataclasses.replace(cfg, broker=dataclasses.replace(cfg.broker, port=mosquitto.port, client_id="commit-faults"))
    store = Store.open(cfg.storage.path)
    made = []

    def make(**kw):
        ing = MqttIngest(cfg, store, IngestSettings(batch_delay_s=0.5, status_topic="fwtest/status", **kw))
        made.append(ing)
        ing.start()
        assert _wait(lambda: ing.connected)
        t_echo = ing.last_echo

        def echoed():  # subscribed: our own heartbeat comes back
            ing.heartbeat()
            return ing.last_echo > t_echo

        assert _wait(echoed)
        return ing

    pub = paho.Client(paho.CallbackAPIVersion.VERSION2, client_id="commit-faults-pub", protocol=paho.MQTTv5)
    pub.connect("127.0.0.1", mosquitto.port)
    pub.loop_start()
    yield store, make, pub
    pub.loop_stop()
    for ing in made:
        ing.stop()
    store.close()


def _publish(pub, msgs):
    infos = [pub.publish(t, p, qos=1) for t, p in msgs]
    for i in infos:
        i.wait_for_publish(10)


def _count(store, sql):
    with store.lock:
        return store.conn.execute(sql).fetchone()[0]


T0 = dt.datetime.now(dt.UTC).replace(microsecond=0) - dt.timedelta(hours=1)


def test_a_batch_failing_for_one_row_is_committed_row_by_row(ingest):
    """Pass: a SQLite trigger refuses one row (value 13.37) of a 20-message batch; the other 19
    readings are stored, the refused one is one rejection row saying it could not be stored, every
    message is acknowledged (nothing left in flight) and a later reading is stored."""
    store, make, pub = ingest
    with store.lock:
        store.conn.execute("CREATE TRIGGER fault_row BEFORE INSERT ON readings WHEN NEW.value = 13.37 "
                           "BEGIN SELECT RAISE(ABORT, 'injected fault for one row'); END")
    ing = make()
    msgs = [reading("east-low", T0 + dt.timedelta(seconds=i), 13.37 if i == 7 else 4.0) for i in range(20)]
    _publish(pub, msgs)
    assert _wait(lambda: _count(store, "SELECT count(*) FROM readings") == 19)
    assert _wait(lambda: _count(store, "SELECT count(*) FROM rejections") == 1)
    with store.lock:
        (reason,) = store.conn.execute("SELECT reason FROM rejections").fetchone()
    assert "could not be stored" in reason and "injected fault for one row" in reason
    assert _wait(lambda: ing.stats.acked >= 20 and ing.q.empty())
    _publish(pub, [reading("east-low", T0 + dt.timedelta(minutes=5), 3.0)])
    assert _wait(lambda: _count(store, "SELECT count(*) FROM readings") == 20)
    assert ing.problems() == []


def test_a_batch_failing_for_one_message_is_committed_message_by_message(ingest, monkeypatch):
    """Pass: when storing fails for any reason that is not the store's own (here a TypeError
    whenever one station's reading is in the batch, standing for a bug no rule foresaw), the
    other messages of the batch are stored, the bad message is one rejection row naming the
    error, it is acknowledged, and ingest carries on."""
    store, make, pub = ingest
    orig = Store.add_ingest

    def flaky(self, readings, *a, **k):
        if any(r.station == "hill-low" for r in readings):
            raise TypeError("injected: cannot handle this one")
        return orig(self, readings, *a, **k)

    monkeypatch.setattr(Store, "add_ingest", flaky)
    ing = make()
    msgs = [reading("east-low", T0 + dt.timedelta(seconds=i), 4.0) for i in range(5)]
    msgs.insert(2, reading("hill-low", T0, 4.0))
    _publish(pub, msgs)
    assert _wait(lambda: _count(store, "SELECT count(*) FROM readings") == 5)
    assert _wait(lambda: _count(store, "SELECT count(*) FROM rejections") == 1)
    with store.lock:
        src, reason = store.conn.execute("SELECT source, reason FROM rejections").fetchone()
    assert src == "mqtt:frostwatch/hill-low/air_temperature" and "injected: cannot handle this one" in reason
    assert _wait(lambda: ing.stats.acked >= 6 and ing.q.empty())


def test_a_store_that_cannot_write_is_named_after_the_stall_time_and_nothing_is_lost(ingest):
    """Pass: with every write refused as SQLite refuses it on a full disk, the messages stay
    unacknowledged (nothing stored, nothing rejected), and after `store_stall_s` the ingest's
    problems (what the heartbeat and the watchdog read) say "readings are not being stored" and
    name the full disk, and blame neither the broker nor the sensors; the stations are still
    heard from, so the health rules do not call them silent; once writes work again every
    reading is stored and the problem is gone."""
    store, make, pub = ingest
    with store.lock:
        for table in ("readings", "rejections"):
            store.conn.execute(f"CREATE TRIGGER full_{table} BEFORE INSERT ON {table} "
                               "BEGIN SELECT RAISE(FAIL, 'database or disk is full'); END")
    ing = make(store_stall_s=1.0, heartbeat_s=0.2)
    t_now = dt.datetime.now(dt.UTC)
    msgs = [reading(st, t_now - dt.timedelta(seconds=i), 4.0) for i in range(3) for st in ("east-low", "river-low")]
    _publish(pub, msgs)
    assert _wait(lambda: any("not being stored" in p for p in ing.problems()), 15), ing.problems()
    probs = " | ".join(ing.problems())
    assert "disk is full" in probs and "broker" not in probs and "heartbeat" not in probs
    assert ing.stats.acked == 0 or ing.stats.acked < len(msgs)
    assert _count(store, "SELECT count(*) FROM readings") == 0 and _count(store, "SELECT count(*) FROM rejections") == 0
    cfg = ing.cfg
    st = cfg.station("east-low")
    report = health.assess(cfg, {}, time.time(), {}, health.HealthRules(), dict(ing.heard))
    assert f"{st.id}:silent" not in {p.key for p in report.problems}
    time.sleep(3 * 0.2 + 0.5)  # several heartbeats go unanswered while commits fail: still not the broker's fault
    assert not [p for p in ing.problems() if "broker" in p or "heartbeat" in p]
    with store.lock:
        store.conn.execute("DROP TRIGGER full_readings")
        store.conn.execute("DROP TRIGGER full_rejections")
    assert _wait(lambda: _count(store, "SELECT count(*) FROM readings") == len(msgs))
    assert _wait(lambda: ing.problems() == [])


def test_silence_rule_uses_the_latest_reading_heard_even_when_not_stored(demo_config):
    """Pass (pure): a station with no stored reading, or whose stored readings are old, is
    silent, unless its latest valid reading was heard within the silence limit (it is
    reporting; the store is what failed)."""
    import numpy as np

    cfg = load_config(demo_config)
    st = cfg.station("east-low")
    now = 1_800_000_000.0
    rules = health.HealthRules()
    old = {("east-low", "air_temperature"): (np.array([now - 3600 - 60 * k for k in range(5)][::-1]), np.full(5, 4.0))}
    for series in ({}, old):
        keys = {p.key for p in health.station_problems(st, series, now, 0, rules)}
        assert "east-low:silent" in keys
        keys = {p.key for p in health.station_problems(st, series, now, 0, rules, heard_s=now - 30)}
        assert "east-low:silent" not in keys
        keys = {p.key for p in health.station_problems(st, series, now, 0, rules, heard_s=now - 7200)}
        assert "east-low:silent" in keys
