"""The outbox with real servers on loopback: escalation, acknowledgement, tokens, a hung SMTP server.

Timing is checked against an injected clock (the time-window style of Alertmanager's acceptance
tests, reliability.md 6.1); real waiting is bounded and only for the network itself.
"""

from __future__ import annotations

import datetime as dt
import json
import time

import pytest
from alert_helpers import T0, BlackHole, HttpServer, SmtpServer, make_cfg

from frostwatch.alerts import acks
from frostwatch.alerts.outbox import Outbox
from frostwatch.models import Alert
from frostwatch.store import Store
from frostwatch.store import outbox as ob

PEOPLE = [
    {"name": "ana", "roles": ["grower"], "email": "ana@example.org", "phone": "+15550101"},
    {"name": "ben", "roles": ["grower"], "email": "ben@example.org", "phone": "+15550102"},
    {"name": "cal", "roles": ["maintainer"], "email": "cal@example.org"},
]


def act_alert(t=T0, key="east/2027-04-14/003-act", level="protect", rank=4, resolves=None):
    return Alert(time_utc=t, block="east", level=level, rank=rank, advice="start the wind machines",
                 message=f"east: {level.upper()}: start protection\nmore", key=key, resolves=resolves)


def console_cfg(tmp_path, **alerts):
    a = {"repeat_interval_min": 10, "escalate_after_min": 15, "budget_per_hour": 6,
         "roster": [{"blocks": ["*"], "order": ["ana", "ben"]}], **alerts}
    channels = [{"name": "log", "type": "console"},
                {"name": "sms", "type": "command", "argv": ["true"], "address": "phone"}]
    return make_cfg(tmp_path, a, PEOPLE, channels)


def notices(store, key, channel="sms"):
    return [(d["seq"], d["recipient"], d["kind"]) for d in ob.deliveries_for(store, [key]) if d["channel"] == channel]


def test_repeats_and_escalation_follow_the_clock(tmp_path):
    cfg = console_cfg(tmp_path)
    with Store.open(cfg.storage.path) as store:
        box = Outbox(store, cfg)
        a = act_alert()
        assert box.submit([a], T0) == 1
        assert box.submit([a], T0) == 0  # idempotent by key
        for minute in range(0, 41):  # the daemon's worker every minute
            box.deliver_due(T0 + dt.timedelta(minutes=minute), wait=True)
        got = notices(store, a.key)
        # first notice to ana; repeat at 10; at 15 ben joins (escalation); repeats every 10 min after
        assert got[0] == (0, "ana", "alert")
        assert (1, "ana", "repeat") in got
        esc = [g for g in got if g[2] == "escalation"]
        assert {g[1] for g in esc} == {"ana", "ben"}
        times = {d["seq"]: d["updated_utc_ms"] for d in ob.deliveries_for(store, [a.key])}
        t = {s: (ms - int(T0.timestamp() * 1000)) / 60000 for s, ms in times.items()}
        assert 10 <= t[1] < 11 and 15 <= t[2] < 16 and 25 <= t[3] < 26 and 35 <= t[4] < 36
        assert all(d["status"] == "sent" for d in ob.deliveries_for(store, [a.key]))
        box.close()


def test_acknowledgement_stops_repeats_within_one_cycle(tmp_path):
    cfg = console_cfg(tmp_path)
    with Store.open(cfg.storage.path) as store:
        box = Outbox(store, cfg)
        a = act_alert()
        box.submit([a], T0)
        for minute in range(0, 12):
            box.deliver_due(T0 + dt.timedelta(minutes=minute), wait=True)
        before = len(ob.deliveries_for(store, [a.key]))
        assert box.acknowledge(a.key, "ana", "cli", T0 + dt.timedelta(minutes=12))
        for minute in range(12, 90):
            box.deliver_due(T0 + dt.timedelta(minutes=minute), wait=True)
        assert len(ob.deliveries_for(store, [a.key])) == before
        assert ob.state_of(store, a.key)["state"] == "acked"
        assert ob.acks_for(store, [a.key])[0]["who"] == "ana"
        assert not box.acknowledge("east/2027-04-14/999-nope", "ana", "cli", T0)
        box.close()


def test_resolved_goes_once_to_everyone_told(tmp_path):
    cfg = console_cfg(tmp_path)
    with Store.open(cfg.storage.path) as store:
        box = Outbox(store, cfg)
        a = act_alert()
        box.submit([a], T0)
        for minute in range(0, 20):
            box.deliver_due(T0 + dt.timedelta(minutes=minute), wait=True)
        r = act_alert(T0 + dt.timedelta(minutes=20), "east/2027-04-14/004-all-clear", "rest", 0, resolves=a.key)
        box.submit([r, r], T0 + dt.timedelta(minutes=20))
        for minute in range(20, 60):
            box.deliver_due(T0 + dt.timedelta(minutes=minute), wait=True)
        assert sorted(notices(store, r.key)) == [(0, "ana", "resolved"), (0, "ben", "resolved")]
        assert ob.state_of(store, a.key)["state"] == "resolved"
        assert max(s for s, _, _ in notices(store, a.key)) == 2  # no repeats after the resolve
        box.close()


def test_ack_tokens_are_one_use_and_unforgeable(tmp_path):
    cfg = console_cfg(tmp_path, status_url="http://127.0.0.1:8321")
    with Store.open(cfg.storage.path) as store:
        box = Outbox(store, cfg)
        a = act_alert()
        box.submit([a], T0)
        tok = acks.ack_link_token(store, a.key, "ben", issued_utc=T0)
        other = acks.ack_link_token(b"not the install secret, 32 bytes", a.key, "ben", issued_utc=T0)
        body, sig = tok.rsplit(".", 1)
        altered = tok.replace(tok.split(".")[1], acks._b64(json.dumps({"k": "river/x", "n": "00", "r": "x"}).encode()))
        assert acks.acknowledge_token(store, cfg, other, T0)[0] is False
        assert acks.acknowledge_token(store, cfg, altered, T0)[0] is False
        assert acks.acknowledge_token(store, cfg, "garbage", T0)[0] is False
        late = acks.ack_link_token(store, a.key, "ben", issued_utc=T0 - dt.timedelta(days=3))
        ok, why = acks.acknowledge_token(store, cfg, late, T0)
        assert not ok and "expired" in why
        ok, msg = acks.acknowledge_token(store, cfg, tok, T0 + dt.timedelta(minutes=3))
        assert ok, msg
        ok, why = acks.acknowledge_token(store, cfg, tok, T0 + dt.timedelta(minutes=4))
        assert not ok and "already been used" in why
        refused = store.events(T0 - dt.timedelta(days=1), T0 + dt.timedelta(days=1), kind="ack")
        assert len(refused) == 5
        assert [x["who"] for x in ob.acks_for(store, [a.key])] == ["ben"]
        # the link in a message is a working token for that recipient
        url = box.ack_url(a.key, "ana", T0)
        assert url.startswith("http://127.0.0.1:8321/ack/a1.")
        box.close()


@pytest.fixture
def servers():
    smtp = SmtpServer().start()
    http = HttpServer(200).start()
    hole = BlackHole().start()
    yield smtp, http, hole
    smtp.stop()
    http.stop()
    hole.stop()


def test_hung_smtp_does_not_delay_webhook_or_mqtt(tmp_path, servers, mosquitto):
    """Pass: with the email server hanging (a 30 s deadline), the webhook and MQTT alerts are
    delivered while the email attempt is still in flight, so they did not wait for it (an order
    of events, not a wall-clock bound: before, "within 10 s" also held for channels queued behind
    a 3 s email deadline); once the hung server drops the line, the email is a retry and goes out
    when the server answers."""
    import paho.mqtt.client as paho

    smtp, http, hole = servers
    got = []
    sub = paho.Client(paho.CallbackAPIVersion.VERSION2)
    sub.on_message = lambda c, u, m: got.append(json.loads(m.payload))
    sub.connect("127.0.0.1", mosquitto.port)
    sub.subscribe("farm/siren", qos=1)
    sub.loop_start()
    time.sleep(0.3)
    channels = [
        {"name": "mail", "type": "email", "host": "127.0.0.1", "port": hole.port, "tls": "none",
         "from": "frostwatch@example.org", "timeout_s": 30},
        {"name": "sms", "type": "webhook", "url": f"http://127.0.0.1:{http.port}/send", "address": "phone",
         "body_template": '{"to": "{to}", "text": "{title}", "ref": "{idempotency_key}"}', "timeout_s": 3},
        {"name": "siren", "type": "mqtt", "host": "127.0.0.1", "port": mosquitto.port, "topic": "farm/siren",
         "timeout_s": 3},
    ]
    cfg = make_cfg(tmp_path, {"roster": [{"blocks": ["*"], "order": ["ana"]}], "retry_base_s": 1, "retry_cap_s": 2,
                              "degraded_after_failures": 50}, PEOPLE, channels)
    with Store.open(cfg.storage.path) as store:
        box = Outbox(store, cfg)
        a = act_alert()
        box.submit([a], T0)
        box.deliver_due(T0)
        deadline = time.monotonic() + 25  # generous, and still inside the email's 30 s deadline
        while time.monotonic() < deadline and not (http.requests and got):
            time.sleep(0.05)
        mail_now = {d["channel"]: d["status"] for d in ob.deliveries_for(store, [a.key])}["mail"]
        assert http.requests and got, "webhook and MQTT must not wait for the hung SMTP server"
        assert mail_now == "inflight" and not box.wait_idle(0), "the email attempt ended before the others arrived"
        assert http.requests[0]["headers"]["Idempotency-Key"] == f"{a.key}:0"
        assert json.loads(http.requests[0]["body"])["to"] == "+15550101"
        assert got[0]["idempotency_key"] == f"{a.key}:0"
        # email is stuck on the black hole until it drops the line; then the real server answers
        hole.stop()
        assert box.wait_idle(30)
        st = {d["channel"]: d["status"] for d in ob.deliveries_for(store, [a.key])}
        assert st["mail"] == "retry"
        box.ac = box.ac.__class__(**{**box.ac.__dict__, "channels": tuple(
            c if c.name != "mail" else c.__class__(**{**c.__dict__, "options": {**c.options, "port": smtp.port}})
            for c in box.ac.channels)})
        for s in range(1, 30):
            box.deliver_due(T0 + dt.timedelta(seconds=10 * s), wait=True)
            if smtp.messages:
                break
        assert smtp.messages, "email goes out once the server recovers"
        m = smtp.messages[0]
        assert m["Message-ID"] == "<east.2027-04-14.003-act.0@frostwatch.local>"
        assert m["To"] == "ana@example.org"
        box.close()
    sub.loop_stop()
    sub.disconnect()


def test_http_4xx_is_not_retried_5xx_is(tmp_path):
    http = HttpServer([503, 503, 200]).start()
    bad = HttpServer(404).start()
    try:
        channels = [
            {"name": "push", "type": "webhook", "url": f"http://127.0.0.1:{http.port}/p", "timeout_s": 2},
            {"name": "broken", "type": "webhook", "url": f"http://127.0.0.1:{bad.port}/p", "timeout_s": 2},
        ]
        cfg = make_cfg(tmp_path, {"retry_base_s": 1, "retry_cap_s": 1, "degraded_after_failures": 50}, PEOPLE, channels)
        with Store.open(cfg.storage.path) as store:
            box = Outbox(store, cfg)
            a = act_alert()
            box.submit([a], T0)
            for s in range(6):
                box.deliver_due(T0 + dt.timedelta(seconds=2 * s), wait=True)
            d = {x["channel"]: x for x in ob.deliveries_for(store, [a.key]) if x["seq"] == 0}
            assert d["push"]["status"] == "sent" and d["push"]["attempt"] == 3
            assert d["broken"]["status"] == "failed" and d["broken"]["attempt"] == 1
            assert len(bad.requests) == 1
            mine = [r for r in http.requests if r["headers"]["Idempotency-Key"].startswith(a.key)]
            assert len(mine) == 3 and {r["headers"]["Idempotency-Key"] for r in mine} == {f"{a.key}:0"}
            keys = [x["key"] for x in store.alerts(T0 - dt.timedelta(1), T0 + dt.timedelta(1))]
            assert any("channel-broken-misconfigured" in k for k in keys)  # a maintainer is told
            box.close()
    finally:
        http.stop()
        bad.stop()


def test_remote_failure_fires_local_channels_and_queues_a_notice(tmp_path):
    channels = [
        {"name": "push", "type": "webhook", "url": "http://127.0.0.1:9/p", "timeout_s": 1},
        {"name": "log", "type": "console"},
        {"name": "gsm", "type": "command", "argv": ["true"], "address": "phone"},
    ]
    cfg = make_cfg(tmp_path, {"route": {"default": ["push"]}, "retry_base_s": 1, "retry_cap_s": 1,
                              "degraded_after_failures": 2, "roster": [{"blocks": ["*"], "order": ["ana"]}]},
                   PEOPLE, channels)
    with Store.open(cfg.storage.path) as store:
        box = Outbox(store, cfg)
        a = act_alert()
        box.submit([a], T0)
        for s in range(5):
            box.deliver_due(T0 + dt.timedelta(seconds=2 * s), wait=True)
        chans = {(d["channel"], d["status"]) for d in ob.deliveries_for(store, [a.key])}
        assert ("log", "sent") in chans and ("gsm", "sent") in chans  # local channels carried it
        notice = [x for x in store.alerts(T0 - dt.timedelta(1), T0 + dt.timedelta(1)) if "remote-degraded" in x["key"]]
        assert len(notice) == 1
        nd = ob.deliveries_for(store, [notice[0]["key"]])
        assert any(d["channel"] == "push" and d["status"] in ("retry", "pending", "inflight") for d in nd)
        box.close()


def test_health_alert_raises_once_and_recovers_once(tmp_path):
    cfg = console_cfg(tmp_path)
    with Store.open(cfg.storage.path) as store:
        box = Outbox(store, cfg)
        k1 = box.submit_health("sensor east-low silent", "no reading for 12 min", T0)
        assert box.submit_health("sensor east-low silent", "no reading for 14 min", T0) == k1
        k2 = box.submit_health("sensor east-low silent", "recovered (no reading no longer)", T0)
        assert box.submit_health("sensor east-low silent", "recovered (no reading no longer)", T0) == k1
        rows = store.alerts(T0 - dt.timedelta(1), T0 + dt.timedelta(1))
        assert [(r["level"], r["resolves"]) for r in rows] == [("fix", None), ("rest", k1)]
        assert k2 != k1
        u = box.submit_health("no healthy sensor in east", "every sensor silent", T0, urgent=True)
        assert ob.state_of(store, u)["state"] == "firing"  # unmonitored repeats until acknowledged
        box.close()
