"""A block with no data at all, through a real `frostwatch replay`: it is raised as NOT MONITORED at
night (once a night), never given a dusk all-clear, and no output says "n/a" (not the alerts, the
printed summary, the stored decisions or the night report)."""

from __future__ import annotations

import csv
import json
import subprocess
import sys
from importlib import resources
from pathlib import Path

NIGHT = Path(__file__).resolve().parent.parent / "sample_sensor_logs" / "2027-04-16-cloudy-safe.csv"


def test_a_block_whose_sensor_never_reported_is_not_monitored_and_never_all_clear(tmp_path):
    cfg = tmp_path / "demo-farm.toml"
    cfg.write_text(resources.files("frostwatch.sample_logs").joinpath("demo-farm.toml").read_text(encoding="utf-8"))
    log = tmp_path / "no-hill.csv"
    with NIGHT.open(newline="") as f, log.open("w", newline="") as g:
        rows = csv.reader(f)
        w = csv.writer(g)
        for row in rows:
            if row[1] != "hill-low":
                w.writerow(row)
    reports = tmp_path / "reports"
    base = [sys.executable, "-m", "frostwatch", "replay", str(log), "--config", str(cfg)]
    p = subprocess.run(base + ["--json", "--report-dir", str(reports)], capture_output=True, text=True, timeout=600)
    assert p.returncode == 0, p.stderr[-2000:]
    doc = json.loads(p.stdout)
    hill = [a for a in doc["alerts"] if a["block"] == "hill"]
    assert [a["level"] for a in hill] == ["go-look"], [a["message"].splitlines()[0] for a in hill]
    assert hill[0]["message"].startswith("hill: GO LOOK: NOT MONITORED since ")
    assert "no reading at all from its crop-height sensor (hill-low)" in hill[0]["message"]
    outlooks = [a for a in doc["alerts"] if "tonight looks safe" in a["message"].splitlines()[0]]
    assert {a["block"] for a in outlooks} == {"east", "river"}  # the clear outlook only where there are data
    assert "n/a" not in p.stdout
    html = next(reports.glob("night-*.html")).read_text(encoding="utf-8")
    assert "n/a" not in html and "no crop-height reading this night" in html
    decided = html.split('id="decisions"', 1)[1].split("</table>", 1)[0]
    assert "NOT MONITORED: no reading at all from its crop-height sensor (hill-low)" in decided
    text = subprocess.run(base + ["--no-report"], capture_output=True, text=True, timeout=600)
    assert text.returncode == 0 and "n/a" not in text.stdout
    assert "hill       no crop-height reading this night" in text.stdout
