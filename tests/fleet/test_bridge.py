"""Two real Mosquitto brokers, a site and a central one, bridged on loopback with the shipped
template deploy/mosquitto/bridge-fleet.conf (TLS with a CA made here, the site's own login, the
central ACL of deploy/mosquitto/fleet-central.acl). Issue 17, part 3:

- the site's states reach the centre, retained, and `frostwatch fleet` reads them over TLS;
- with the central broker stopped for OUTAGE_S, every state change made meanwhile arrives
  afterwards, in order;
- meanwhile the site's own alert goes out on its local channel (the real daemon's outbox, an MQTT
  siren on the site broker): it never waits on the link;
- a site broker that dies is shown unreachable by its bridge's will at the centre.

OUTAGE_S is 8 s in the suite (8 state changes, one a second, while the bridge retries every 1-2 s;
the centre stays down at least until the site's alert has gone out); the full two minutes by hand:
    FROSTWATCH_TEST_BRIDGE_OUTAGE_S=120 bash tests/run tests/fleet/test_bridge.py
"""

from __future__ import annotations

import datetime as dt
import getpass
import json
import os
import shutil
import subprocess
import time
from pathlib import Path

import pytest
from fleet_helpers import REPO, DaemonProc, Recorder, fleet_json, wait_until, write_config

from frostwatch.fleet.site import iso_utc

pytestmark = [pytest.mark.broker, pytest.mark.slow]

OUTAGE_S = float(os.environ.get("FROSTWATCH_TEST_BRIDGE_OUTAGE_S", "8"))
SITE = "cedar-bench-orchard"
ROOT = f"frostwatch/{SITE}"
PASSWORDS = {SITE: "site-secret-123", "fleet-view": "view-secret-456"}


def make_certs(d: Path) -> Path:
    """A CA and a server certificate for 127.0.0.1, made with the openssl command."""
    exe = shutil.which("openssl")
    if exe is None:
        pytest.fail("openssl is not installed; run the README's test command (bash tests/run), which installs it")
    d.mkdir(parents=True, exist_ok=True)

    def run(*args: str) -> None:
        subprocess.run([exe, *args], check=True, capture_output=True, cwd=d, timeout=60)

    run("req", "-x509", "-newkey", "rsa:2048", "-nodes", "-days", "2", "-subj", "/CN=frostwatch test CA",
        "-keyout", "ca.key", "-out", "ca.crt")
    run("req", "-newkey", "rsa:2048", "-nodes", "-subj", "/CN=127.0.0.1", "-keyout", "server.key", "-out", "server.csr")
    (d / "san.ext").write_text("subjectAltName=IP:127.0.0.1,DNS:localhost\n")
    run("x509", "-req", "-in", "server.csr", "-CA", "ca.crt", "-CAkey", "ca.key", "-CAcreateserial", "-days", "2",
        "-extfile", "san.ext", "-out", "server.crt")
    return d


def central_broker(make_broker, certs: Path):
    """The centre as deploy/mosquitto/fleet-central.conf sets it up, on a free TLS port."""
    b = make_broker("central")
    pw = b.workdir / "fleet.passwd"
    exe = shutil.which("mosquitto_passwd") or "/usr/bin/mosquitto_passwd"
    for user, secret in PASSWORDS.items():
        subprocess.run([exe, "-b", *(["-c"] if not pw.exists() else []), str(pw), user, secret], check=True,
                       capture_output=True, timeout=30)
    acl = b.workdir / "fleet-central.acl"
    shutil.copy(REPO / "deploy" / "mosquitto" / "fleet-central.acl", acl)
    b.conf.write_text(
        f"user {getpass.getuser()}\n"
        f"listener {b.port} 127.0.0.1\n"
        f"certfile {certs / 'server.crt'}\nkeyfile {certs / 'server.key'}\ntls_version tlsv1.2\n"
        f"allow_anonymous false\npassword_file {pw}\nacl_file {acl}\n"
        f"persistence true\npersistence_location {b.workdir / 'data'}/\nautosave_interval 1\n"
        f"log_dest file {b.workdir / 'mosquitto.log'}\nlog_type all\n"
    )
    return b


def site_broker(make_broker, central, certs: Path):
    """The site's broker with the shipped bridge template, its placeholders filled in. Only the
    retry delay is shortened, so the test does not wait up to a minute for the bridge to retry."""
    text = (REPO / "deploy" / "mosquitto" / "bridge-fleet.conf").read_text(encoding="utf-8")
    for old, new in (("SITE_ID", SITE), ("central.example.coop:8883", f"127.0.0.1:{central.port}"),
                     ("/etc/mosquitto/certs/fleet-ca.crt", str(certs / "ca.crt")), ("CHANGE_ME", PASSWORDS[SITE]),
                     ("restart_timeout 10 120", "restart_timeout 1 2")):
        assert old in text, f"the template no longer has {old!r}"
        text = text.replace(old, new)
    return make_broker("site", "log_type all\n" + text)


def site_config(tmp: Path, port: int) -> Path:
    """The demo site on the site broker: the daemon's own state publisher off (the test publishes
    the states itself, to control them), and an MQTT siren on the site broker as an alert channel."""
    cfg = write_config(tmp, port, "outbox_interval_s = 1\n\n[fleet]\npublish = false\n\n"
                       f'[[channels]]\nname = "siren"\ntype = "mqtt"\nhost = "127.0.0.1"\nport = {port}\n'
                       'topic = "siren/shed"\ntimeout_s = 5\n')
    text = cfg.read_text(encoding="utf-8")
    assert 'default = ["console"]' in text
    cfg.write_text(text.replace('default = ["console"]', 'default = ["console", "siren"]'), encoding="utf-8")
    return cfg


def block_state(block: str, step: int, as_of: dt.datetime) -> dict:
    """Step k of a night getting colder: the projection drops 1 degC a step, the level climbs."""
    levels = [("rest", 0), ("wait", 2), ("ready", 3), ("protect", 4), ("all-hands", 5)]
    level, rank = levels[min(step // 2, len(levels) - 1)]
    return {"block": block, "level": level, "rank": rank, "monitored": True, "as_of": as_of,
            "predicted_min_c": 3.0 - step, "band_c": 1.0, "predicted_min_at": as_of + dt.timedelta(hours=4),
            "t10_crossing_at": None, "action": f"step {step}", "acknowledged": None}


@pytest.fixture
def net(tmp_path, make_broker):
    certs = make_certs(tmp_path / "certs")
    central = central_broker(make_broker, certs)
    central.start()
    site = site_broker(make_broker, central, certs)
    site.start()
    pw = tmp_path / "view-pw"
    pw.write_text(PASSWORDS["fleet-view"])
    pw.chmod(0o600)
    return central, site, certs, pw


def test_states_cross_the_bridge_and_survive_an_outage_in_order(net, tmp_path):
    from frostwatch.config import load_config
    from frostwatch.fleet.settings import FleetSettings
    from frostwatch.fleet.uplink import SiteUplink
    from frostwatch.models import Alert
    from frostwatch.store import Store

    central, site, certs, pw = net
    cfg_path = site_config(tmp_path, site.port)
    cfg = load_config(cfg_path)
    daemon = DaemonProc(cfg_path)
    daemon.start()
    uplink = SiteUplink(cfg, FleetSettings(heartbeat_s=5))
    uplink.start()
    view_args = ("--ca-file", str(certs / "ca.crt"), "--username", "fleet-view", "--password-file", str(pw))
    # a recorder at the centre with a persistent session: it misses nothing across the restart
    rec = Recorder(central.port, f"{ROOT}/#", client_id="test-recorder", persistent=True, username="fleet-view",
                   password=PASSWORDS["fleet-view"], ca_file=str(certs / "ca.crt"))
    siren = Recorder(site.port, "siren/#")
    try:
        t0 = dt.datetime.now(dt.UTC).replace(microsecond=0)
        blocks = ("east", "river", "hill")
        uplink.evaluated([block_state(b, 0, t0) for b in blocks])
        uplink.beat(t0, force=True)
        assert wait_until(lambda: all(rec.last(f"{ROOT}/state/{b}") for b in blocks)
                          and rec.last(f"{ROOT}/bridge") == b"1" and rec.last(f"{ROOT}/heartbeat"), 30), \
            (site.workdir / "mosquitto.log").read_text()[-3000:]
        doc = fleet_json(central.port, *view_args)
        (s,) = doc["sites"]
        assert s["site"] == SITE and s["reachable"] is True and s["name"] == "Cedar Bench Orchard"
        assert {b["block"]: b["level"] for b in s["blocks"]} == dict.fromkeys(blocks, "rest")

        # -- the link goes down: the central broker stops --------------------------------------
        central.stop()
        outage_start = time.monotonic()
        # the site's own alert goes out on its local channel meanwhile
        store = Store.open(cfg.storage.path)
        try:
            from frostwatch.alerts.outbox import Outbox

            now = dt.datetime.now(dt.UTC)
            Outbox(store, cfg).submit([Alert(now, "east", "protect", 4, "start the wind machines now",
                                             "east: start the wind machines now", "bridge-test/act-east")], now)
        finally:
            store.close()
        # (the daemon may have sent its own alerts first: at night, blocks with no data yet are
        # `unmonitored`, routed like act)
        def act_on_siren() -> bool:
            return any(json.loads(m[1]).get("level") == "protect" for m in list(siren.msgs))

        assert wait_until(act_on_siren, 30.0), daemon.log_text()[-3000:]  # the centre is still down until it has
        siren_s = time.monotonic() - outage_start
        assert central.proc.poll() is not None, "the alert must have gone out while the centre was down"

        # every step changes east's state; river and hill change on even steps only
        steps = 8
        for k in range(1, steps + 1):
            time.sleep(max(0.0, outage_start + OUTAGE_S * (k - 0.5) / steps - time.monotonic()))
            as_of = dt.datetime.now(dt.UTC)
            states = [block_state("east", k, as_of)] + [block_state(b, k - k % 2, as_of) for b in ("river", "hill")]
            uplink.evaluated(states)
            uplink.beat(as_of, force=True)
        time.sleep(max(0.0, outage_start + OUTAGE_S - time.monotonic()))
        assert central.proc.poll() is not None
        outage_s = time.monotonic() - outage_start

        # -- the link returns ------------------------------------------------------------------
        central.start()
        coldest = 3.0 - steps
        count = {"n": -1, "since": time.monotonic()}

        def drained() -> bool:
            """The newest state has arrived last and nothing more came for 2 s."""
            east = rec.payloads(f"{ROOT}/state/east")
            if len(east) != count["n"]:
                count["n"], count["since"] = len(east), time.monotonic()
            return bool(east) and json.loads(east[-1])["predicted_min_c"] == coldest \
                and time.monotonic() - count["since"] > 2.0

        assert wait_until(drained, 60), (site.workdir / "mosquitto.log").read_text()[-3000:]
        arrivals = [json.loads(p) for p in rec.payloads(f"{ROOT}/state/east")]
        after = [e for e in arrivals if e["as_of"] > iso_utc(t0)]
        newest = after[-1]
        assert newest["predicted_min_c"] == coldest, "the centre must end at the newest state"
        # Mosquitto's bridge re-sends the site's retained states at each reconnection attempt, and
        # delivers the copy made at the final one ahead of the queue (2.0.11): copies of the newest
        # state may come early; apart from them, every change arrives once or more, in order.
        seen: list[dict] = []
        for e in (x for x in after if x != newest):
            if seen and e == seen[-1]:
                continue  # a re-sent copy of the state just before: harmless
            assert e not in seen, f"an older state came after a newer one: {[x['action'] for x in after]}"
            seen.append(e)
        seen.append(newest)
        assert [e["level"] for e in seen][-1] == "all-hands"

        doc = fleet_json(central.port, *view_args)
        (s,) = doc["sites"]
        assert s["reachable"] is True
        b = {x["block"]: x for x in s["blocks"]}
        assert b["east"]["level"] == "all-hands" and b["east"]["predicted_min_c"] == 3.0 - steps
        assert [x["block"] for x in s["blocks"]][0] == "east"  # highest rank first
        print(f"\nbridge outage {outage_s:.0f} s: {len(seen)} east changes after it, in order "
              f"({len(after)} messages with the bridge's re-sent copies); "
              f"the site's alert went out {siren_s:.1f} s into the outage")

        # -- the site's broker dies (power cut): its bridge's will tells the centre ----------------
        site.kill()
        assert wait_until(lambda: rec.last(f"{ROOT}/bridge") == b"0", 30)
        (s,) = fleet_json(central.port, *view_args)["sites"]
        assert s["reachable"] is False and "link" in s["why_unreachable"]
    finally:
        rec.stop()
        siren.stop()
        try:
            uplink.stop()
        except Exception:  # noqa: BLE001 - already stopped
            pass
        daemon.terminate()
