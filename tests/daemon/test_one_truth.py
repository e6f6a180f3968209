"""One truth through real processes: a running daemon (real broker) decides; the status page
process, `frostwatch status --json`, the alert it sent and `frostwatch report` all show that same
decision, with the same level, projection and advice. Running protection (wind_machine_running 1)
is respected on every screen: no "start the wind machines" while they run.

The site is the demo farm moved in longitude so that it is about 01:30 local time whenever the test
runs. The daemon evaluates at start-up and once more when the cold reading arrives (its scheduled
interval is set far longer than the test); it is then paused (SIGSTOP) so that every screen is
read while that one evaluation is the newest.
"""

from __future__ import annotations

import datetime as dt
import html
import json
import signal
import sqlite3

import pytest
from daemon_helpers import (
    DaemonProc,
    StatusPageProc,
    connect_publisher,
    crop_history_msgs,
    night_site_config,
    publish_all,
    run_cli,
    wait_until,
)

from frostwatch.config import load_config
from frostwatch.display import Display

pytestmark = pytest.mark.broker

DAEMON = ("night_interval_min = 1000\nday_interval_min = 1000\nbatch_delay_s = 0.3\nheartbeat_s = 2\n"
          "heartbeat_store_s = 10\nhealth_interval_s = 5\nlearn_nights = 1\ndebounce_s = 30\n")


def _rows(db, sql, args=()):
    con = sqlite3.connect(str(db), timeout=10)
    try:
        return con.execute(sql, args).fetchall()
    except sqlite3.OperationalError:
        return []
    finally:
        con.close()


def test_page_status_alert_and_report_show_the_same_decision(tmp_path, mosquitto):
    cfg_path = night_site_config(tmp_path, mosquitto.port, DAEMON)
    cfg = load_config(cfg_path)
    db = cfg.storage.path
    d = Display(cfg.site.display_unit, cfg.site.tz)
    daemon = DaemonProc(cfg_path)
    page = StatusPageProc(cfg_path)
    daemon.start()
    try:
        # start-up: the daemon evaluates an empty store (every block not monitored)
        assert wait_until(lambda: len(_rows(db, "SELECT DISTINCT block FROM decisions")) == 3, 60), daemon.log_text()
        now = dt.datetime.now(dt.UTC).replace(microsecond=0)
        times = [now - dt.timedelta(minutes=2 * k) for k in range(20, 0, -1)]
        warm = {st: [(t, round(8.0 - 0.07 * i + 0.01 * j, 2)) for i, t in enumerate(times)]
                for j, st in enumerate(("east-low", "river-low", "river-low-b", "hill-low"))}
        pub = connect_publisher(mosquitto.port)
        publish_all(pub, crop_history_msgs(warm))
        publish_all(pub, crop_history_msgs({"east-low": [(t, 1.0) for t in times]}, quantity="wind_machine_running"))
        # the cold reading comes last: at or below T10 with the wind machines running
        publish_all(pub, crop_history_msgs({"east-low": [(now - dt.timedelta(seconds=5), -2.6)]}))
        crit = "SELECT key, time_utc_ms, level, advice, message FROM alerts WHERE block='east' AND level='all-hands'"
        assert wait_until(lambda: _rows(db, crit), 60), daemon.log_text()
        daemon.proc.send_signal(signal.SIGSTOP)  # freeze it: this evaluation stays the newest
        key, t_ms, level, advice, message = _rows(db, crit)[0]
        alert_time = dt.datetime.fromtimestamp(t_ms / 1000, dt.UTC)

        page.start()
        doc = json.loads(page.get("status.json"))
        body = page.get()
        p = run_cli("status", "--config", str(cfg_path), "--json")
        assert p.returncode == 0, p.stderr
        status = json.loads(p.stdout)
        assert doc["daemon_alive"] is True and status["daemon_alive"] is True

        def without_ages(b: dict) -> dict:  # an input's age is counted at the moment of reading
            return {**b, "inputs": {k: v["at"] for k, v in b["inputs"].items()}}

        east = next(b for b in doc["blocks"] if b["block"] == "east")
        # the page and the command agree
        assert without_ages(east) == without_ages(next(b for b in status["blocks"] if b["block"] == "east"))
        assert (east["level"], east["rank"], east["monitored"]) == ("all-hands", 5, True), json.dumps(east, indent=1)
        assert east["as_of"] == alert_time.isoformat().replace("+00:00", "Z")  # the alert's own evaluation
        assert east["action"] == advice and east["headline"] == message.splitlines()[0]
        assert f"Advice: {advice}." in message
        proj = east["projection"]
        assert f"Projected minimum {d.temp(proj['predicted_min_c'])}" in message
        # running protection is respected everywhere
        assert "are running but the block is at its critical temperature" in advice
        for text in (advice, message, body, json.dumps(doc)):
            assert "start the wind machines" not in text

        card = body.split('id="block-east"', 1)[1].split("</section>", 1)[0]
        assert 'data-level="all-hands"' in card and 'data-monitored="true"' in card
        assert html.escape(advice) in card and html.escape(east["headline"]) in card
        assert f"<b>{d.temp(proj['predicted_min_c'])}</b>" in card
        for other in ("river", "hill"):
            b = next(x for x in doc["blocks"] if x["block"] == other)
            assert b["monitored"] is True and b["level"] != "go-look"

        night = dt.datetime.fromisoformat(east["as_of"].replace("Z", "+00:00")).astimezone(cfg.site.tz)
        evening = (night - dt.timedelta(hours=12)).date().isoformat()
        out = tmp_path / "report"
        p = run_cli("report", "--config", str(cfg_path), "--night", evening, "--out", str(out))
        assert p.returncode == 0, p.stderr
        report = (out / f"night-{evening}.html").read_text(encoding="utf-8")
        table = report.split('id="decisions"', 1)[1].split("</table>", 1)[0]
        row = next(r for r in table.split("<tr>") if f">{d.time(alert_time)}<" in r and ">east<" in r and "ALL HANDS" in r)
        assert html.escape(advice) in row
        record = json.loads((out / f"night-{evening}.json").read_text())
        assert {"time": east["as_of"], "level": "all-hands"}.items() <= next(
            x for x in record["decisions"] if x["block"] == "east" and x["time"] == east["as_of"]).items()
        assert "start the wind machines" not in report
    finally:
        page.stop()
        if daemon.alive():
            daemon.proc.send_signal(signal.SIGCONT)
            daemon.terminate()
