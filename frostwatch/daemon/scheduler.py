"""The daemon's APScheduler: IntervalTriggers only, in the site's time zone (both DST nights keep
their cadence); misfire_grace_time None, coalesce, max_instances 1 (reliability.md 4)."""

from __future__ import annotations

import datetime as dt
from collections.abc import Callable

from frostwatch.config import Config
from frostwatch.daemon_settings import DaemonSettings


def build_scheduler(cfg: Config, s: DaemonSettings, jobs: dict[str, Callable[[], None]], start_utc: dt.datetime):
    """A BackgroundScheduler with an explicit time zone and IntervalTriggers only (DST-proof).
    `jobs` maps "tick", "heartbeat" and "health" to callables."""
    from apscheduler.schedulers.background import BackgroundScheduler
    from apscheduler.triggers.interval import IntervalTrigger

    tz = cfg.site.tz
    sched = BackgroundScheduler(
        timezone=tz,
        job_defaults={"misfire_grace_time": None, "coalesce": True, "max_instances": 1},
        executors={"default": {"type": "threadpool", "max_workers": 4}},
    )
    step = s.night_interval_min * 60.0
    first_tick = dt.datetime.fromtimestamp((int(start_utc.timestamp() // step) + 1) * step, tz=dt.UTC)
    sched.add_job(jobs["tick"], IntervalTrigger(seconds=step, start_date=first_tick, timezone=tz), id="tick", replace_existing=True)
    sched.add_job(jobs["heartbeat"], IntervalTrigger(seconds=s.heartbeat_s, timezone=tz), id="heartbeat", replace_existing=True)
    sched.add_job(jobs["health"], IntervalTrigger(seconds=s.health_interval_s, timezone=tz), id="health", replace_existing=True)
    return sched
