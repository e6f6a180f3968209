"""A repeat or escalation of an unacknowledged frost alert says what the daemon decides now.

The demo's frost night runs through the daemon's Core (evaluations every 4 minutes, the
readings committed as they come, decisions stored) with the real outbox delivering after each
evaluation: text messages through a command channel (a GSM modem's script, here one that writes
what it is given to a file) and email to a real SMTP server on loopback (aiosmtpd). Nobody
acknowledges, so protect and all-hands repeat and escalate through the night.

Before, each repeat sent the first notice's words again: "AGAIN 2: east ALL HANDS: ... Air -2.3C
now ..." while the block's stored decision had the air at -4 C. Now a repeat's text message and
email carry the figures of the block's latest stored decision at the moment of the repeat, say
plainly that the alert is not acknowledged ("NOT ACKED: ", "REPEAT n (not acknowledged ..."), and
the level they name is never below the block's.
"""

from __future__ import annotations

import datetime as dt
import re

from alert_helpers import SmtpServer, make_cfg

from frostwatch.alerts.outbox import Outbox
from frostwatch.daemon import Core, daemon_settings
from frostwatch.display import Display
from frostwatch.gsm7 import septets
from frostwatch.ingest.csvlog import read_sensor_log
from frostwatch.pipeline import Evaluator
from frostwatch.store import Store
from frostwatch.store import decisions as stored_decisions

FROST = "2027-04-14-radiation-frost.csv"
PEOPLE = [{"name": "ana", "roles": ["grower"], "email": "ana@example.org", "phone": "+15550101"},
          {"name": "ben", "roles": ["grower"], "email": "ben@example.org", "phone": "+15550102"}]
AIR_NOW = re.compile(r"(?:Air|Wet bulb) (-?\d+\.\d)C now")


def _night_with_repeats(tmp_path, demo_logs, smtp_port: int):
    sms_file = tmp_path / "sms.txt"
    channels = [
        {"name": "sms", "type": "command", "address": "phone",
         "argv": ["sh", "-c", f"printf '%s\\t' \"$1\" \"$2\" >> '{sms_file}'; cat >> '{sms_file}'; echo >> '{sms_file}'",
                  "sh", "{key}", "{to}"]},
        {"name": "mail", "type": "email", "address": "email", "host": "127.0.0.1", "port": smtp_port, "tls": "none",
         "from": "frostwatch@example.org", "timeout_s": 10},
    ]
    alerts = {"repeat_interval_min": 10, "escalate_after_min": 15, "budget_per_hour": 6,
              "roster": [{"blocks": ["*"], "order": ["ana", "ben"]}],
              "route": {"default": ["sms", "mail"]}}
    cfg = make_cfg(tmp_path, alerts, PEOPLE, channels)
    log = next(p for p in demo_logs if p.name == FROST)
    readings, _ = read_sensor_log(log, {s.id for s in cfg.stations})
    readings.sort(key=lambda r: r.time_utc)
    night = Evaluator(cfg).night_at(readings[len(readings) // 2].time_utc)
    store = Store.open(cfg.storage.path)
    box = Outbox(store, cfg)
    core = Core(cfg, daemon_settings(cfg), store, box, clock=lambda: None)
    decided = {}  # (block, instant) -> the latest stored decision then
    t = (night.sunset_utc - dt.timedelta(hours=1)).replace(second=0, microsecond=0)
    i = 0
    while t < night.sunrise_utc:
        batch = []
        while i < len(readings) and readings[i].time_utc <= t:
            batch.append(readings[i])
            i += 1
        store.add_readings(batch, "mqtt")
        core.readings_committed(batch)
        core.evaluate(t, "scheduled")
        for b, dcs in stored_decisions.latest(store, until_utc=t).items():
            decided[(b, t)] = dcs
        box.deliver_due(t, wait=True)
        t += dt.timedelta(minutes=4)
    box.close()
    texts = []
    for line in sms_file.read_text().splitlines():
        if line.strip():
            key, to, text = line.split("\t", 2)
            texts.append((key, to, text))
    return cfg, store, decided, texts


def _sent_at(store, idem_key: str, recipient: str, channel: str) -> dt.datetime:
    with store.lock:
        (ms,) = store.conn.execute("SELECT updated_utc_ms FROM deliveries WHERE idem_key=? AND recipient=? AND channel=?",
                                   (idem_key, recipient, channel)).fetchone()
    return dt.datetime.fromtimestamp(ms / 1000, dt.UTC)


def test_a_repeat_carries_the_figures_of_the_latest_decision(tmp_path, demo_logs):
    """Pass: every repeat and escalation of the night names the air (or wet bulb) of the block's
    latest stored decision at the moment it was planned, starts with "NOT ACKED: " or
    "ESCALATED: ", fits one text message, and at least one differs from its first notice by
    0.5 C or more (the night cooled under an unanswered alert). Fails before: the repeats carried
    the first notice's "Air ...C now"."""
    smtp = SmtpServer().start()
    try:
        cfg, store, decided, texts = _night_with_repeats(tmp_path, demo_logs, smtp.port)
        mails = smtp.messages
    finally:
        smtp.stop()
    d = Display(cfg.site.display_unit, cfg.site.tz)
    firsts = {k.rsplit(":", 1)[0]: txt for k, _, txt in texts if k.endswith(":0")}
    repeats = [(k, to, txt) for k, to, txt in texts if not k.endswith(":0")]
    assert len(repeats) >= 4, texts
    moved = 0
    for key, to, text in repeats:
        assert septets(text) <= 160, text
        assert text.startswith(("NOT ACKED: ", "ESCALATED: ")), text
        alert_key = key.rsplit(":", 1)[0]
        block = alert_key.split("/")[0]
        sent = _sent_at(store, key, next(p["name"] for p in PEOPLE if p["phone"] == to), "sms")
        planned = max(t for (b, t) in decided if b == block and t <= sent)
        dcs = decided[(block, planned)]
        now_c = dcs.plan.trigger_now_c
        m = AIR_NOW.search(text)
        assert m, text
        assert m.group(1) == d.plain_temp(now_c)[:-1], (text, now_c, planned)
        # the level the repeat names is the block's (never one below it)
        assert dcs.frost_level.upper().replace("-", " ") in text, (text, dcs.frost_level)
        first = AIR_NOW.search(firsts[alert_key])
        if first and abs(float(first.group(1)) - float(m.group(1))) >= 0.5:
            moved += 1
    assert moved, "no repeat came after the block had cooled by 0.5 C; the night does not test anything"
    # the email of a repeat: the same figures in the long form, with the time they are of
    repeat_mails = [m for m in mails if m["Subject"] and ("REPEAT" in m["Subject"] or "ESCALATED" in m["Subject"])]
    assert repeat_mails
    for m in repeat_mails:
        body = m.get_payload(decode=True).decode()
        assert "not acknowledged" in body.splitlines()[0] and "the block as of" in body.splitlines()[0], body[:300]
    store.close()
