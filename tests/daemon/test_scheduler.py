"""Scheduler wiring with an injected clock: the evaluation cadence through both DST nights, daily
jobs once per night, failing jobs recorded and not fatal. No sleeping through real hours."""

from __future__ import annotations

import datetime as dt
from zoneinfo import ZoneInfo

import pytest

from frostwatch.config import load_config
from frostwatch.daemon import Core, Daemon, build_scheduler, daemon_settings
from frostwatch.errors import ConfigError
from frostwatch.store import Store

LA = ZoneInfo("America/Los_Angeles")


class _Outbox:
    def __init__(self):
        self.alerts, self.health = [], []

    def submit(self, alerts, now):
        self.alerts.extend(alerts)

    def submit_health(self, subject, detail, now, urgent=False):
        self.health.append((subject, detail, urgent))


def _fire_times(trigger, start: dt.datetime, end: dt.datetime) -> list[dt.datetime]:
    out, prev = [], None
    t = trigger.get_next_fire_time(None, start)
    while t <= end and len(out) < 5000:
        out.append(t)
        prev = t
        t = trigger.get_next_fire_time(prev, prev)
    return out


@pytest.mark.parametrize(
    "label,first_local",
    [
        ("spring-forward", dt.datetime(2027, 3, 13, 10, 0, tzinfo=LA)),  # clocks skip 02:00-03:00 on 14 March
        ("fall-back", dt.datetime(2027, 11, 6, 10, 0, tzinfo=LA)),  # 01:00-02:00 happens twice on 7 November
    ],
)
def test_dst_night_keeps_cadence_and_daily_jobs_run_once(demo_config, tmp_path, label, first_local):
    cfg = load_config(demo_config)
    s = daemon_settings(cfg)
    start = first_local.astimezone(dt.UTC)
    end = start + dt.timedelta(hours=36)
    noop = lambda: None  # noqa: E731
    sched = build_scheduler(cfg, s, {"tick": noop, "heartbeat": noop, "health": noop}, start)
    assert str(sched.timezone) == "America/Los_Angeles"  # an explicit time zone, never the host's
    tick = next(j for j in sched.get_jobs() if j.id == "tick")
    # applied to every job when the scheduler starts: run however late, one catch-up, no overlap
    assert sched._job_defaults == {"misfire_grace_time": None, "coalesce": True, "max_instances": 1}
    # in UTC: two datetimes of one local zone subtract as wall-clock time, hiding or faking gaps
    times = [t.astimezone(dt.UTC) for t in _fire_times(tick.trigger, start, end)]
    gaps = {(b - a).total_seconds() for a, b in zip(times, times[1:], strict=False)}
    assert gaps == {s.night_interval_min * 60.0}  # real (UTC) gaps identical across the transition

    store = Store.open(tmp_path / "dst.db")
    core = Core(cfg, s, store, _Outbox(), clock=lambda: times[0])
    evals: list[tuple[dt.datetime, str]] = []
    core.evaluate = lambda now=None, reason="scheduled": (evals.append((now, reason)), setattr(core, "last_eval_utc", now))
    for t in times:
        core.tick(t)
    night_evals = [t for t, r in evals if r == "scheduled" and core.in_watch_window(t)]
    night_gaps = [(b - a).total_seconds() for a, b in zip(night_evals, night_evals[1:], strict=False)]
    assert night_gaps and max(g for g in night_gaps if g < 3600) == s.night_interval_min * 60.0
    assert min(night_gaps) == s.night_interval_min * 60.0
    # the DST night itself is fully covered: every tick from sunset - 1 h to sunrise + 2 h evaluated
    dst_night = core.evaluator.night(first_local.date())
    inside = [t for t in times if dst_night.contains(t)]
    assert set(inside) <= {t for t, _ in evals}
    real_s = (dst_night.sunrise_utc - dst_night.sunset_utc + dt.timedelta(hours=3)).total_seconds()
    assert abs(len(inside) - real_s / 120.0) <= 1.0  # the real length of the night: no hour lost or doubled
    # daily jobs: each once per night
    runs = [(name, date) for name, date, _ in core.job_log]
    assert len(runs) == len(set(runs))
    for name in ("dusk", "morning", "housekeeping"):
        assert (name, dst_night.date) in runs, (name, runs)
    dusk_at = next(at for name, date, at in core.job_log if name == "dusk" and date == dst_night.date)
    assert dst_night.dusk_utc <= dusk_at < dst_night.dusk_utc + dt.timedelta(minutes=2)
    # a restart replays no daily job (the record is in the store)
    core2 = Core(cfg, s, store, _Outbox(), clock=lambda: times[-1])
    core2.evaluate = lambda now=None, reason="": None
    core2.daily(times[-1])
    assert core2.job_log == []
    store.close()


def test_failing_job_is_recorded_and_not_fatal(demo_config):
    cfg = load_config(demo_config)
    d = Daemon(cfg)
    try:
        def boom():
            raise RuntimeError("disk on fire")

        d._guard("boom", boom)()  # does not raise
        ev = d.store.events(dt.datetime(2000, 1, 1, tzinfo=dt.UTC), dt.datetime(2100, 1, 1, tzinfo=dt.UTC), "daemon")
        assert any(e["subject"] == "job boom failed" and "disk on fire" in e["detail"] for e in ev)
    finally:
        d.store.close()


def test_daemon_section_is_validated(demo_config):
    text = demo_config.read_text() + '\n[daemon]\nnight_interval = 2\nday_interval_min = -1\nreport_dir = 3\n'
    demo_config.write_text(text)
    with pytest.raises(ConfigError) as e:  # loading the config runs this module's validator
        load_config(demo_config)
    msg = str(e.value)
    assert "daemon.night_interval: unknown key (did you mean 'night_interval_min'?)" in msg
    assert "daemon.day_interval_min: -1 must be positive" in msg
    assert "daemon.report_dir: 3 is not valid" in msg


def test_learns_past_nights_walk_forward_at_startup(demo_config, demo_logs, tmp_path):
    """The daemon learns the stored nights like replay does, and never the night still open."""
    from frostwatch.ingest.csvlog import read_sensor_log

    cfg = load_config(demo_config)
    store = Store.open(tmp_path / "learn.db")
    for p in demo_logs:
        readings, _ = read_sensor_log(p, {s.id for s in cfg.stations})
        store.add_readings(readings, str(p))
    first, last = store.reading_time_range()
    core = Core(cfg, daemon_settings(cfg), store, _Outbox())
    n_mid = core.learn_history(last - dt.timedelta(hours=30))  # the last night is not over yet
    core2 = Core(cfg, daemon_settings(cfg), store, _Outbox())
    n_end = core2.learn_history(last + dt.timedelta(hours=3))
    assert 0 < n_mid < n_end
    assert max(core2.evaluator.learned) > max(core.evaluator.learned)
    store.close()
