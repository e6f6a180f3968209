"""A daemon restarted in the night (a crash, an upgrade, a power cut; systemd restarts it) goes on
where it stopped: the alerts a grower receives are the ones an uninterrupted daemon sends. Before,
the alert rules' memory lived only in the process: after a restart the dusk message ("frost may
come tonight; nothing to do yet") went out again after a protect, the current level went out
again under a new key, and an alert someone had acknowledged fired again, repeating and
escalating to the next person on the roster."""

from __future__ import annotations

import datetime as dt
import sqlite3

from frostwatch.config import load_config
from frostwatch.daemon import Core, daemon_settings
from frostwatch.ingest.csvlog import read_sensor_log
from frostwatch.pipeline import Evaluator
from frostwatch.store import Store


class _Outbox:
    """Stores what the daemon hands over, as the real outbox does before sending it, and keeps
    each alert with whether the store took it (a key already stored is refused: never sent)."""

    def __init__(self, store):
        self.store = store
        self.alerts = []

    def submit(self, alerts, now):
        self.alerts.extend((a, self.store.add_alert(a)) for a in alerts)

    def submit_health(self, *a, **k):
        return ""


def _night(cfg, log):
    readings, _ = read_sensor_log(log, {s.id for s in cfg.stations})
    readings.sort(key=lambda r: r.time_utc)
    night = Evaluator(cfg).night_at(readings[len(readings) // 2].time_utc)
    return readings, night


def _run(cfg, db, readings, times, restart_at=(), forget=False):
    """Evaluate at `times` as the daemon's Core does (readings committed as they come); at each
    instant of `restart_at` the process ends and a new Core opens the same store (with `forget`,
    one that holds no rule states, as a store of an older version's)."""
    sent = []
    restart_at = sorted(restart_at)
    store = Store.open(db)
    core = Core(cfg, daemon_settings(cfg), store, _Outbox(store), clock=lambda: None)
    i = 0
    try:
        for t in times:
            if restart_at and t >= restart_at[0]:
                restart_at.pop(0)
                sent += core.outbox.alerts
                store.close()
                if forget:
                    con = sqlite3.connect(db)
                    with con:
                        con.execute("DELETE FROM meta WHERE key LIKE 'rules.state.%'")
                    con.close()
                store = Store.open(db)
                core = Core(cfg, daemon_settings(cfg), store, _Outbox(store), clock=lambda: None)
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
    return [(a.key, a.level, taken) for a, taken in sent]


def _times_and_restart(cfg, night):
    start = (night.sunset_utc - dt.timedelta(hours=1)).replace(second=0, microsecond=0)
    times = []
    t = start
    while t < night.sunrise_utc:
        times.append(t)
        t += dt.timedelta(minutes=10)
    return times, dt.datetime.combine(night.date, dt.time(23, 0), tzinfo=cfg.site.tz).astimezone(dt.UTC)


def test_a_restart_in_the_night_sends_nothing_again(demo_config, demo_logs, tmp_path):
    """Pass: through the demo's frost night, evaluated every 10 minutes from an hour before sunset
    to sunrise, a daemon restarted at 23:00 local (after the ready and protect alerts) sends exactly
    the alerts, with the same keys, of one that ran all night. Fails when a restart forgets the
    night: ready and protect went out again under new keys."""
    cfg = load_config(demo_config)
    readings, night = _night(cfg, demo_logs[0])
    times, restart = _times_and_restart(cfg, night)
    straight = _run(cfg, tmp_path / "straight.db", readings, times)
    restarted = _run(cfg, tmp_path / "restarted.db", readings, times, restart_at=[restart])
    assert {lvl for _, lvl, _ in straight} >= {"ready", "protect", "all-hands"}, straight
    assert all(taken for _, _, taken in straight)
    assert restarted == straight


def test_without_a_stored_state_the_alerts_are_numbered_on(demo_config, demo_logs, tmp_path):
    """Pass: restarted twice (23:00, 23:20) on a store that holds tonight's alerts but no rule
    state (written by an older version), the daemon gives every new alert a key not used tonight,
    so the outbox sends it. Fails when the numbering starts again at 001: the second restart makes
    the first one's keys again (001-wait, 002-protect, ...), which the outbox refuses as already
    sent, so those alerts never go out."""
    cfg = load_config(demo_config)
    readings, night = _night(cfg, demo_logs[0])
    times, restart = _times_and_restart(cfg, night)
    sent = _run(cfg, tmp_path / "b.db", readings, times, restart_at=[restart, restart + dt.timedelta(minutes=20)],
                forget=True)
    refused = [k for k, _, taken in sent if not taken]
    assert not refused, refused
    assert "all-hands" in {lvl for _, lvl, _ in sent}
