"""Fuzzing the whole ingest path through a real Mosquitto (issue 18, item 1): the MQTT client, the
writer, the parser and the store. Each generated poison is published between two good readings;
both good readings must be stored and the poison must cost exactly one rejection row.

Examples: the "ci" profile runs a few dozen (a few seconds); the "long" profile 50 times more:
    HYPOTHESIS_PROFILE=long bash tests/run tests/fuzz/test_fuzz_broker.py
"""

from __future__ import annotations

import dataclasses
import datetime as dt
import itertools
import json
import time

import paho.mqtt.client as paho
import pytest
from hypothesis import HealthCheck, assume, given, settings
from hypothesis import strategies as st

from frostwatch.config import load_config
from frostwatch.ingest.mqtt import IngestSettings, MqttIngest
from frostwatch.ingest.parse import parse_mqtt_message
from frostwatch.models import Reading, Rejection
from frostwatch.store import Store

pytestmark = pytest.mark.broker

EXAMPLES = max(10, settings.default.max_examples // 8)  # ci: 25; long: 1250
QUANTITY_TOPIC = "frostwatch/east-low/air_temperature"
STATION_TOPIC = "frostwatch/east-low"

huge_ints = st.one_of(st.integers(min_value=20, max_value=4200).map(lambda n: 10**n),
                      st.integers(min_value=20, max_value=400).map(lambda n: -(10**n) + 7),
                      st.just(10**400))
extreme_times = st.builds(
    lambda y, mo, d, h, off_min, sign: f"{y:04d}-{mo:02d}-{d:02d}T{h:02d}:00:00{sign}{off_min // 60:02d}:{off_min % 60:02d}",
    st.sampled_from([1, 2, 1000, 1899, 2300, 9998, 9999]), st.integers(1, 12), st.integers(1, 28),
    st.integers(0, 23), st.integers(0, 14 * 60), st.sampled_from(["+", "-"]))
edge_times = st.sampled_from(["0001-01-01T00:00:00+14:00", "9999-12-31T23:59:59-14:00", "0001-01-01T00:00:00-14:00",
                              "9999-12-31T23:59:59+14:00", "2027-02-30T00:00:00Z", "x" * 300, ""])
numbers_text = st.one_of(huge_ints.map(str), st.sampled_from(["1e400", "-1e99999", "1" + "0" * 400 + ".5e-3", "1e-400",
                                                              "9" * 4301, "NaN", "Infinity"]))
json_leaf = st.one_of(st.none(), st.booleans(), st.floats(allow_nan=False, allow_infinity=False), huge_ints,
                      st.integers(), st.text(max_size=20))
json_any = st.recursive(json_leaf, lambda c: st.one_of(st.lists(c, max_size=4),
                                                       st.dictionaries(st.text(max_size=8), c, max_size=4)), max_leaves=12)


@st.composite
def poison(draw) -> tuple[str, bytes]:
    kind = draw(st.integers(0, 5))
    now_iso = dt.datetime.now(dt.UTC).isoformat()
    if kind == 0:  # a number that is no reading, at a sane time
        return QUANTITY_TOPIC, f'{{"time": "{now_iso}", "value": {draw(numbers_text)}}}'.encode()
    if kind == 1:  # an extreme time with any value
        t = draw(st.one_of(extreme_times, edge_times))
        return QUANTITY_TOPIC, json.dumps({"time": t, "value": draw(json_leaf)}).encode()
    if kind == 2:  # the bare form
        return QUANTITY_TOPIC, draw(numbers_text).encode()
    if kind == 3:  # a station message with many keys, some bad
        doc = {"time": draw(st.one_of(st.just(now_iso), extreme_times)),
               "air_temperature": draw(st.one_of(huge_ints, st.just(3.0))),
               **{f"k{i}": draw(json_leaf) for i in range(draw(st.integers(0, 40)))}}
        return STATION_TOPIC, json.dumps(doc).encode()
    if kind == 4:  # any JSON document on either topic
        return draw(st.sampled_from([QUANTITY_TOPIC, STATION_TOPIC])), json.dumps(draw(json_any)).encode()
    return draw(st.sampled_from([QUANTITY_TOPIC, STATION_TOPIC])), draw(st.binary(max_size=300))


@pytest.fixture
def pipeline(mosquitto, demo_config):
    """One broker, one store and one ingest for all the examples of the test (function scope:
    hypothesis runs every example inside one call; each example uses its own times)."""
    cfg = load_config(demo_config)
    cfg = dataclasses.replace(cfg, broker=dataclasses.replace(cfg.broker, port=mosquitto.port, client_id="fuzz-ingest"),
                              # every poison is to cost one row here, not be counted by the hourly limit
                              storage=dataclasses.replace(cfg.storage, rejections_per_source_per_hour=10**9))
    store = Store.open(cfg.storage.path)
    ing = MqttIngest(cfg, store, IngestSettings(batch_delay_s=0.05, stall_idle_s=0.01, status_topic="fwfuzz/status"))
    ing.start()
    pub = paho.Client(paho.CallbackAPIVersion.VERSION2, client_id="fuzz-pub", protocol=paho.MQTTv5)
    pub.connect("127.0.0.1", mosquitto.port)
    pub.loop_start()
    deadline = time.monotonic() + 20
    echo0 = ing.last_echo
    while ing.last_echo <= echo0 and time.monotonic() < deadline:
        ing.heartbeat()
        time.sleep(0.1)
    yield cfg, store, ing, pub
    pub.loop_stop()
    ing.stop()
    store.close()


_seq = itertools.count(1)


def _count(store, sql, args=()):
    with store.lock:
        return store.conn.execute(sql, args).fetchone()[0]


@settings(max_examples=EXAMPLES, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture,
                                                                        HealthCheck.too_slow])
@given(poison())
def test_poison_through_the_broker_costs_one_rejection_and_the_readings_around_it_are_stored(pipeline, msg):
    cfg, store, ing, pub = pipeline
    topic, payload = msg
    now = dt.datetime.now(dt.UTC)
    expected = parse_mqtt_message(topic, payload, cfg.broker.prefix, now, {s.id for s in cfg.stations},
                                  cfg.broker.max_payload_bytes, 600.0, cfg.storage.retention_days * 86400.0)
    assume(any(isinstance(r, Rejection) for r in expected))  # a poison, not a good reading by chance
    good_readings = sum(isinstance(r, Reading) for r in expected)
    k = next(_seq)
    before_readings = _count(store, "SELECT count(*) FROM readings")
    before_rej = _count(store, "SELECT count(*) FROM rejections")
    base = now.replace(microsecond=0) - dt.timedelta(days=1) + dt.timedelta(seconds=3 * k)
    goods = [("frostwatch/river-low/air_temperature", json.dumps({"time": base.isoformat(), "value": 4.0}).encode()),
             ("frostwatch/hill-low/air_temperature", json.dumps({"time": base.isoformat(), "value": 4.5}).encode())]
    infos = [pub.publish(*goods[0], qos=1), pub.publish(topic, payload, qos=1), pub.publish(*goods[1], qos=1)]
    for i in infos:
        i.wait_for_publish(10)

    def done():
        with store.lock:
            n = store.conn.execute("SELECT count(*) FROM readings WHERE time_utc_ms=? AND station IN ('river-low','hill-low')",
                                   (int(base.timestamp() * 1000),)).fetchone()[0]
        return n == 2

    deadline = time.monotonic() + 15
    while not done() and time.monotonic() < deadline:
        time.sleep(0.02)
    assert done(), f"the readings around the poison were not stored: {payload[:120]!r}"
    assert ing.q.empty() and ing.failing_since is None and ing.stats.store_errors == 0
    assert _count(store, "SELECT count(*) FROM rejections") - before_rej == 1
    assert _count(store, "SELECT count(*) FROM readings") - before_readings <= 2 + good_readings
