"""The shared pipeline over the demo nights: what a grower sees, end to end."""

import datetime as dt

from frostwatch.config import load_config
from frostwatch.ingest.csvlog import read_sensor_log
from frostwatch.pipeline import protection_running, run_replay
from frostwatch.store import Store


def _evals(demo_config, log):
    cfg = load_config(demo_config)
    readings, _ = read_sensor_log(log, {s.id for s in cfg.stations})
    with Store.open(cfg.storage.path) as store:
        store.add_readings(readings, "t")
        series = store.readings_window(min(r.time_utc for r in readings), max(r.time_utc for r in readings))
    return run_replay(cfg, series), series


def test_critical_with_machines_running_says_they_are_not_holding(demo_config, demo_logs):
    """The frost night: east's fans run from 01:40 yet air reaches T10 at 04:58; the advice must
    not say 'start the wind machines' but that they are running and not holding the block."""
    evals, _ = _evals(demo_config, demo_logs[0])
    crit = [a for ev in evals for a in ev.alerts if a.block == "east" and a.level == "all-hands"]
    assert crit and "running but the block is at its critical temperature" in crit[0].advice


def test_protection_running_reads_the_latest_fresh_flag(demo_config, demo_logs):
    _, series = _evals(demo_config, demo_logs[0])
    t = lambda h, m: dt.datetime(2027, 4, 15, h, m, tzinfo=dt.timezone(dt.timedelta(hours=-7))).timestamp()  # noqa: E731
    from frostwatch.pipeline import slice_series

    at = lambda s: slice_series(series, 0, s)  # noqa: E731
    assert protection_running(at(t(1, 0)), ["east-low", "east-tower"], t(1, 0)) is False
    assert protection_running(at(t(2, 0)), ["east-low", "east-tower"], t(2, 0)) is True
    assert protection_running(at(t(2, 0)), ["hill-low"], t(2, 0)) is None  # no running sensor
