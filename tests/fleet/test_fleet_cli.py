"""`frostwatch fleet` against a real Mosquitto holding 20 simulated sites (issue 17, part 2):
`--json` lists every site with the right levels (contract shape of DESIGN.md 1.4), a site whose
connection dies or whose heartbeat goes stale is shown unreachable, and the page works on a phone
behind its token."""

from __future__ import annotations

import datetime as dt
import json
import os
import signal
import subprocess
import sys
import urllib.error
import urllib.request
from pathlib import Path

import paho.mqtt.client as paho
import pytest
from fleet_helpers import LEVELS, SimSite, fleet, fleet_json, free_port, wait_until

from frostwatch.fleet import site as fs

sys.path.insert(0, str(Path(__file__).resolve().parent.parent / "reports"))
from reports_helpers import chromium  # noqa: E402

pytestmark = [pytest.mark.broker]
N_SITES = 20


def expected_blocks(i: int) -> dict[str, tuple[str, int]]:
    """Site i's five blocks, each at a level of its own (so every level and order gets tried)."""
    return {f"b{k}": LEVELS[(i + k) % len(LEVELS)] for k in range(5)}


@pytest.fixture
def sites(mosquitto):
    sims = [SimSite(mosquitto.port, f"site-{i:02d}", expected_blocks(i)) for i in range(N_SITES)]
    for s in sims:
        s.publish_all()
    for s in sims:
        s.wait()
    yield sims
    for s in sims:
        try:
            s.stop()
        except Exception:  # noqa: BLE001 - a site the test killed
            pass


def check_contract_shape(doc: dict) -> None:
    """DESIGN.md 1.4: {"sites": [{"site", "last_contact", "reachable", "blocks": [{"block", "level",
    "rank", "monitored", "as_of"}]}]} with those types."""
    assert isinstance(doc["sites"], list)
    for s in doc["sites"]:
        assert isinstance(s["site"], str) and isinstance(s["reachable"], bool)
        assert s["last_contact"] is None or isinstance(s["last_contact"], str)
        for b in s["blocks"]:
            assert isinstance(b["block"], str) and isinstance(b["level"], str)
            assert isinstance(b["rank"], int) and isinstance(b["monitored"], bool) and isinstance(b["as_of"], str)


def test_fleet_json_lists_every_site_with_the_right_levels(sites, mosquitto):
    doc = fleet_json(mosquitto.port)
    check_contract_shape(doc)
    assert doc["settled"] is True  # every retained state was in before it printed
    got = {s["site"]: s for s in doc["sites"]}
    assert sorted(got) == sorted(f"site-{i:02d}" for i in range(N_SITES))
    for i in range(N_SITES):
        s = got[f"site-{i:02d}"]
        assert s["reachable"] is True, s
        assert {b["block"]: (b["level"], b["rank"]) for b in s["blocks"]} == expected_blocks(i)
        ranks = [b["rank"] for b in s["blocks"]]
        assert ranks == sorted(ranks, reverse=True)  # highest first
        assert all(b["monitored"] for b in s["blocks"])
    # every site has a critical block: the order then goes by name
    assert [s["site"] for s in doc["sites"]] == sorted(got)
    assert "oversight" in doc["caution"] and "each site" in doc["caution"]


def test_a_site_whose_connection_dies_is_shown_unreachable(sites, mosquitto):
    sites[7].die()  # no DISCONNECT: the broker sends the site's will
    assert wait_until(lambda: not {s["site"]: s for s in fleet_json(mosquitto.port)["sites"]}["site-07"]["reachable"], 20)
    doc = fleet_json(mosquitto.port)
    s = next(x for x in doc["sites"] if x["site"] == "site-07")
    assert "last will" in s["why_unreachable"] and s["last_contact"]
    assert doc["sites"][0]["site"] == "site-07"  # blind comes first among the critical sites
    assert {b["block"]: b["level"] for b in s["blocks"]} == {k: v[0] for k, v in expected_blocks(7).items()}
    assert sum(1 for x in doc["sites"] if not x["reachable"]) == 1
    text = fleet(mosquitto.port)
    assert text.returncode == 0 and "NOT REACHABLE, NO CONTACT SINCE" in text.stdout and "oversight" in text.stdout


def test_a_site_whose_heartbeat_is_stale_is_unreachable_without_a_will(mosquitto):
    old = dt.datetime.now(dt.UTC) - dt.timedelta(minutes=10)
    s = SimSite(mosquitto.port, "stale-ranch", {"east": ("ready", 3)})
    try:
        s.publish_all(now=old)  # a retained heartbeat from 10 min ago, as after a bridge cut
        s.wait()
        doc = fleet_json(mosquitto.port)
        (site,) = doc["sites"]
        assert site["reachable"] is False and "no heartbeat for 10 min" in site["why_unreachable"]
        assert site["last_contact"] == old.replace(microsecond=0).isoformat().replace("+00:00", "Z")
    finally:
        s.stop()


def test_fahrenheit_keys_and_an_empty_broker(mosquitto):
    doc = fleet_json(mosquitto.port)
    assert doc["sites"] == [] and doc["broker_connected"] is True
    s = SimSite(mosquitto.port, "f-ranch", {"east": ("protect", 4)})
    try:
        s.publish_all()
        s.wait()
        (b,) = fleet_json(mosquitto.port, "--fahrenheit")["sites"][0]["blocks"]
        assert b["predicted_min_f"] == pytest.approx(-2.0 * 9 / 5 + 32) and b["band_f"] == pytest.approx(1.8)
        assert "predicted_min_c" not in b
    finally:
        s.stop()


def test_bad_usage_and_an_absent_broker_are_clear_errors(tmp_path):
    p = subprocess.run([sys.executable, "-m", "frostwatch", "fleet", "--broker", "nohost:port", "--json"],
                       capture_output=True, text=True, timeout=30)
    assert p.returncode == 2 and "--broker: port 'port' is not a number" in p.stderr and p.stdout == ""
    port = free_port()  # nobody listens there
    p = fleet(port, "--json", "--wait", "2")
    assert p.returncode == 1 and f"no answer from the broker at 127.0.0.1:{port} within 2 s" in p.stderr
    assert p.stdout == ""
    pw = tmp_path / "pw"
    pw.write_text("secret")
    pw.chmod(0o644)
    p = fleet(port, "--username", "u", "--password-file", str(pw))
    assert p.returncode == 2 and "readable by group or others; chmod 600" in p.stderr
    p = fleet(port, "--serve", "--bind", "0.0.0.0", "--port", "0")
    assert p.returncode == 2 and "without a token" in p.stderr


@pytest.fixture
def page(sites, mosquitto, tmp_path):
    token = "t0k3n-" + "x" * 20
    tf = tmp_path / "token"
    tf.write_text(token)
    tf.chmod(0o600)  # a secret: readable by its owner only
    port = free_port()
    log = (tmp_path / "page.log").open("wb")
    proc = subprocess.Popen([sys.executable, "-m", "frostwatch", "fleet", "--broker", f"127.0.0.1:{mosquitto.port}",
                             "--serve", "--port", str(port), "--token-file", str(tf), "--tz", "America/Los_Angeles"],
                            stdout=log, stderr=subprocess.STDOUT, env=dict(os.environ, PYTHONUNBUFFERED="1"))

    def get(path: str) -> tuple[int, str]:
        try:
            with urllib.request.urlopen(f"http://127.0.0.1:{port}{path}", timeout=10) as r:
                return r.status, r.read().decode()
        except urllib.error.HTTPError as exc:
            return exc.code, exc.read().decode()
        except OSError:
            return 0, ""

    assert wait_until(lambda: get("/healthz")[0] == 200, 30), (tmp_path / "page.log").read_text()
    yield port, token, get
    proc.send_signal(signal.SIGTERM)
    try:
        proc.wait(10)
    except subprocess.TimeoutExpired:
        proc.kill()
        proc.wait(10)
    log.close()


def test_the_page_needs_its_token_and_shows_every_site(page, sites, tmp_path):
    port, token, get = page
    assert get("/")[0] == 403 and get("/fleet.json")[0] == 403
    sites[3].die()
    assert wait_until(lambda: '"reachable": false' in get(f"/fleet.json?token={token}&site=site-03")[1], 20)
    code, body = get(f"/fleet.json?token={token}")
    doc = json.loads(body)
    check_contract_shape(doc)
    assert code == 200 and len(doc["sites"]) == N_SITES
    dom = chromium(f"http://127.0.0.1:{port}/?token={token}", tmp_path, "fleet-page.png", height=1800)
    assert "For oversight only" in dom and "each site" in dom
    assert dom.count('class="card site') == N_SITES
    assert 'id="site-site-03"' in dom and "NO CONTACT SINCE" in dom and "blind" in dom
    assert "NOT acknowledged" in dom and "crosses T10 at" in dom
    assert dom.index('id="site-site-03"') < dom.index('id="site-site-00"')  # the blind site first


def test_the_table_shows_levels_by_their_words_and_names_each_unreadable_message_by_topic(mosquitto):
    # A site still sending the names before 0.2 reads under the new words (README "Many farms, one
    # view"), as on the page; a message the view cannot read is listed with its topic and reason
    # under its site and at the end of the table, where before the table said nothing of it.
    now = dt.datetime.now(dt.UTC).replace(microsecond=0)
    iso = fs.iso_utc(now)
    msgs = [
        ("frostwatch/old-ranch/state/pear", {"v": 1, "site": "old-ranch", "block": "pear", "level": "act", "rank": 4,
                                             "monitored": True, "as_of": iso, "action": "Start protection now."}),
        ("frostwatch/old-ranch/state/apple", {"v": 2, "site": "old-ranch", "block": "apple", "level": "ready",
                                              "rank": 3, "monitored": True, "as_of": iso}),
        ("frostwatch/old-ranch/info", {"v": 1, "site": "old-ranch", "name": "Old Ranch", "blocks": 2, "problems": []}),
        ("frostwatch/old-ranch/heartbeat", {"v": 1, "time": iso, "every_s": 60}),
    ]
    c = paho.Client(paho.CallbackAPIVersion.VERSION2, client_id="old-ranch", protocol=paho.MQTTv5)
    c.connect("127.0.0.1", mosquitto.port)
    c.loop_start()
    try:
        for topic, doc in msgs:
            c.publish(topic, json.dumps(doc), qos=1, retain=True).wait_for_publish(10)
        c.publish("frostwatch/gw-12/state/battery", b"3.71", qos=1, retain=True).wait_for_publish(10)
    finally:
        c.loop_stop()
        c.disconnect()
    p = fleet(mosquitto.port, "--tz", "UTC")
    assert p.returncode == 0, p.stderr
    out = p.stdout
    assert "pear         PROTECT (rank 4)" in out and " act " not in out
    assert ("  problem: frostwatch/old-ranch/state/apple could not be read: state of old-ranch/apple is version 2; "
            "this frostwatch reads up to 1: upgrade the fleet view") in out
    assert "have sent no state yet" not in out
    assert "2 messages on the fleet topics could not be read (each costs only itself); latest:" in out
    assert "  frostwatch/gw-12/state/battery: state of gw-12/battery is not a JSON object" in out
