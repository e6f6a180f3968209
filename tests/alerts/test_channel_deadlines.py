"""Every channel has a deadline per delivery, and a cut reply is a failure (issue 18, items 4, 5
and 7): a real dripping HTTP server on loopback, a real SMTP server (aiosmtpd) that answers 4xx
then 5xx, and a webhook URL whose api_key must never reach the log or the store."""

from __future__ import annotations

import datetime as dt
import json
import logging
import socket
import threading

import pytest
from aiosmtpd.controller import Controller
from alert_helpers import T0, make_cfg

from frostwatch.alerts.outbox import Outbox
from frostwatch.models import Alert
from frostwatch.store import Store
from frostwatch.store import outbox as ob

PEOPLE = [{"name": "ana", "roles": ["grower", "maintainer"], "email": "ana@example.org", "phone": "+15550101"}]


def _alert(i: int, level: str = "protect") -> Alert:
    return Alert(time_utc=T0, block="east", level=level, rank=4, advice="start the wind machines",
                 message=f"east: PROTECT {i}", key=f"east/2027-04-14/{i:03d}-{level}")


class RawHttp:
    """A loopback HTTP server that answers each connection as `mode` says: "drip" (a valid reply of
    about 260 bytes, one byte every `drip_s`; `cut` is set when the client hangs up first), "cut-header" (the status line and half a header, then close),
    "cut-body" (Content-Length 10, two bytes, close), "bad-header" (a header line without a colon,
    which urllib3 warns about with the whole URL), or "ok"."""

    def __init__(self, mode: str = "ok", drip_s: float = 0.25):
        self.mode, self.drip_s = mode, drip_s
        self.bodies: list[bytes] = []
        self.cut = threading.Event()
        self.sock = socket.socket()
        self.sock.setsockopt(socket.SOL_SOCKET, socket.SO_REUSEADDR, 1)
        self.sock.bind(("127.0.0.1", 0))
        self.sock.listen(20)
        self.port = self.sock.getsockname()[1]
        self._stop = threading.Event()
        threading.Thread(target=self._accept, daemon=True).start()

    def _accept(self):
        self.sock.settimeout(0.2)
        while not self._stop.is_set():
            try:
                c, _ = self.sock.accept()
            except OSError:
                continue
            threading.Thread(target=self._serve, args=(c, self.mode), daemon=True).start()

    def _serve(self, c: socket.socket, mode: str):
        try:
            c.settimeout(10)
            data = b""
            while b"\r\n\r\n" not in data:
                data += c.recv(4096)
            head, _, body = data.partition(b"\r\n\r\n")
            n = int(next((ln.split(b":")[1] for ln in head.split(b"\r\n") if ln.lower().startswith(b"content-length")), b"0"))
            while len(body) < n:
                body += c.recv(4096)
            self.bodies.append(body)
            if mode == "drip":
                reply = b"HTTP/1.1 200 OK\r\nX-Pad: " + b"x" * 200 + b"\r\nContent-Length: 2\r\nConnection: close\r\n\r\nok"
                for b in reply:
                    if self._stop.wait(self.drip_s):
                        return
                    try:
                        c.sendall(bytes([b]))
                    except OSError:
                        self.cut.set()  # the client closed the connection before the reply ended
                        raise
            elif mode == "cut-header":
                c.sendall(b"HTTP/1.1 200 OK\r\nContent-Le")
            elif mode == "cut-body":
                c.sendall(b"HTTP/1.1 200 OK\r\nContent-Length: 10\r\n\r\nok")
            elif mode == "bad-header":
                c.sendall(b"HTTP/1.1 200 OK\r\nX-Broken header without colon\r\nContent-Length: 2\r\n\r\nok")
            else:
                c.sendall(b"HTTP/1.1 200 OK\r\nContent-Length: 2\r\nConnection: close\r\n\r\nok")
        except OSError:
            pass
        finally:
            c.close()

    def stop(self):
        self._stop.set()
        self.sock.close()


def _webhook_cfg(tmp_path, port: int, query: str = "", timeout_s: float = 2):
    channels = [{"name": "sms", "type": "webhook", "url": f"http://127.0.0.1:{port}/send{query}", "address": "phone",
                 "body_template": '{"to": "{to}", "ref": "{idempotency_key}"}', "timeout_s": timeout_s}]
    return make_cfg(tmp_path, {"roster": [{"blocks": ["*"], "order": ["ana"]}], "retry_base_s": 1, "retry_cap_s": 2,
                               "degraded_after_failures": 50}, PEOPLE, channels)


def test_a_dripping_webhook_frees_the_channel_within_its_deadline_and_later_alerts_are_delivered(tmp_path):
    """Pass: the gateway answers one byte every 0.25 s (a whole reply would take over a minute),
    each byte well inside the 2 s read timeout, so only the whole request's deadline can end it;
    with timeout_s = 2 the channel's worker is free again (within the deadline plus the worker's
    2 s grace, waited for generously), the attempt is a retry "no complete answer within 2 s",
    not "sent", and the request's deadline hung up on the gateway long before its reply could
    end (a send merely abandoned by the worker would read on to the end); once the gateway
    answers normally, that alert and one queued after it are both delivered. Before, the
    per-read timeout let the drip hold the channel for as long as it lasted. (The drip was one
    byte every 4 s: the 2 s read timeout alone ended it, and since it fires together with the
    2 s deadline, the machine's load decided which one worded the failure.)"""
    srv = RawHttp("drip", drip_s=0.25)
    cfg = _webhook_cfg(tmp_path, srv.port)
    try:
        with Store.open(cfg.storage.path) as store:
            box = Outbox(store, cfg)
            a = _alert(1)
            box.submit([a], T0)
            box.deliver_due(T0)
            assert box.wait_idle(15), "the dripping gateway still holds the channel"
            (d,) = ob.deliveries_for(store, [a.key])
            assert d["status"] == "retry" and "no complete answer within 2 s" in d["detail"], d
            assert srv.cut.wait(30), "the dripping request was not cut at its deadline"
            srv.mode = "ok"
            b = _alert(2)
            later = T0 + dt.timedelta(minutes=1)
            box.submit([b], later)
            box.deliver_due(later, wait=True)
            st = {x["alert_key"]: x["status"] for x in ob.deliveries_for(store, [a.key, b.key])}
            assert st == {a.key: "sent", b.key: "sent"}, st
            refs = [json.loads(x)["ref"] for x in srv.bodies[1:]]
            assert sorted(refs) == sorted([f"{a.key}:0", f"{b.key}:0"])
            box.close()
    finally:
        srv.stop()


@pytest.mark.parametrize("mode", ["cut-header", "cut-body"])
def test_a_reply_cut_short_is_a_failure_not_sent(tmp_path, mode):
    """Pass: a reply cut in the middle of its headers, or with fewer body bytes than its
    Content-Length, is a retry, never "sent" (before, a reply cut mid-header was "HTTP 200")."""
    srv = RawHttp(mode)
    cfg = _webhook_cfg(tmp_path, srv.port)
    try:
        with Store.open(cfg.storage.path) as store:
            box = Outbox(store, cfg)
            a = _alert(1)
            box.submit([a], T0)
            box.deliver_due(T0, wait=True)
            (d,) = ob.deliveries_for(store, [a.key])
            assert d["status"] == "retry", d
            box.close()
    finally:
        srv.stop()


def test_a_webhook_api_key_never_reaches_the_log_or_the_store(tmp_path, capfd):
    """Pass: with the daemon's logging, a gateway whose reply has a malformed header line (urllib3
    then warns "Failed to parse headers (url=...)" with the whole URL) and a failing gateway leave
    no trace of the URL's api_key in the log output or in any stored delivery detail."""
    from frostwatch.daemon import setup_logging

    secret = "S3CRET-api-key-0123456789"
    srv = RawHttp("bad-header")
    cfg = _webhook_cfg(tmp_path, srv.port, query=f"?api_key={secret}&to=farm")
    root = logging.getLogger()
    saved = root.handlers[:], root.level
    try:
        setup_logging()
        with Store.open(cfg.storage.path) as store:
            box = Outbox(store, cfg)
            box.submit([_alert(1)], T0)
            box.deliver_due(T0, wait=True)
            srv.mode = "cut-header"
            box.submit([_alert(2)], T0)
            box.deliver_due(T0 + dt.timedelta(minutes=5), wait=True)
            logging.getLogger("urllib3.connectionpool").warning("Failed to parse headers (url=%s): %s",
                                                               f"http://127.0.0.1:{srv.port}/send?api_key={secret}", "x")
            with store.lock:
                details = " ".join(r[0] or "" for r in store.conn.execute("SELECT detail FROM deliveries"))
            box.close()
        out, err = capfd.readouterr()
        assert secret not in out + err and secret not in details
        assert "<redacted>" in err
    finally:
        root.handlers[:], _ = saved[0], root.setLevel(saved[1])
        srv.stop()


# ---- SMTP: 4xx then 5xx while the server recovers ----------------------------------------------


class FlakySmtp:
    """aiosmtpd answering DATA with `replies` in turn (the last repeats), then 250 once `ok`."""

    def __init__(self, replies: list[str]):
        self.replies = list(replies)
        self.ok = False
        self.got: list[str] = []
        outer = self

        class H:
            async def handle_DATA(self, server, session, envelope):
                if outer.ok:
                    from email import message_from_bytes

                    outer.got.append(message_from_bytes(envelope.content)["X-Frostwatch-Key"])
                    return "250 OK"
                return outer.replies.pop(0) if len(outer.replies) > 1 else outer.replies[0]

        with socket.socket() as s:
            s.bind(("127.0.0.1", 0))
            self.port = s.getsockname()[1]
        self.controller = Controller(H(), hostname="127.0.0.1", port=self.port)
        self.controller.start()

    def stop(self):
        self.controller.stop()


def _mail_cfg(tmp_path, port: int):
    channels = [{"name": "mail", "type": "email", "host": "127.0.0.1", "port": port, "tls": "none",
                 "from": "frostwatch@example.org", "timeout_s": 5},
                {"name": "console", "type": "console"}]
    return make_cfg(tmp_path, {"roster": [{"blocks": ["*"], "order": ["ana"]}], "retry_base_s": 60, "retry_cap_s": 600,
                               "give_up_after_h": 12, "degraded_after_failures": 500,
                               "repeat_interval_min": 600, "escalate_after_min": 600}, PEOPLE, channels)


def test_smtp_4xx_then_5xx_is_retried_and_every_alert_of_the_window_is_emailed_after_recovery(tmp_path):
    """Pass: the mail server answers 451 and then 554 (transaction failed) for a while; the six
    alerts of that window are retried with backoff (no "misconfigured" notice), and after the
    server recovers all six are emailed. Before, the first 5xx dropped them for good."""
    smtp = FlakySmtp(["451 4.3.0 try again later"] * 3 + ["554 5.3.0 transaction failed"])
    cfg = _mail_cfg(tmp_path, smtp.port)
    try:
        with Store.open(cfg.storage.path) as store:
            box = Outbox(store, cfg)
            alerts = [_alert(i) for i in range(6)]
            box.submit(alerts, T0)
            now = T0
            for _ in range(6):  # an hour of rounds in the bad window
                box.deliver_due(now, wait=True)
                now += dt.timedelta(minutes=10)
            mail = [d for d in ob.deliveries_for(store, [a.key for a in alerts]) if d["channel"] == "mail"]
            assert {d["status"] for d in mail} == {"retry"}, [(d["status"], d["detail"]) for d in mail]
            assert any("554" in d["detail"] for d in mail)
            with store.lock:
                notices = store.conn.execute("SELECT count(*) FROM alerts WHERE key LIKE '%misconfigured%'").fetchone()[0]
            assert notices == 0
            smtp.ok = True
            for _ in range(4):
                now += dt.timedelta(minutes=10)
                box.deliver_due(now, wait=True)
            mail = [d for d in ob.deliveries_for(store, [a.key for a in alerts]) if d["channel"] == "mail"]
            assert {d["status"] for d in mail} == {"sent"}
            assert sorted(smtp.got) == sorted(f"{a.key}:0" for a in alerts)
            box.close()
    finally:
        smtp.stop()


@pytest.mark.parametrize("reply", ["535 5.7.8 authentication credentials invalid", "550 5.1.1 no such user",
                                   "553 5.1.3 bad address syntax"])
def test_smtp_authentication_or_address_errors_are_not_retried_and_raise_the_misconfiguration_notice(tmp_path, reply):
    smtp = FlakySmtp([reply])
    cfg = _mail_cfg(tmp_path, smtp.port)
    try:
        with Store.open(cfg.storage.path) as store:
            box = Outbox(store, cfg)
            a = _alert(1)
            box.submit([a], T0)
            box.deliver_due(T0, wait=True)
            (d,) = [x for x in ob.deliveries_for(store, [a.key]) if x["channel"] == "mail"]
            assert d["status"] == "failed", d
            with store.lock:
                keys = [r[0] for r in store.conn.execute("SELECT key FROM alerts")]
            assert any("misconfigured" in k for k in keys), keys
            box.close()
    finally:
        smtp.stop()


