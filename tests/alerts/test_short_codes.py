"""The short form of every message and the acknowledgement code (issue 13.1).

- GSM-7 (3GPP TS 23.038): the basic set counts one septet, the extension table two, nothing else
  is allowed; look-alikes ("°", dashes, quotes, "±") are replaced.
- Every alert of the demo and of the scenario nights (`replay --json`, each alert's `short`) is at
  most 160 GSM-7 characters and holds the block, the action word, the temperature now, the trigger
  temperature, the by-when time and "Ack: reply CODE" (parts a message has: an all-clear has no
  by-when).
- Webhook (SMS gateway) and command (GSM modem) channels send the short form by default, a
  channel's `form = "long"` the full text; email keeps the full text and adds the code.
- A code acknowledges its alert from a reply through the gateway callback, `frostwatch ack CODE`
  and MQTT; it is one-use, expires, is refused from another contact's phone, and guessing is
  limited (wrong codes from one source, and from all sources, in a window).
"""

from __future__ import annotations

import dataclasses
import datetime as dt
import json
import re
import subprocess
import sys
from pathlib import Path

import pytest
from alert_helpers import HttpServer

from frostwatch.advice import plan_advice
from frostwatch.advice.render import LEVEL_WORD, Notice
from frostwatch.advice.short import BODY_SEPTETS, short_body, short_message
from frostwatch.alerts import ackcodes
from frostwatch.alerts.levels import LEVELS, step_for_level
from frostwatch.alerts.outbox import Outbox
from frostwatch.config import Block
from frostwatch.display import Display
from frostwatch.gsm7 import SMS_SEPTETS, fit, is_gsm7, septets, to_gsm7
from frostwatch.models import Alert, Projection
from frostwatch.store import Store

REPO = Path(__file__).resolve().parents[2]
SAMPLE = REPO / "sample_sensor_logs"
SCENARIOS = SAMPLE / "scenarios"
UTC = dt.UTC
NOW = dt.datetime(2027, 4, 15, 8, 0, tzinfo=UTC)
SUNRISE = dt.datetime(2027, 4, 15, 13, 10, tzinfo=UTC)
CODE_TAIL = re.compile(r" Ack: reply ([2-9A-HJKMNP-TV-Z]{6})$")
TEMP = r"-?\d+(?:\.\d)?[CF]\b"
PEOPLE = [{"name": "ana", "roles": ["grower"], "email": "ana@example.org", "phone": "+1 555 0100"},
          {"name": "ben", "roles": ["grower"], "email": "ben@example.org", "phone": "+15550101"}]


# ---- GSM-7 ----------------------------------------------------------------------------------------


def test_gsm7_counts_the_extension_table_twice_and_refuses_the_rest():
    assert septets("east START: -0.2C") == 17 and septets("[x]€") == 7  # [, ] and € are two each
    with pytest.raises(ValueError, match="°"):
        septets("-0.2 °C")
    assert not is_gsm7("–") and is_gsm7("@£$¥èéùìòÇØøÅåΔ_ΦΓΛΩΠΨΣΘΞÆæßÉ!\"#¤%&'()*+,-./:;<=>?¡ÄÖÑÜ§¿äöñüà")
    assert to_gsm7("-0.2 °C – “ok” ± 1…") == '-0.2 C - "ok" +/- 1...'
    assert fit("one two three four", 12) == "one two..." and septets(fit("x" * 300, 160)) == 160


# ---- every level with every plan (unit) --------------------------------------------------------------


def _block(protection: str) -> Block:
    kw = dict(id="north-orchard-block-12", crop="apple", stage="full bloom", kill_10pct_c=-2.2, kill_90pct_c=-3.9,
              critical_source="test", protection=protection, margin_c=2.0, mobilisation_min=30.0, wind_machines=2)
    if "sprinkler" in protection:
        kw.update(margin_c=1.0, application_rate_mm_h=3.5, area_ha=4.0)
    return Block(**kw)


def _projection(**kw) -> Projection:
    base = dict(time_utc=NOW, block="b1", station="b1-low", air_temp_c=1.0, dew_point_c=-5.0, wet_bulb_c=-1.6,
                predicted_min_c=-3.5, predicted_min_at_utc=SUNRISE, band_c=0.8,
                crossings_utc={"t10_margin": NOW + dt.timedelta(hours=2), "wet_bulb_t10_margin": NOW + dt.timedelta(hours=2)},
                inversion_c=4.0, projected_inversion_c=4.0, inversion_class="strong", wind_speed_m_s=6.0,
                regime="radiation", method="t", sunset_utc=NOW - dt.timedelta(hours=6), sunrise_utc=SUNRISE)
    base.update(kw)
    return Projection(**base)


@pytest.mark.parametrize("unit", ["degC", "degF"])
@pytest.mark.parametrize("protection", ["wind_machine", "overtree_sprinkler", "heaters", "none"])
def test_every_level_short_body_fits_with_any_prefix_and_code(protection, unit):
    d = Display(unit, "America/Los_Angeles")
    b = _block(protection)
    for air, pmin, running in ((1.0, -3.5, None), (-2.5, -3.5, True), (3.0, 0.3, None), (-3.0, -4.0, None)):
        p = _projection(air_temp_c=air, predicted_min_c=pmin)
        plan = plan_advice(p, b, NOW, protection_running=running)
        for level in [*LEVELS, "go-look"]:
            for notice in (Notice.LEVEL, Notice.OUTLOOK, Notice.RESOLVED, Notice.UPDATE, Notice.MONITORED_AGAIN):
                body = short_body(b.id, level, step_for_level(level, plan), plan, d, notice, NOW)
                assert septets(body) <= BODY_SEPTETS and is_gsm7(body), body
                text = short_message(body, "K7QM4X", "ESCALATED: ")
                assert septets(text) <= SMS_SEPTETS and text.endswith(" Ack: reply K7QM4X"), text
                assert b.id in body and LEVEL_WORD[level] in body


# ---- every alert of the demo and of the scenario nights -------------------------------------------


@pytest.fixture(scope="module")
def all_alerts(replayed) -> list[dict]:
    """Every alert of the demo nights (in °C and in °F) and of the scenario nights, from the
    session's shared replays (tests/conftest.py `replayed`)."""
    from importlib import resources

    demo = resources.files("frostwatch.sample_logs").joinpath("demo-farm.toml").read_text(encoding="utf-8")
    nights = [SAMPLE / n for n in (
        "2027-04-14-radiation-frost.csv", "2027-04-15-windy-advective.csv", "2027-04-16-cloudy-safe.csv")]
    runs = [(demo, nights, "demo-farm.toml"),
            (demo.replace('display_unit = "degC"', 'display_unit = "degF"'), nights, "demo-farm.toml")]
    runs += [((SCENARIOS / config).read_text(encoding="utf-8"), [SCENARIOS / log], config)
             for log, config in (("2027-04-20-sprinklers-sunrise.csv", "alder-flat-sprinklers.toml"),
                                 ("2027-04-20-sprinklers-sunrise.csv", "alder-flat-sprinklers-no-reference.toml"),
                                 ("2027-04-21-site-tower.csv", "alder-flat-towers.toml"),
                                 ("2027-04-22-drying-night.csv", "alder-flat-drying.toml"),
                                 ("2027-04-23-inversion-builds.csv", "alder-flat-inversion.toml"))]
    return [a for r in replayed.many(runs) for a in r.doc()["alerts"]]  # side by side, one per core


def test_every_demo_and_scenario_alert_has_a_short_form_of_160_gsm7_characters_with_its_parts(all_alerts):
    assert len(all_alerts) > 30
    words = {lvl: w for lvl, w in LEVEL_WORD.items()}
    for a in all_alerts:
        s = a["short"]
        assert is_gsm7(s) and septets(s) <= 160, (a["key"], s)
        m = CODE_TAIL.search(s)
        assert m, (a["key"], s)  # the acknowledgement code
        assert s.startswith(f"{a['block']} {words[a['level']]}"), (a["key"], s)  # block and action word
        if a["level"] == "go-look":
            assert re.search(r"since \d\d:\d\d", s) and re.search(TEMP, s), s
            continue
        temps = re.findall(TEMP, s)
        # the temperature now and the trigger (one number where the two read the same: "has just passed")
        assert len(temps) >= 2 or "has just passed" in s, (a["key"], s)
        assert " now" in s or "has just passed" in s, (a["key"], s)
        if LEVELS[a["level"]] >= LEVELS["ready"] and "eased" not in s:
            assert re.search(r"(by \d\d:\d\d|now)", s), (a["key"], s)  # by when


# ---- the code, on every acknowledgement path ----------------------------------------------------------


def _box(tmp_path, channels=None):
    """A demo-farm config file with ana and ben on the roster and the given channels, its store, an outbox."""
    from importlib import resources

    from frostwatch.config import load_config

    text = resources.files("frostwatch.sample_logs").joinpath("demo-farm.toml").read_text(encoding="utf-8")
    text = text.split("# ---- Alerts")[0].replace('path = "frostwatch.db"', f'path = "{tmp_path / "fw.db"}"')
    text += '\n[alerts]\n[[alerts.roster]]\nblocks = ["*"]\norder = ["ana", "ben"]\n'
    for c in PEOPLE:
        text += "\n[[contacts]]\n" + "".join(f"{k} = {json.dumps(v)}\n" for k, v in c.items())
    for c in channels or [{"name": "console", "type": "console"}]:
        text += "\n[[channels]]\n" + "".join(f"{k} = {json.dumps(v)}\n" for k, v in c.items())
    path = tmp_path / "farm.toml"
    path.write_text(text, encoding="utf-8")
    cfg = load_config(path)
    store = Store.open(cfg.storage.path)
    return cfg, store, Outbox(store, cfg)


def _alert(now, key="east/2027-04-14/001-act", level="protect"):
    return Alert(time_utc=now, block="east", level=level, rank=LEVELS[level], advice="start the wind machines now",
                 message="east: PROTECT: start the wind machines\nAdvice: start the wind machines now.", key=key,
                 short="east START: start wind machines now. Air 0.7C now, may reach -0.2C by 22:55.")


def test_webhook_sends_the_short_form_by_default_and_the_long_one_on_request(tmp_path):
    sms, web = HttpServer(200).start(), HttpServer(200).start()
    try:
        channels = [{"name": "sms", "type": "webhook", "url": f"http://127.0.0.1:{sms.port}/send", "address": "phone",
                     "body_template": '{"to": "{to}", "text": "{message}", "code": "{code}"}'},
                    {"name": "push", "type": "webhook", "url": f"http://127.0.0.1:{web.port}/send", "form": "long"}]
        cfg, store, box = _box(tmp_path, channels)
        now = dt.datetime.now(UTC)
        box.submit([_alert(now)], now)
        box.deliver_due(now, wait=True)
        (sent,) = sms.json_bodies()
        assert sent["to"] == "+1 555 0100" and septets(sent["text"]) <= 160 and is_gsm7(sent["text"])
        assert sent["text"].endswith(f"Ack: reply {sent['code']}") and ackcodes.looks_like_code(sent["code"])
        (long_form,) = web.json_bodies()
        assert long_form["message"].startswith("east: PROTECT") and "Advice:" in long_form["message"]
        store.close()
    finally:
        sms.stop()
        web.stop()


def test_a_bad_form_is_a_config_error(tmp_path):
    from frostwatch.errors import ConfigError

    with pytest.raises(ConfigError, match="form"):
        _box(tmp_path, [{"name": "sms", "type": "webhook", "url": "http://x.example/", "form": "tiny"}])


def test_command_channel_gets_the_short_form_on_stdin(tmp_path):
    out = tmp_path / "sms.txt"
    cfg, store, box = _box(tmp_path, [{"name": "gsm", "type": "command", "address": "phone",
                                       "argv": ["sh", "-c", f"cat >> '{out}'; echo >> '{out}'"]}])
    now = dt.datetime.now(UTC)
    box.submit([_alert(now)], now)
    box.deliver_due(now, wait=True)
    texts = [t for t in out.read_text().splitlines() if t]
    assert len(texts) == 1 and texts[0].startswith("east START") and CODE_TAIL.search(texts[0])
    store.close()


def _code_of(store, key, recipient="ana"):
    with store.lock:
        return store.conn.execute("SELECT code FROM ack_codes WHERE alert_key=? AND recipient=?", (key, recipient)).fetchone()[0]


def test_a_code_acknowledges_once_by_cli_and_the_state_says_so(tmp_path):
    cfg, store, box = _box(tmp_path)
    now = dt.datetime.now(UTC)
    a = _alert(now)
    box.submit([a], now)
    code = ackcodes.code_for_delivery(store, a.key, "console", "ana", 0, now)
    assert code == ackcodes.code_for_delivery(store, a.key, "console", "ana", 0, now)  # a retry: the same code
    store.close()
    run = lambda *args: subprocess.run([sys.executable, "-m", "frostwatch", "ack", *args, "--config", str(cfg.path)],  # noqa: E731
                                       capture_output=True, text=True, timeout=60)
    p = run(code.lower())
    assert p.returncode == 0 and "acknowledged east/2027-04-14/001-act for ana" in p.stdout, p.stderr
    assert p.stderr == ""  # said once, on stdout (the log line of the same outcome stays out)
    p = run(code)
    assert p.returncode == 2 and "already been used" in p.stderr
    assert len(p.stderr.splitlines()) == 1, p.stderr  # one sentence, not the log line and then the error
    with Store.open(cfg.storage.path) as store:
        rows = store.query("SELECT who, via FROM acks WHERE alert_key=?", [a.key])
    assert [(r["who"], r["via"]) for r in rows] == [("ana", "cli")]


def test_code_limits_expiry_and_the_phone_it_was_sent_to(tmp_path):
    cfg, store, box = _box(tmp_path)
    now = dt.datetime.now(UTC)
    a, b = _alert(now), _alert(now, key="east/2027-04-14/002-critical", level="all-hands")
    box.submit([a, b], now)
    ca = ackcodes.code_for_delivery(store, a.key, "sms", "ana", 0, now)
    cb = ackcodes.code_for_delivery(store, b.key, "sms", "ana", 0, now, ttl_s=60)
    # from another contact's phone: refused (and counted as a guess)
    ok, msg = ackcodes.acknowledge_code(store, cfg, f"ok {ca}", now, "sms", "gw", sender="+15550101")
    assert not ok and "another phone" in msg
    # from ana's own phone, written differently: accepted once
    ok, msg = ackcodes.acknowledge_code(store, cfg, f"On my way {ca.lower()}!", now, "sms", "gw", sender="15550100")
    assert ok, msg
    ok, msg = ackcodes.acknowledge_code(store, cfg, ca, now, "sms", "gw", sender="+15550100")
    assert not ok and "already been used" in msg
    # expired
    ok, msg = ackcodes.acknowledge_code(store, cfg, cb, now + dt.timedelta(minutes=2), "sms", "gw")
    assert not ok and "expired" in msg
    # words are not codes; guessing is limited per source, then for everyone
    assert ackcodes.find_code("thanks, coming") is None and ackcodes.find_code("ok k7qm4x") == "K7QM4X"
    for g in ("2222AA", "3333BB", "4444CC", "5555DD"):
        assert not ackcodes.acknowledge_code(store, cfg, g, now, "sms", "mallory")[0]
    ok, msg = ackcodes.acknowledge_code(store, cfg, "6666EE", now, "sms", "mallory")
    assert not ok and "not a code" in msg
    fresh = ackcodes.code_for_delivery(store, b.key, "sms", "ben", 1, now)
    ok, msg = ackcodes.acknowledge_code(store, cfg, fresh, now, "sms", "mallory")
    assert not ok and "too many wrong codes" in msg  # even a right code, from that source, for a while
    ok, msg = ackcodes.acknowledge_code(store, cfg, fresh, now, "sms", "ben-phone", sender="+15550101")
    assert ok, msg  # another source is not locked out by one guesser
    with store.lock:
        (n,) = store.conn.execute("SELECT count(*) FROM events WHERE kind='ack' AND subject='refused-code'").fetchone()
    assert n == 6
    store.close()


def test_all_sources_together_are_limited_per_hour(tmp_path):
    cfg, store, box = _box(tmp_path)
    now = dt.datetime.now(UTC)
    a = _alert(now)
    box.submit([a], now)
    code = ackcodes.code_for_delivery(store, a.key, "sms", "ana", 0, now)
    for i in range(ackcodes.GUESSES_PER_HOUR):
        ackcodes.acknowledge_code(store, cfg, "7777FF", now, "sms", f"bot-{i}")
    ok, msg = ackcodes.acknowledge_code(store, cfg, code, now, "sms", "ana-phone")
    assert not ok and "too many wrong codes" in msg and "link" in msg
    ok, _ = ackcodes.acknowledge_code(store, cfg, code, now + dt.timedelta(hours=1, minutes=1), "sms", "ana-phone")
    assert ok
    store.close()


def test_email_keeps_the_long_form_and_names_the_code():
    from frostwatch.alerts.channels import OutMessage
    from frostwatch.alerts.channels.email import build

    ch = dataclasses.make_dataclass("Ch", ["options"])({"from": "fw@example.org"})
    msg = OutMessage(idem_key="k:0", alert_key="k", seq=0, level="protect", rank=4, block="east", title="east: PROTECT",
                     body="east: PROTECT\nAdvice: start.", short="east START: x. Ack: reply K7QM4X", code="K7QM4X")
    text = build(ch, msg, "ana@example.org").get_content()
    assert "Advice: start." in text and "K7QM4X" in text and "frostwatch ack K7QM4X" in text


def test_a_notice_that_names_itself_is_not_named_twice():
    """Pass: the dusk check's text message reads 'farm CHECK before tonight ...'; a health notice
    keeps its 'farm FIX: ...'. Fails on 'farm CHECK: farm: CHECK before tonight ...' (the live
    trial's message, which then ran out of its 160 characters sooner)."""
    from frostwatch.advice.short import notice_body

    body = notice_body("farm", "check", "farm: CHECK before tonight (2026-12-04): sensor upper-low: no reading in the last 6 h")
    assert body == "farm CHECK before tonight (2026-12-04): sensor upper-low: no reading in the last 6 h", body
    assert notice_body("farm", "fix", "creek-low: silent for 4 min") == "farm FIX: creek-low: silent for 4 min"
