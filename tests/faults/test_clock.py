"""Clock jumps (reliability.md 9, test 14) at unit level: the daemon's injected clock drives
`Core.tick`, and the jump detector in the heartbeat sees a patched wall clock. The system clock
is never touched. DST nights are covered in tests/daemon/test_scheduler.py."""

from __future__ import annotations

import datetime as dt
import time

import pytest

from frostwatch.config import load_config
from frostwatch.daemon import Core, Daemon, daemon_settings
from frostwatch.store import Store

T0 = dt.datetime(2027, 4, 15, 8, 0, tzinfo=dt.UTC)  # 01:00 local, inside the night of 2027-04-14


class _Outbox:
    def __init__(self):
        self.health = []

    def submit(self, alerts, now):
        pass

    def submit_health(self, subject, detail, now, urgent=False, **k):
        self.health.append((subject, detail))


def _core(demo_config, tmp_path):
    cfg = load_config(demo_config)
    s = daemon_settings(cfg)
    store = Store.open(tmp_path / "clock.db")
    core = Core(cfg, s, store, _Outbox(), clock=lambda: T0)
    evals: list[dt.datetime] = []

    def fake_eval(now=None, reason="scheduled"):
        if reason == "scheduled":  # the dusk briefing's evaluation is a daily job, counted below
            evals.append(now)
        core.last_eval_utc = now

    core.evaluate = fake_eval
    core.job_morning = lambda now, night: None  # no report writing here
    return core, s, store, evals


@pytest.mark.parametrize("jump", [dt.timedelta(hours=2), dt.timedelta(hours=-2), dt.timedelta(days=3)],
                         ids=["+2h", "-2h", "stale-boot+3d"])
def test_clock_jump_gives_at_most_one_catch_up_and_no_burst_of_daily_jobs(demo_config, tmp_path, jump):
    """Pass: ticking every interval (the scheduler's cadence) with the wall clock stepping by the
    jump once, every tick evaluates exactly once (one catch-up at the new time, no burst for the
    skipped interval); daily jobs run at most once per night whatever the jump (a stale boot
    clock stepped by NTP does not replay the missed days' jobs)."""
    core, s, store, evals = _core(demo_config, tmp_path)
    step = dt.timedelta(minutes=s.night_interval_min)
    if jump == dt.timedelta(days=3):  # boot at a stale fake-hwclock time, then NTP steps +3 days
        wall = [T0 - jump + k * step for k in range(10)] + [T0 + k * step for k in range(10)]
    else:
        wall = [T0 + k * step for k in range(10)] + [T0 + jump + (10 + k) * step for k in range(10)]
    for t in wall:
        before = len(evals)
        core.tick(t)
        assert len(evals) - before == 1, f"tick at {t} made {len(evals) - before} evaluations"
    runs = [(name, date) for name, date, _ in core.job_log]
    assert len(runs) == len(set(runs)), runs
    assert len(runs) <= 6  # at most dusk, morning, housekeeping of at most two nights
    store.close()


@pytest.mark.parametrize("jump_s", [7200.0, -7200.0, 3 * 86400.0], ids=["+2h", "-2h", "ntp+3d"])
def test_supervision_records_a_clock_jump_and_reschedules_every_job(demo_config, monkeypatch, jump_s):
    """Pass: when the wall clock moves by the jump against the monotonic clock between two
    supervision rounds, the daemon records one "clock" health event naming the size of the jump
    and reschedules every scheduler job to run now; a further round with no jump does nothing."""
    cfg = load_config(demo_config)
    d = Daemon(cfg)

    class _Job:
        def __init__(self, jid):
            self.id, self.next = jid, None

        def modify(self, next_run_time):
            self.next = next_run_time

    class _Sched:
        woken = 0
        jobs = [_Job("tick"), _Job("heartbeat"), _Job("health")]

        def get_jobs(self):
            return list(self.jobs)

        def wakeup(self):
            self.woken += 1

    d.sched = _Sched()
    try:
        assert d.check_clock() == 0.0  # baseline
        real = time.time
        monkeypatch.setattr(time, "time", lambda: real() + jump_s)
        assert abs(d.check_clock() - jump_s) < 5
        assert d.check_clock() == 0.0
        ev = d.store.events(dt.datetime(2000, 1, 1, tzinfo=dt.UTC), dt.datetime(2100, 1, 1, tzinfo=dt.UTC), "health")
        clock = [e for e in ev if e["subject"] == "clock"]
        assert len(clock) == 1, ev
        assert f"{jump_s:+.0f} s" in clock[0]["detail"]
        assert d.sched.woken == 1
        assert all(j.next is not None for j in d.sched.jobs)
    finally:
        monkeypatch.undo()
        d.store.close()


def test_jobs_stalled_by_a_backward_step_run_again_after_the_reschedule(demo_config):
    """A real BackgroundScheduler: after the clock steps back 2 h, APScheduler 3.x holds every
    job's next run time 2 h ahead in wall time (apscheduler#339). That state is made here without
    touching the system clock (each job's next run time set 2 h ahead). Pass: the daemon's
    reschedule after the detected jump makes the tick and heartbeat jobs run again promptly
    (bounded event waits, no timing assertions)."""
    import threading

    from frostwatch.daemon import build_scheduler

    cfg = load_config(demo_config)
    d = Daemon(cfg)
    ran = {"tick": threading.Event(), "heartbeat": threading.Event(), "health": threading.Event()}
    sched = build_scheduler(cfg, d.s, {k: ran[k].set for k in ran}, dt.datetime.now(dt.UTC))
    sched.start()
    d.sched = sched
    try:
        later = dt.datetime.now(cfg.site.tz) + dt.timedelta(hours=2)
        for job in sched.get_jobs():
            job.modify(next_run_time=later)  # what a 2 h step back leaves behind
        for e in ran.values():
            e.clear()
        assert not ran["tick"].wait(0.5)  # stalled
        assert d.reschedule_all() == 3
        assert ran["tick"].wait(30) and ran["heartbeat"].wait(30) and ran["health"].wait(30)
        nxt = {j.id: j.next_run_time for j in sched.get_jobs()}
        assert all(t < later for t in nxt.values()), nxt  # back on the interval from now
    finally:
        sched.shutdown(wait=False)
        d.store.close()


def test_stalled_scheduler_after_a_backward_jump_withholds_the_watchdog(demo_config):
    """APScheduler keeps each job's next run time in wall-clock terms, so after the clock steps
    back 2 h no interval job (the heartbeat included) runs for 2 h (apscheduler#339). The jump
    detector in the supervision loop reschedules them (test above); should that fail too, the
    supervisor reports the stale heartbeat. Pass: that report exists, which withholds WATCHDOG=1
    so systemd restarts the daemon (the restart gets a fresh scheduler)."""
    cfg = load_config(demo_config)
    d = Daemon(cfg)
    try:
        d.last_beat = time.monotonic() - (3 * d.s.heartbeat_s + 11)
        probs = d.problems()
        assert any("scheduler heartbeat" in p for p in probs), probs
    finally:
        d.store.close()
