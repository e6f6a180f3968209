"""What `frostwatch status` tells a grower after the daemon stopped cleanly (SIGTERM: a reboot,
`systemctl stop`, an upgrade): when it stopped, by the farm's clock, and no internal alarms.
Before, the last heartbeat listed "the writer thread is dead" and "the MQTT network thread is
dead" after every clean stop (the threads the stop itself ends), the text said "broker NOT
connected for 0 s" and gave instants as raw UTC ISO strings ("STOPPED at
2026-12-04T13:49:38.090298Z")."""

from __future__ import annotations

import datetime as dt
import json
import re

import pytest
from daemon_helpers import run_cli, wait_until

from frostwatch.config import load_config

pytestmark = pytest.mark.broker


def test_a_clean_stop_reads_plainly(site, mosquitto, daemon_proc):
    """Pass: after SIGTERM the stored heartbeat has no problems, and the text names the stop and
    the decisions by local date and time in the site's zone. Fails on the old final heartbeat
    (two dead threads) or on a raw UTC instant in the text."""
    cfg_path, _db = site
    daemon_proc.start()
    assert wait_until(lambda: "evaluated" in daemon_proc.log_text(), 60), daemon_proc.log_text()
    assert daemon_proc.terminate() == 0
    r = run_cli("status", "--config", str(cfg_path), "--json")
    assert r.returncode == 0, r.stderr
    hb = json.loads(r.stdout)["daemon"]
    assert hb["stopped"] is True
    assert hb["problems"] == [], hb["problems"]
    r = run_cli("status", "--config", str(cfg_path))
    assert r.returncode == 0, r.stderr
    first = r.stdout.splitlines()[0]
    zone = dt.datetime.now(load_config(cfg_path).site.tz).strftime("%Z")
    assert re.match(rf"daemon: STOPPED at \d{{4}}-\d\d-\d\d \d\d:\d\d {zone}; no block is monitored; ", first), first
    assert "dead" not in r.stdout and "NOT connected" not in r.stdout
    assert not re.search(r"\d\dT\d\d:\d\d", r.stdout), r.stdout  # no raw ISO instant anywhere
