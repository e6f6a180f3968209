"""What the daemon's evaluation carries from one cycle to the next (issue 19, item 3) changes no
value: the night cache says from when its series may differ from the last snapshot's
(`NightCache.snapshot`), and the evaluator keeps each block's dusk forecast while no reading at or
before dusk has been added since (`Evaluator.evaluate(..., unchanged_before_s)`). Every decision
and projection is held to a plain evaluation of the same readings, value by value."""

from __future__ import annotations

import dataclasses
import datetime as dt
import math

import pytest

from frostwatch.config import load_config
from frostwatch.daemon import Core, daemon_settings
from frostwatch.decision import decision_to_json
from frostwatch.forecast import projection
from frostwatch.models import Reading
from frostwatch.nightcache import NightCache
from frostwatch.pipeline import LOOKBACK, Evaluator
from frostwatch.store import Store

NOW = dt.datetime(2027, 4, 15, 8, 0, tzinfo=dt.UTC)  # 01:00 local, the night of 2027-04-14


class _Outbox:
    def submit(self, alerts, now):
        pass

    def submit_health(self, *a, **k):
        return ""


def _r(minutes: float, station="east-low", value=None) -> Reading:
    return Reading(NOW + dt.timedelta(minutes=minutes), station, "air_temperature",
                   5.0 - minutes / 100 if value is None else value)


def test_a_snapshot_says_from_when_its_series_may_differ_from_the_last(demo_config, tmp_path):
    """Pass: after a load, a trim and `invalidate` nothing is known (-inf); with nothing pushed,
    nothing changed (inf); otherwise the earliest reading pushed since the last snapshot, late
    ones included, and a plain `series` call does not restart the count."""
    cfg = load_config(demo_config)
    ev = Evaluator(cfg)
    with Store.open(tmp_path / "c.db") as store:
        store.add_readings([_r(-m) for m in range(0, 300, 5)], "csv")
        cache = NightCache(store, ev.night_at, LOOKBACK)
        _, since = cache.snapshot(NOW)
        assert since == -math.inf  # loaded
        _, since = cache.snapshot(NOW)
        assert since == math.inf
        cache.push([_r(3), _r(4)])
        cache.push([_r(-200.5, value=-4.0)])  # late: before readings already held
        cache.series(NOW)  # someone else's look does not restart it
        series, since = cache.snapshot(NOW)
        assert since == (NOW - dt.timedelta(minutes=200.5)).timestamp()
        assert -4.0 in series[("east-low", "air_temperature")][1]
        cache.push([_r(-60 * 30)])  # before the window: not held, so nothing changed
        assert cache.snapshot(NOW)[1] == math.inf
        cache.push([_r(6)])
        _, since = cache.snapshot(NOW + dt.timedelta(days=1))  # the next night: trimmed
        assert since == -math.inf
        cache.invalidate()
        assert cache.snapshot(NOW)[1] == -math.inf
        assert cache.loads == 2


def _decided(ev) -> list[str]:
    return [decision_to_json(d) + repr(p) for d, p in zip(ev.decisions, ev.projections, strict=True)]


def test_the_daemon_carries_the_dusk_forecast_and_decides_as_a_plain_evaluation(demo_config, demo_logs, tmp_path,
                                                                               monkeypatch):
    """Pass: through a demo night, from two hours before sunset to sunrise, every decision and
    projection of the daemon's Core (its cache's snapshots, the dusk forecast carried) is the one
    a plain Evaluator makes from a store read at the same instant, to the last digit; the dusk
    forecast is worked out again after a late reading before dusk (which moves it) and after a
    config change, and otherwise once a night. Fails if the carried forecast outlives a late
    reading or a new config."""
    from frostwatch.ingest.csvlog import read_sensor_log

    cfg = load_config(demo_config)
    readings, _ = read_sensor_log(demo_logs[0], {s.id for s in cfg.stations})
    readings.sort(key=lambda r: r.time_utc)
    calls = {"n": 0}
    real = projection.dusk_inputs

    def counted(*a, **k):
        calls["n"] += 1
        return real(*a, **k)

    monkeypatch.setattr(projection, "dusk_inputs", counted)
    with Store.open(tmp_path / "core.db") as store:
        core = Core(cfg, daemon_settings(cfg), store, _Outbox(), clock=lambda: None)
        ref = Evaluator(cfg)
        night = ref.night_at(readings[len(readings) // 2].time_utc)
        dusk = night.dusk_utc
        start = (night.sunset_utc - dt.timedelta(hours=2)).replace(microsecond=0)  # the daemon keeps milliseconds
        store.add_readings([r for r in readings if r.time_utc <= start], "csv")
        after = [r for r in readings if r.time_utc > start]
        t, i, late_done, cfg_done = start, 0, False, False
        per_cycle = []
        n_blocks = len(cfg.blocks)
        while t < night.sunrise_utc:
            t += dt.timedelta(minutes=10)
            batch = []
            while i < len(after) and after[i].time_utc <= t:
                batch.append(after[i])
                i += 1
            if not late_done and t >= dusk + dt.timedelta(hours=2):
                # a logger's buffer arrives late: a colder reading of every crop sensor just before dusk
                batch += [Reading(dusk - dt.timedelta(seconds=30), s.id, "air_temperature", -3.0)
                          for s in cfg.stations if s.role == "crop"]
                late_done = True
            elif late_done and not cfg_done:
                b0 = dataclasses.replace(cfg.blocks[0], margin_c=cfg.blocks[0].margin_c + 1.0)
                new = dataclasses.replace(cfg, blocks=(b0,) + cfg.blocks[1:])
                core.evaluator.cfg = ref.cfg = new  # what Core.reload_config does
                cfg_done = True
            store.add_readings(batch, "mqtt")
            core.readings_committed(batch)
            before = calls["n"]
            got = core.evaluate(t, "test")
            per_cycle.append((t, calls["n"] - before))
            calls["n"] = before
            want = ref.evaluate(t, store.readings_window(night.sunset_utc - LOOKBACK, t))
            calls["n"] = before + per_cycle[-1][1]
            assert _decided(got) == _decided(want), t
        assert core.cache.loads == 1
        assert late_done and cfg_done
        after_dusk = [n for at, n in per_cycle if at >= dusk]
        assert after_dusk[0] == n_blocks  # made at dusk
        assert sum(after_dusk) == 3 * n_blocks  # and again after the late reading and the new config
        late = next(k for k, (at, _) in enumerate(per_cycle) if at >= dusk + dt.timedelta(hours=2))
        assert per_cycle[late][1] == n_blocks and per_cycle[late + 1][1] == n_blocks


def test_the_dusk_forecast_is_moved_by_the_late_reading(demo_config, demo_logs, tmp_path):
    """Pass: the late reading of the test above does change the dusk forecast, so carrying the
    old one would have been seen."""
    from frostwatch.ingest.csvlog import read_sensor_log

    cfg = load_config(demo_config)
    readings, _ = read_sensor_log(demo_logs[0], {s.id for s in cfg.stations})
    readings.sort(key=lambda r: r.time_utc)
    ev = Evaluator(cfg)
    night = ev.night_at(readings[len(readings) // 2].time_utc)
    at = night.dusk_utc + dt.timedelta(hours=2)
    with Store.open(tmp_path / "a.db") as store:
        store.add_readings([r for r in readings if r.time_utc <= at], "csv")
        plain = Evaluator(cfg).evaluate(at, store.readings_window(night.sunset_utc - LOOKBACK, at))
        store.add_readings([Reading(night.dusk_utc - dt.timedelta(seconds=30), s.id, "air_temperature", -3.0)
                            for s in cfg.stations if s.role == "crop"], "late")
        moved = Evaluator(cfg).evaluate(at, store.readings_window(night.sunset_utc - LOOKBACK, at))
    assert [p.predicted_min_c for p in plain.projections] != pytest.approx([p.predicted_min_c for p in moved.projections])
