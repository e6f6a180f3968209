"""The daemon's night cache (frostwatch.nightcache) stays equal to the store's window, and the
daemon's evaluations read it instead of the store."""

from __future__ import annotations

import datetime as dt
import threading

import numpy as np

from frostwatch.config import load_config
from frostwatch.daemon import Core, daemon_settings
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


def _r(minutes: float, station="east-low", value=None, q="air_temperature") -> Reading:
    return Reading(NOW + dt.timedelta(minutes=minutes), station, q, 5.0 - minutes / 100 if value is None else value)


def _same(cache_series, store_series):
    assert set(cache_series) == set(store_series)
    for k in store_series:
        np.testing.assert_array_equal(cache_series[k][0], store_series[k][0])
        np.testing.assert_array_equal(cache_series[k][1], store_series[k][1])


def _commit(store, cache, readings):
    """What the ingest writer does: commit, then push exactly those readings."""
    store.add_readings(readings, "mqtt")
    cache.push(readings)


def test_cache_equals_the_store_window_after_late_duplicate_and_conflicting_pushes(demo_config, tmp_path):
    """Pass: after in-order, late (out-of-order), duplicate and conflicting readings are committed
    and pushed, the cache's series equal Store.readings_window of the same window exactly (first
    value kept on a conflict, late readings in time order, none dropped); the store window was
    read once."""
    cfg = load_config(demo_config)
    ev = Evaluator(cfg)
    night = ev.night_at(NOW)
    with Store.open(tmp_path / "c.db") as store:
        store.add_readings([_r(-m) for m in range(0, 600, 5)] + [_r(-m, "river-low") for m in range(0, 300, 10)], "csv")
        cache = NightCache(store, ev.night_at, LOOKBACK)
        cache.series(NOW)
        _commit(store, cache, [_r(m) for m in range(1, 30)])  # in order
        _commit(store, cache, [_r(-2.5), _r(-7.5), _r(0.5, "river-low")])  # late
        _commit(store, cache, [_r(3), _r(3), _r(4, value=-9.0)])  # duplicates, a conflict
        _commit(store, cache, [_r(40, "hill-low"), _r(35, "hill-low"), _r(33, "hill-low")])  # new key, out of order
        _commit(store, cache, [_r(-60 * 30)])  # before the window: not held
        end = NOW + dt.timedelta(hours=3)
        _same(cache.series(NOW + dt.timedelta(hours=1)), store.readings_window(night.sunset_utc - LOOKBACK, end))
        assert cache.loads == 1


def test_a_snapshot_never_changes_under_an_evaluation(demo_config, tmp_path):
    """Pass: a series handed out before a late reading and a long run of appends arrives keeps
    exactly its values (copy on write for inserts; appends write past its end)."""
    cfg = load_config(demo_config)
    ev = Evaluator(cfg)
    with Store.open(tmp_path / "c.db") as store:
        store.add_readings([_r(-m) for m in range(0, 100, 5)], "csv")
        cache = NightCache(store, ev.night_at, LOOKBACK)
        snap = cache.series(NOW)
        t0, v0 = (a.copy() for a in snap[("east-low", "air_temperature")])
        _commit(store, cache, [_r(-2.0, value=99.0)])
        _commit(store, cache, [_r(m / 10) for m in range(1, 2000)])
        t1, v1 = snap[("east-low", "air_temperature")]
        np.testing.assert_array_equal(t0, t1)
        np.testing.assert_array_equal(v0, v1)


def test_readings_pushed_while_the_window_loads_are_kept(demo_config, tmp_path):
    """Pass: readings committed and pushed while the cache reads the store window (the writer
    thread runs on) are all held afterwards, once each."""
    cfg = load_config(demo_config)
    ev = Evaluator(cfg)
    night = ev.night_at(NOW)
    with Store.open(tmp_path / "c.db") as store:
        store.add_readings([_r(-m) for m in range(0, 100, 5)], "csv")
        cache = NightCache(store, ev.night_at, LOOKBACK)
        real = store.readings_window

        def loading(*a, **k):
            out = real(*a, **k)
            # committed before the read finished (so also in `out`) and after: both pushed now
            th = threading.Thread(target=_commit, args=(store, cache, [_r(1), _r(2), _r(-1)]))
            th.start()
            th.join(30)
            return out

        store.readings_window = loading
        cache.series(NOW)
        store.readings_window = real
        _same(cache.series(NOW), real(night.sunset_utc - LOOKBACK, NOW + dt.timedelta(hours=2)))


def test_a_new_night_trims_and_a_clock_stepped_back_reloads(demo_config, tmp_path):
    """Pass: the next night's window drops what is older than its start without reading the
    store; going back to an earlier night (the clock stepped back) reads the store again."""
    cfg = load_config(demo_config)
    ev = Evaluator(cfg)
    with Store.open(tmp_path / "c.db") as store:
        cache = NightCache(store, ev.night_at, LOOKBACK)
        cache.series(NOW)
        _commit(store, cache, [_r(m) for m in range(0, 24 * 60, 10)])
        tomorrow = NOW + dt.timedelta(days=1)
        nxt = ev.night_at(tomorrow)
        s = cache.series(tomorrow)
        assert cache.loads == 1
        assert min(t[0] for t, _ in s.values()) >= (nxt.sunset_utc - LOOKBACK).timestamp()
        _same(s, store.readings_window(nxt.sunset_utc - LOOKBACK, tomorrow + dt.timedelta(days=1)))
        cache.series(NOW)
        assert cache.loads == 2


def test_core_evaluates_from_the_cache_and_matches_a_store_read(demo_config, demo_logs, tmp_path):
    """Pass: through a demo night the daemon's Core evaluates from its cache (the store window is
    read once) and every projection equals the one Evaluator.evaluate makes from a fresh store
    read at the same instant."""
    from frostwatch.ingest.csvlog import read_sensor_log

    cfg = load_config(demo_config)
    readings, _ = read_sensor_log(demo_logs[0], {s.id for s in cfg.stations})
    readings.sort(key=lambda r: r.time_utc)
    with Store.open(tmp_path / "core.db") as store:
        core = Core(cfg, daemon_settings(cfg), store, _Outbox(), clock=lambda: None)
        ref = Evaluator(cfg)
        night = ref.night_at(readings[len(readings) // 2].time_utc)
        start = night.sunset_utc - dt.timedelta(hours=2)
        before = [r for r in readings if r.time_utc <= start]
        after = [r for r in readings if r.time_utc > start]
        store.add_readings(before, "csv")
        t = start
        i = 0
        for _ in range(12):
            t += dt.timedelta(minutes=20)
            batch = []
            while i < len(after) and after[i].time_utc <= t:
                batch.append(after[i])
                i += 1
            store.add_readings(batch, "mqtt")
            core.readings_committed(batch)
            got = core.evaluate(t, "test")
            want = ref.evaluate(t, store.readings_window(night.sunset_utc - LOOKBACK, t))
            assert [p.predicted_min_c for p in got.projections] == [p.predicted_min_c for p in want.projections]
            assert [a.risk for a in got.plans] == [a.risk for a in want.plans]
        assert core.cache.loads == 1
