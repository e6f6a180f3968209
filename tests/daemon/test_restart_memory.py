"""A daemon restarted in the night (a crash, an upgrade, a power cut; systemd restarts it) goes on
where it stopped: the alerts a grower receives are the ones an uninterrupted daemon sends. Before,
the alert rules' memory lived only in the process: after a restart the dusk message ("frost may
come tonight; nothing to do yet") went out again after a protect, the current level went out
again under a new key, and an alert someone had acknowledged fired again, repeating and
escalating to the next person on the roster."""

from __future__ import annotations

import datetime as dt

from frostwatch.config import load_config
from frostwatch.daemon import Core, daemon_settings
from frostwatch.ingest.csvlog import read_sensor_log
from frostwatch.pipeline import Evaluator
from frostwatch.store import Store


class _Outbox:
    """Keeps what the daemon hands over to be sent."""

    def __init__(self):
        self.alerts = []

    def submit(self, alerts, now):
        self.alerts.extend(alerts)

    def submit_health(self, *a, **k):
        return ""


def _night(cfg, log):
    readings, _ = read_sensor_log(log, {s.id for s in cfg.stations})
    readings.sort(key=lambda r: r.time_utc)
    night = Evaluator(cfg).night_at(readings[len(readings) // 2].time_utc)
    return readings, night


def _run(cfg, db, readings, times, restart_at=None):
    """Evaluate at `times` as the daemon's Core does (readings committed as they come); with
    `restart_at`, the process ends there and a new Core opens the same store."""
    sent = []
    store = Store.open(db)
    core = Core(cfg, daemon_settings(cfg), store, _Outbox(), clock=lambda: None)
    i = 0
    try:
        for t in times:
            if restart_at is not None and t >= restart_at:
                restart_at = None
                sent += core.outbox.alerts
                store.close()
                store = Store.open(db)
                core = Core(cfg, daemon_settings(cfg), store, _Outbox(), clock=lambda: None)
            batch = []
            while i < len(readings) and readings[i].time_utc <= t:
                batch.append(readings[i])
                i += 1
            store.add_readings(batch, "mqtt")
            core.readings_committed(batch)
            core.evaluate(t, "scheduled")
        sent += core.outbox.alerts
    finally:
        store.close()
    return [(a.key, a.level) for a in sent]


def test_a_restart_in_the_night_sends_nothing_again(demo_config, demo_logs, tmp_path):
    """Pass: through the demo's frost night, evaluated every 10 minutes from an hour before sunset
    to sunrise, a daemon restarted at 23:00 local (after the ready and protect alerts) sends exactly
    the alerts, with the same keys, of one that ran all night. Fails when a restart forgets the
    night: ready and protect went out again under new keys."""
    cfg = load_config(demo_config)
    readings, night = _night(cfg, demo_logs[0])
    start = (night.sunset_utc - dt.timedelta(hours=1)).replace(second=0, microsecond=0)
    times = []
    t = start
    while t < night.sunrise_utc:
        times.append(t)
        t += dt.timedelta(minutes=10)
    restart = dt.datetime.combine(night.date, dt.time(23, 0), tzinfo=cfg.site.tz).astimezone(dt.UTC)
    straight = _run(cfg, tmp_path / "straight.db", readings, times)
    restarted = _run(cfg, tmp_path / "restarted.db", readings, times, restart_at=restart)
    assert {lvl for _, lvl in straight} >= {"ready", "protect", "all-hands"}, straight
    assert restarted == straight
