"""The season-scale replay (issue 19) keeps the daemon's semantics: on the demo nights it gives
the same alerts and the same projections as the daemon's own path (Core: readings committed a
minute at a time and pushed to its night cache, evaluated at the same instants, the night learned
by the morning job), and what it prints and stores is what the row-by-row replay gave."""

from __future__ import annotations

import json
import subprocess
import sys
from pathlib import Path

import pytest

from frostwatch import pipeline
from frostwatch.config import load_config
from frostwatch.daemon import Core, daemon_settings
from frostwatch.errors import UsageError
from frostwatch.ingest.csvlog import read_sensor_log
from frostwatch.store import Store

SAMPLES = Path(__file__).resolve().parent.parent / "sample_sensor_logs"
NIGHTS = ("2027-04-14-radiation-frost.csv", "2027-04-15-windy-advective.csv", "2027-04-16-cloudy-safe.csv")


class _Outbox:
    def __init__(self):
        self.alerts = []

    def submit(self, alerts, now):
        self.alerts.extend(alerts)

    def submit_health(self, *a, **k):
        return ""


def _projection_rows(store: Store) -> list[tuple]:
    with store.lock:
        return store.conn.execute(
            "SELECT time_utc_ms, block, predicted_min_c, predicted_min_at_utc_ms, t10_crossing_utc_ms, band_c, regime, "
            "method, detail_json FROM projections ORDER BY time_utc_ms, block").fetchall()


def _replay(config: Path, logs: list[Path]) -> dict:
    p = subprocess.run([sys.executable, "-m", "frostwatch", "replay", "--config", str(config), "--no-report", "--json",
                        *map(str, logs)], capture_output=True, text=True, timeout=600)
    assert p.returncode == 0, p.stderr
    return json.loads(p.stdout)


@pytest.mark.slow
def test_replay_gives_the_alerts_and_projections_of_the_daemons_path(demo_config, tmp_path, monkeypatch, replayed):
    logs = [SAMPLES / n for n in NIGHTS]
    replay = replayed(demo_config.read_text(encoding="utf-8"), logs, "demo-farm.toml")  # the session's shared replay
    doc = replay.doc()
    cfg = load_config(replay.config)

    # the daemon's path, on a store of its own
    daemon_cfg_path = tmp_path / "daemon" / "site.toml"
    daemon_cfg_path.parent.mkdir()
    daemon_cfg_path.write_text(demo_config.read_text(encoding="utf-8"), encoding="utf-8")
    dcfg = load_config(daemon_cfg_path)
    readings = sorted((r for log in logs for r in read_sensor_log(log, {s.id for s in cfg.stations})[0]),
                      key=lambda r: r.time_utc)

    def no_report(*a, **k):
        raise UsageError("no night report in this test")

    monkeypatch.setattr("frostwatch.reports.child.write_night_report_in_child", no_report)
    box = _Outbox()
    with Store.open(dcfg.storage.path) as store:
        core = Core(dcfg, daemon_settings(dcfg), store, box, clock=lambda: None)
        first, last = readings[0].time_utc.timestamp(), readings[-1].time_utc.timestamp()
        nights = pipeline.nights_spanned(dcfg, readings[0].time_utc, readings[-1].time_utc)
        times = [t for d in nights
                 for t in pipeline.evaluation_times(core.evaluator.night(d), dcfg.forecast.evaluation_interval_min, first, last)]
        assert times == sorted(times) and len(times) > 1000
        i = 0
        for t in times:
            batch = []
            while i < len(readings) and readings[i].time_utc <= t:  # what the ingest writer has committed by now
                batch.append(readings[i])
                i += 1
            if batch:
                store.add_readings(batch, "mqtt")
                core.readings_committed(batch)
            core.evaluate(t, "scheduled")  # as Core.tick does, at the replay's instants
            core.daily(t)
        daemon_projections = _projection_rows(store)

    with Store.open(cfg.storage.path) as store:
        replay_projections = _projection_rows(store)
    assert len(replay_projections) == len(daemon_projections) == len(times) * len(cfg.blocks)
    assert replay_projections == daemon_projections

    want = [{"time": a.time_utc.isoformat().replace("+00:00", "Z"), "block": a.block, "level": a.level, "rank": a.rank,
             "advice": a.advice, "message": a.message, "key": a.key, "resolves": a.resolves} for a in box.alerts]
    # each alert's short form carries its own random acknowledgement code: compared without it
    assert all(a["short"] for a in doc["alerts"])
    assert [{k: v for k, v in a.items() if k != "short"} for a in doc["alerts"]] == want
    assert any(a["rank"] >= 4 for a in want)  # the frost night acts: the comparison covers real alerts


def test_replay_names_bad_rows_and_uses_the_good_ones(demo_config, tmp_path):
    p = subprocess.run([sys.executable, "-m", "frostwatch", "replay", "--config", str(demo_config), "--no-report", "--json",
                        str(SAMPLES / "broken-rows.csv")], capture_output=True, text=True, timeout=300)
    assert p.returncode == 0, p.stderr
    doc = json.loads(p.stdout)
    rows, _ = read_sensor_log(SAMPLES / "broken-rows.csv", None)
    lines = [ln for ln in p.stderr.splitlines() if ln.startswith(str(SAMPLES / "broken-rows.csv") + ":")]
    assert len(lines) == doc["readings"]["rejected"] >= 10
    assert doc["readings"]["read"] >= 10 and doc["readings"]["stored"] >= 10
    assert all(":" in ln.split(" ", 1)[0] for ln in lines)  # FILE:LINE: reason


def test_replay_of_no_usable_row_exits_2_and_strict_stores_nothing(demo_config, tmp_path):
    bad = tmp_path / "bad.csv"
    bad.write_text("time,station,quantity,value,unit\nnot a time,east-low,air_temperature,1,degC\n", encoding="utf-8")
    p = subprocess.run([sys.executable, "-m", "frostwatch", "replay", "--config", str(demo_config), "--no-report", str(bad)],
                       capture_output=True, text=True, timeout=300)
    assert p.returncode == 2 and f"{bad}:2:" in p.stderr and "no usable row" in p.stderr
    p = subprocess.run([sys.executable, "-m", "frostwatch", "replay", "--config", str(demo_config), "--no-report", "--strict",
                        str(SAMPLES / "broken-rows.csv")], capture_output=True, text=True, timeout=300)
    assert p.returncode == 2 and "--strict" in p.stderr
    cfg = load_config(demo_config)
    with Store.open(cfg.storage.path) as store:
        assert store.count("readings") == 0


def test_replaying_the_same_log_twice_stores_it_once_and_gives_the_same_alerts(demo_config):
    log = SAMPLES / NIGHTS[0]
    one = _replay(demo_config, [log])
    two = _replay(demo_config, [log])
    assert two["readings"]["stored"] == 0 and two["readings"]["duplicates"] == one["readings"]["stored"]
    assert [a["message"] for a in two["alerts"]] == [a["message"] for a in one["alerts"]]
    cfg = load_config(demo_config)
    with Store.open(cfg.storage.path) as store:
        assert store.count("readings") == one["readings"]["stored"]
