"""The daemon's morning report is drawn by a short-lived child process, so matplotlib and the
plots' memory never enter the daemon (issue 19, item 4; bench/memory.py measures the RSS)."""

from __future__ import annotations

import datetime as dt
import json
import subprocess
import sys
from pathlib import Path

import pytest

SAMPLE_LOGS = Path(__file__).resolve().parents[2] / "sample_sensor_logs"

EVENING = "2027-04-14"

_MORNING = """
import datetime as dt, json, sys
from frostwatch.config import load_config
from frostwatch.daemon import Core, daemon_settings
from frostwatch.store import Store

class Outbox:
    def submit(self, alerts, now): pass
    def submit_health(self, *a, **k): return ""

cfg = load_config(sys.argv[1])
store = Store.open(cfg.storage.path)
core = Core(cfg, daemon_settings(cfg), store, Outbox())
night = core.evaluator.night(dt.date.fromisoformat(sys.argv[2]))
now = night.sunrise_utc + dt.timedelta(hours=1)
core.job_morning(now, night)
events = [e["detail"] for e in store.events(now - dt.timedelta(minutes=1), now + dt.timedelta(minutes=1), "daemon")]
print(json.dumps({"matplotlib": "matplotlib" in sys.modules, "events": events,
                  "report_dir": str(daemon_settings(cfg).report_dir)}))
"""


def _replay(demo_config, log):
    p = subprocess.run([sys.executable, "-m", "frostwatch", "replay", "--config", str(demo_config), "--no-report", str(log)],
                       capture_output=True, text=True, timeout=300)
    assert p.returncode == 0, p.stderr


@pytest.mark.slow
def test_morning_report_is_drawn_in_a_child_and_matplotlib_stays_out_of_the_daemon(demo_config):
    _replay(demo_config, SAMPLE_LOGS / "2027-04-14-radiation-frost.csv")
    p = subprocess.run([sys.executable, "-c", _MORNING, str(demo_config), EVENING], capture_output=True, text=True,
                       timeout=300)
    assert p.returncode == 0, p.stderr
    doc = json.loads(p.stdout)
    assert doc["matplotlib"] is False  # the plots were drawn, but not in this process
    assert doc["events"], p.stderr  # the report event the daemon records, with the page's path
    page = Path(doc["events"][0])
    assert page.name == f"night-{EVENING}.html" and page.parent == Path(doc["report_dir"])
    assert page.exists() and (page.parent / f"night-{EVENING}-east.png").stat().st_size > 1000


def test_a_night_without_readings_is_a_usage_error_from_the_child(demo_config, tmp_path):
    from frostwatch.config import load_config
    from frostwatch.errors import UsageError
    from frostwatch.reports.child import write_night_report_in_child
    from frostwatch.store import Store

    cfg = load_config(demo_config)
    Store.open(cfg.storage.path).close()
    with pytest.raises(UsageError) as exc:
        write_night_report_in_child(cfg, dt.date(2027, 4, 14), tmp_path / "reports")
    assert "2027-04-14" in str(exc.value) and "Traceback" not in str(exc.value)


def test_a_child_that_fails_is_one_clear_error(demo_config, tmp_path, monkeypatch):
    from frostwatch.config import load_config
    from frostwatch.reports import child

    cfg = load_config(demo_config)
    monkeypatch.setattr(child, "report_argv", lambda *a: [sys.executable, "-c", "import sys; sys.exit('boom')"])
    with pytest.raises(child.ReportError) as exc:
        child.write_night_report_in_child(cfg, dt.date(2027, 4, 14), tmp_path)
    assert "exited 1: boom" in str(exc.value)
    monkeypatch.setattr(child, "report_argv", lambda *a: [sys.executable, "-c", "import time; time.sleep(30)"])
    with pytest.raises(child.ReportError) as exc:
        child.write_night_report_in_child(cfg, dt.date(2027, 4, 14), tmp_path, timeout_s=0.5)
    assert "did not finish in 0 s" in str(exc.value) or "did not finish in 1 s" in str(exc.value)
