"""One alert, one acknowledgement code per person, on every channel and in every repeat.

A protect alert goes to ana by text message (an SMS gateway: a webhook on loopback) and by email
(a real SMTP server on loopback, aiosmtpd); nobody answers, so it repeats after 10 minutes and
escalates to ben after 15. Before, each delivery drew a code of its own: ana's email named one code,
her text message of the same alert another, and each repeat and the escalation brought two more
(six codes in her three texts and three emails). Now her email, her text message and every repeat carry one code,
and the code read in the email, texted back through the gateway from her phone, acknowledges the
alert and stops the repeats. Ben, added by the escalation, has a code of his own (a code names the
person who answered and is taken only from their phone), again the same on both his channels.
"""

from __future__ import annotations

import datetime as dt
import re

from alert_helpers import T0, HttpServer, SmtpServer, make_cfg

from frostwatch.alerts import ackcodes
from frostwatch.alerts.outbox import Outbox
from frostwatch.models import Alert
from frostwatch.store import Store
from frostwatch.store import outbox as ob

PEOPLE = [{"name": "ana", "roles": ["grower"], "email": "ana@example.org", "phone": "+15550101"},
          {"name": "ben", "roles": ["grower"], "email": "ben@example.org", "phone": "+15550102"}]
SMS_CODE = re.compile(r"Ack: reply ([2-9A-HJKMNP-TV-Z]{6})$")
MAIL_CODE = re.compile(r"acknowledge with the code ([2-9A-HJKMNP-TV-Z]{6})")


def test_the_email_and_the_text_message_of_an_alert_carry_one_code_that_acks_it(tmp_path):
    smtp, gateway = SmtpServer().start(), HttpServer(200).start()
    try:
        channels = [
            {"name": "sms", "type": "webhook", "url": f"http://127.0.0.1:{gateway.port}/send", "address": "phone",
             "body_template": '{"to": "{to}", "text": "{message}", "key": "{key}"}'},
            {"name": "mail", "type": "email", "address": "email", "host": "127.0.0.1", "port": smtp.port,
             "tls": "none", "from": "frostwatch@example.org", "timeout_s": 10},
        ]
        alerts = {"repeat_interval_min": 10, "escalate_after_min": 15, "budget_per_hour": 6,
                  "roster": [{"blocks": ["*"], "order": ["ana", "ben"]}], "route": {"default": ["sms", "mail"]}}
        cfg = make_cfg(tmp_path, alerts, PEOPLE, channels)
        store = Store.open(cfg.storage.path)
        box = Outbox(store, cfg)
        a = Alert(time_utc=T0, block="east", level="protect", rank=4, advice="start the wind machines now",
                  message="east: PROTECT: start the wind machines now\nAdvice: start the wind machines now.",
                  key="east/2027-04-14/004-protect",
                  short="east PROTECT: start wind machines now. Air 0.3C now, may reach -0.2C by 02:40.")
        box.submit([a], T0)
        for minute in range(0, 21):
            box.deliver_due(T0 + dt.timedelta(minutes=minute), wait=True)
        texts = {}  # phone -> the codes of its text messages, in order
        for body in gateway.json_bodies():
            texts.setdefault(body["to"], []).append(SMS_CODE.search(body["text"]).group(1))
        mails = {}
        for m in smtp.messages:
            mails.setdefault(m["To"], []).append(MAIL_CODE.search(m.get_payload(decode=True).decode()).group(1))
        assert len(texts["+15550101"]) >= 3 and len(mails["ana@example.org"]) >= 3  # first, repeat, escalation
        (ana_code,) = set(texts["+15550101"]) | set(mails["ana@example.org"])
        (ben_code,) = set(texts["+15550102"]) | set(mails["ben@example.org"])
        assert ana_code != ben_code
        # ana texts back the code she read in the email, from her own phone (the gateway's callback)
        ok, msg = ackcodes.acknowledge_code(store, cfg, f"ok {ana_code.lower()}", T0 + dt.timedelta(minutes=21),
                                            "sms", "gateway", sender="+1 555 0101")
        assert ok, msg
        assert ob.state_of(store, a.key)["state"] == "acked"
        sent = len(gateway.requests)
        for minute in range(21, 60):
            box.deliver_due(T0 + dt.timedelta(minutes=minute), wait=True)
        assert len(gateway.requests) == sent  # the repeats stopped
        box.close()
        store.close()
    finally:
        smtp.stop()
        gateway.stop()
