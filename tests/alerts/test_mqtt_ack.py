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
from frostwatch.store import outbox as ob

pytestmark = pytest.mark.broker

PEOPLE = [{"name": "ana", "roles": ["grower"], "email": "ana@example.org"}]


def _wait(pred, timeout_s=30.0):
    deadline = time.monotonic() + timeout_s
    while time.monotonic() < deadline:
        if pred():
            return True
        time.sleep(0.05)
    return bool(pred())


def test_mqtt_ack_takes_only_a_signed_token_or_a_contacts_secret_and_refuses_forgeries_and_replays(
        tmp_path, mosquitto, caplog):
    """Pass (issue 18, item 2), on `{prefix}/ack` through a real Mosquitto: a bare
    {"key", "who"} (the form that acknowledged any alert by its guessable key before), a key with
    a wrong secret, a key with the secret of a contact who has none, a forged token and a
    non-JSON payload are each refused, logged and recorded as "ack" events, and their alerts keep
    firing; a key with ana's own secret acknowledges its alert once and the same message again is
    refused as a replay; a signed token acknowledges its alert once and its replay is refused;
    nothing on the ack topic is stored as a reading or a rejection."""
    secret_file = tmp_path / "ana.ack"
    secret_file.write_text("ana-has-a-long-secret-0123456789\n")
    secret_file.chmod(0o600)
    people = [{"name": "ana", "roles": ["grower"], "email": "ana@example.org", "ack_secret_file": str(secret_file)},
              {"name": "ben", "roles": ["grower"], "email": "ben@example.org"}]
    cfg = make_cfg(tmp_path, {"roster": [{"blocks": ["*"], "order": ["ana", "ben"]}]}, people,
                   [{"name": "console", "type": "console"}])
    cfg = dataclasses.replace(cfg, broker=dataclasses.replace(cfg.broker, port=mosquitto.port, client_id="ack-test"))
    now = dt.datetime.now(dt.UTC)
    with Store.open(cfg.storage.path) as store:
        box = Outbox(store, cfg)
        keys = [f"east/{now.date()}/00{i}-act" for i in range(4)]
        box.submit([Alert(time_utc=now, block=f"b{i}", level="protect", rank=4, advice="start", message=f"act {k}", key=k)
                    for i, k in enumerate(keys)], now)
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
            good = json.dumps({"key": keys[0], "who": "ana", "secret": "ana-has-a-long-secret-0123456789"})
            payloads = [
                json.dumps({"key": keys[2], "who": "mallory"}),                      # guessed key, no secret
                json.dumps({"key": keys[2], "who": "ana", "secret": "wrong-wrong-wrong-wrong"}),
                json.dumps({"key": keys[3], "who": "ben", "secret": "ana-has-a-long-secret-0123456789"}),
                good, good,                                                          # accepted, then a replay
                token, token,                                                        # accepted, then a replay
                forged, "not json",
            ]
            for p in payloads:
                pub.publish(topic, p.encode(), qos=1).wait_for_publish(10)

            def acks_rows():
                with store.lock:
                    return store.conn.execute("SELECT alert_key, who, via FROM acks ORDER BY id").fetchall()

            def refused():
                with store.lock:
                    return store.conn.execute("SELECT detail FROM events WHERE kind='ack' AND subject='refused'").fetchall()

            assert _wait(lambda: len(acks_rows()) >= 2 and len(refused()) >= 7), (acks_rows(), refused())
            time.sleep(0.5)  # nothing else may arrive
        finally:
            pub.loop_stop()
            ing.stop()
            box.close()
        assert sorted(acks_rows()) == [(keys[0], "ana", "mqtt"), (keys[1], "ana", "mqtt")]
        text = " | ".join(r[0] for r in refused())
        assert len(refused()) == 7, text
        assert "without a token or a contact's secret" in text and "wrong secret for 'ana'" in text
        assert "'ben' has no ack secret" in text and "a replay" in text and "already been used" in text
        assert "signature does not match" in text and "neither a token nor JSON" in text
        states = {k: ob.state_of(store, k)["state"] for k in keys}
        assert states == {keys[0]: "acked", keys[1]: "acked", keys[2]: "firing", keys[3]: "firing"}
        assert store.count("readings") == 0 and store.count("rejections") == 0
        assert "acknowledgement refused" in caplog.text
        assert "ana-has-a-long-secret" not in caplog.text  # a secret never reaches the log


def test_mqtt_ack_takes_the_messages_code_once(tmp_path, mosquitto):
    """Pass (issue 13): on `{prefix}/ack` through a real Mosquitto, the acknowledgement code of a
    delivered message, as {"code": ...} or bare, acknowledges its alert once; the same code again
    is refused as used, and an unknown code is refused and counted as a guess."""
    from frostwatch.alerts import ackcodes

    cfg = make_cfg(tmp_path, {"roster": [{"blocks": ["*"], "order": ["ana"]}]}, PEOPLE,
                   [{"name": "console", "type": "console"}])
    cfg = dataclasses.replace(cfg, broker=dataclasses.replace(cfg.broker, port=mosquitto.port, client_id="ack-code"))
    now = dt.datetime.now(dt.UTC)
    with Store.open(cfg.storage.path) as store:
        box = Outbox(store, cfg)
        keys = [f"east/{now.date()}/00{i}-act" for i in range(2)]
        box.submit([Alert(time_utc=now, block=f"b{i}", level="protect", rank=4, advice="start", message=f"act {k}", key=k)
                    for i, k in enumerate(keys)], now)
        box.deliver_due(now, wait=True)
        codes = [store.conn.execute("SELECT code FROM ack_codes WHERE alert_key=?", (k,)).fetchone()[0] for k in keys]
        ing = MqttIngest(cfg, store, IngestSettings(batch_delay_s=0.2, status_topic="fwtest/status"),
                         on_ack=lambda payload, t: acks.acknowledge_mqtt(store, cfg, box, payload, t))
        ing.start()
        pub = paho.Client(paho.CallbackAPIVersion.VERSION2, client_id="ack-code-pub", protocol=paho.MQTTv5)
        try:
            assert _wait(lambda: ing.connected and ing.stats.connects >= 1)
            t_echo = ing.last_echo

            def echoed():
                ing.heartbeat()
                return ing.last_echo > t_echo

            assert _wait(echoed)
            pub.connect("127.0.0.1", mosquitto.port)
            pub.loop_start()
            topic = f"{cfg.broker.prefix.strip('/')}/ack"
            wrong = "ZZZZ22" if "ZZZZ22" not in codes else "ZZZZ33"
            for p in (json.dumps({"code": codes[0]}), json.dumps({"code": codes[0]}), codes[1].lower(), wrong):
                pub.publish(topic, p.encode(), qos=1).wait_for_publish(10)

            def rows():
                with store.lock:
                    return store.conn.execute("SELECT alert_key, who, via FROM acks ORDER BY id").fetchall()

            def refused():
                with store.lock:
                    return store.conn.execute("SELECT subject, detail FROM events WHERE kind='ack'").fetchall()

            assert _wait(lambda: len(rows()) >= 2 and len(refused()) >= 2), (rows(), refused())
            time.sleep(0.5)
        finally:
            pub.loop_stop()
            ing.stop()
            box.close()
        # the console's codes: a broadcast delivery, so the acknowledgement names no one in particular
        assert sorted(rows()) == [(keys[0], "someone", "mqtt"), (keys[1], "someone", "mqtt")]
        subjects = sorted(s for s, _ in refused())
        assert subjects == ["refused", "refused-code"], refused()
        assert ackcodes.looks_like_code(codes[0]) and all(ob.state_of(store, k)["state"] == "acked" for k in keys)
