"""Acknowledgement over MQTT: the ingest subscribes to the ack topic and routes each message to the
outbox (JSON key/who) or to the signed-token check; forged keys and tokens are refused and logged."""

from __future__ import annotations

import dataclasses
import datetime as dt
import json
import time

import paho.mqtt.client as paho
import pytest
from alert_helpers import make_cfg

from frostwatch.alerts import acks
from frostwatch.alerts.outbox import Outbox
from frostwatch.ingest.mqtt import IngestSettings, MqttIngest
from frostwatch.models import Alert
from frostwatch.store import Store

pytestmark = pytest.mark.broker

PEOPLE = [{"name": "ana", "roles": ["grower"], "email": "ana@example.org"}]


def _wait(pred, timeout_s=30.0):
    deadline = time.monotonic() + timeout_s
    while time.monotonic() < deadline:
        if pred():
            return True
        time.sleep(0.05)
    return bool(pred())


def test_acknowledgements_over_mqtt_json_and_token_and_forgeries_refused(tmp_path, mosquitto, caplog):
    """Pass: on `{prefix}/ack` through a real Mosquitto, JSON {"key", "who"} acknowledges that
    alert (via "mqtt", by that person), a signed token acknowledges its alert once, and a forged
    key, a forged token, a reused token and a non-JSON payload are each refused, logged and
    recorded as "ack" events; nothing on the ack topic is stored as a reading or a rejection."""
    cfg = make_cfg(tmp_path, {"roster": [{"blocks": ["*"], "order": ["ana"]}]}, PEOPLE,
                   [{"name": "console", "type": "console"}])
    cfg = dataclasses.replace(cfg, broker=dataclasses.replace(cfg.broker, port=mosquitto.port, client_id="ack-test"))
    now = dt.datetime.now(dt.UTC)
    with Store.open(cfg.storage.path) as store:
        box = Outbox(store, cfg)
        keys = [f"east/{now.date()}/act-{i}" for i in range(2)]
        box.submit([Alert(time_utc=now, block="east", level="act", rank=4, advice="start", message=f"act {k}", key=k)
                    for k in keys], now)
        secret = acks.install_secret(store, cfg)
        token = acks.ack_link_token(secret, keys[1], "ana", issued_utc=now)
        forged = token[:-4] + ("AAAA" if not token.endswith("AAAA") else "BBBB")
        ing = MqttIngest(cfg, store, IngestSettings(batch_delay_s=0.2, status_topic="fwtest/status"),
                         on_ack=lambda payload, t: acks.acknowledge_mqtt(store, cfg, box, payload, t))
        ing.start()
        pub = paho.Client(paho.CallbackAPIVersion.VERSION2, client_id="ack-pub", protocol=paho.MQTTv5)
        try:
            assert _wait(lambda: ing.connected and ing.stats.connects >= 1)
            # subscribed once our own heartbeat comes back (same SUBSCRIBE as the ack topic)
            t_echo = ing.last_echo

            def echoed():
                ing.heartbeat()
                return ing.last_echo > t_echo

            assert _wait(echoed)
            pub.connect("127.0.0.1", mosquitto.port)
            pub.loop_start()
            topic = f"{cfg.broker.prefix.strip('/')}/ack"
            payloads = [json.dumps({"key": keys[0], "who": "ana"}), token, token,
                        json.dumps({"key": "east/2000-01-01/act-forged", "who": "mallory"}), forged, "not json"]
            for p in payloads:
                pub.publish(topic, p.encode(), qos=1).wait_for_publish(10)

            def acks_rows():
                with store.lock:
                    return store.conn.execute("SELECT alert_key, who, via FROM acks ORDER BY id").fetchall()

            def refused():
                with store.lock:
                    return store.conn.execute("SELECT detail FROM events WHERE kind='ack' AND subject='refused'").fetchall()

            assert _wait(lambda: len(acks_rows()) >= 2 and len(refused()) >= 4), (acks_rows(), refused())
        finally:
            pub.loop_stop()
            ing.stop()
            box.close()
        assert acks_rows() == [(keys[0], "ana", "mqtt"), (keys[1], "ana", "mqtt")]
        text = " | ".join(r[0] for r in refused())
        assert "already been used" in text and "act-forged" in text and "signature does not match" in text
        assert "neither a token nor JSON" in text
        assert store.count("readings") == 0 and store.count("rejections") == 0
        assert "acknowledgement refused" in caplog.text
