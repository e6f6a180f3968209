"""A reading near a block's trigger is committed (and acknowledged) at once, not after the long
batch delay that saves the SD card."""

from __future__ import annotations

import dataclasses
import datetime as dt
import json
import time

import paho.mqtt.client as paho
import pytest

from frostwatch.config import load_config
from frostwatch.ingest.mqtt import IngestSettings, MqttIngest
from frostwatch.store import Store

pytestmark = pytest.mark.broker


def test_an_urgent_reading_does_not_wait_for_the_batch_delay(demo_config, tmp_path, mosquitto):
    """Pass: with batch_delay_s = 600 s, a reading the urgency predicate flags is stored within a
    generous 60 s wait (so it did not wait for the 600 s delay), while readings published before
    it, not urgent, ride along in the same commit; the predicate saw parsed readings."""
    cfg = load_config(demo_config)
    cfg = dataclasses.replace(cfg, broker=dataclasses.replace(cfg.broker, port=mosquitto.port, client_id="urgent-test"))
    seen = []

    def urgent(readings):
        seen.extend(readings)
        return any(r.value < 0 for r in readings)

    with Store.open(tmp_path / "u.db") as store:
        ing = MqttIngest(cfg, store, IngestSettings(batch_delay_s=600, urgent_delay_s=0.2, status_topic="fwu/status"),
                         urgent=urgent)
        ing.start()
        pub = paho.Client(paho.CallbackAPIVersion.VERSION2, client_id="urgent-pub", protocol=paho.MQTTv5)
        try:
            deadline = time.monotonic() + 30
            t_echo = ing.last_echo
            while time.monotonic() < deadline and ing.last_echo <= t_echo:  # subscribed
                ing.heartbeat()
                time.sleep(0.1)
            pub.connect("127.0.0.1", mosquitto.port)
            pub.loop_start()
            now = dt.datetime.now(dt.UTC)
            for k, v in enumerate((4.0, 3.5, -0.5)):
                t = (now - dt.timedelta(seconds=10 - k)).isoformat().replace("+00:00", "Z")
                pub.publish("frostwatch/east-low/air_temperature", json.dumps({"time": t, "value": v}), qos=1).wait_for_publish(10)
            deadline = time.monotonic() + 60
            # the writer counts its commit just after the commit itself: wait for both (under load
            # the test could read the rows before the count)
            while time.monotonic() < deadline and (store.count("readings") < 3 or ing.stats.commits < 1):
                time.sleep(0.1)
            assert store.count("readings") == 3
            assert ing.stats.commits >= 1 and any(r.value == -0.5 for r in seen)
        finally:
            pub.loop_stop()
            ing.stop()


def test_the_ingest_client_retries_the_broker_every_1_to_3_s(demo_config, tmp_path):
    """Pass: the paho client the daemon connects with retries a lost broker after 1 s, backing off
    to the configured reconnect_max_s (3 s by default), never paho's default of up to 120 s, which
    would leave readings unstored for two minutes after a broker restart. Read from the client's
    own settings, not timed."""
    cfg = load_config(demo_config)
    with Store.open(tmp_path / "r.db") as store:
        ing = MqttIngest(cfg, store, IngestSettings(status_topic="fwr/status"))
        assert (ing.client._reconnect_min_delay, ing.client._reconnect_max_delay) == (1, 3)
        ing = MqttIngest(cfg, store, IngestSettings(reconnect_max_s=7, status_topic="fwr/status"))
        assert ing.client._reconnect_max_delay == 7
