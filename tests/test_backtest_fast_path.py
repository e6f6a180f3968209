"""The backtest's fast path gives the per-night path's numbers, bit for bit (issue 19, item 2).

A backtest knows every night it will learn before it starts, so each block's learner works out
the ridge fits of all its snapshots at once (`Learner.plan`: the dusk and drop regressions after
each night, each hours-left bin's learned nowcast, the dusk regression weighted toward each
night's dew point). A daemon's learner learns one night at a time and solves as it goes. Both
must give the same calibration at every night, and `frostwatch backtest` the same rows.
"""

from __future__ import annotations

import dataclasses
import datetime as dt
import importlib.util
import json
import math
import sys
from pathlib import Path

import numpy as np
import pytest
from forecast_site import make_cfg
from test_backtest import synthetic_log

from frostwatch import backtest as bt
from frostwatch import forecast
from frostwatch.forecast import learner as lm
from frostwatch.night import LOOKBACK, nights_of_dates, slice_series
from frostwatch.physics import humidity


def same(a, b) -> bool:
    """Equal to the last bit (a float's sign of zero included), arrays and nested values alike."""
    if dataclasses.is_dataclass(a) and not isinstance(a, type):
        return type(a) is type(b) and all(same(getattr(a, f.name), getattr(b, f.name))
                                          for f in dataclasses.fields(a) if f.name != "extra")
    if isinstance(a, np.ndarray) or isinstance(b, np.ndarray):
        a, b = np.asarray(a), np.asarray(b)
        return a.dtype == b.dtype and a.shape == b.shape and a.tobytes() == b.tobytes()
    if isinstance(a, float) or isinstance(b, float):
        return type(a) is type(b) and repr(a) == repr(b)
    if isinstance(a, tuple | list):
        return type(a) is type(b) and len(a) == len(b) and all(same(x, y) for x, y in zip(a, b, strict=True))
    if isinstance(a, dict):
        return type(a) is type(b) and list(a) == list(b) and all(same(a[k], b[k]) for k in a)
    return type(a) is type(b) and a == b


def _records(cfg, series, n):
    s = cfg.site
    nights = nights_of_dates(s.latitude, s.longitude, s.tz, [dt.date(2027, 3, 20) + dt.timedelta(days=k) for k in range(n)])
    obs = [slice_series(series, (x.sunset_utc - LOOKBACK).timestamp(), x.sunrise_utc.timestamp() + 3600.0) for x in nights]
    return [r for r in forecast.night_records(cfg.blocks[0], cfg, list(zip(obs, nights, strict=True))) if r is not None]


def test_planned_snapshots_are_the_per_night_snapshots(tmp_path):
    cfg = make_cfg(tmp_path)
    recs = _records(cfg, synthetic_log(cfg, n=45), 45)
    recs[7] = dataclasses.replace(recs[7], protected=True)  # counted, not learned: the plan steps over it
    assert len(recs) > 40
    fast, slow = lm.Learner(cfg.forecast.calibration_nights), lm.Learner(cfg.forecast.calibration_nights)
    fast.plan(recs)
    planned = 0
    for rec in recs:
        a, b = fast.calibration(), slow.calibration()
        assert same(a, b), rec.night
        planned += bool(a.extra)  # the weighted regression of this night's dew point, worked out ahead
        x, h = rec.features, max(0.25, rec.hours_to_sunrise)
        assert same(a.regression_c(x, h), b.regression_c(x, h))
        assert same(a.predict_c(rec.prior_c, x, h, rec.evening_curve_c), b.predict_c(rec.prior_c, x, h, rec.evening_curve_c))
        assert fast.learn(rec) == slow.learn(rec)
    assert fast._plan is not None and fast._plan.next == len(recs)  # followed to the end
    assert planned > 35
    assert same(fast.calibration(), slow.calibration())


def test_planned_snapshots_with_the_reduced_regression_speaking(tmp_path, monkeypatch):
    """The dusk regression on fewer inputs (`calibration.REDUCED_INPUTS`), here made to speak from
    its tenth scored night on: planned and per-night learners score it alike and forecast alike
    (the typical Sand Point year below has it speak by its own rule)."""
    monkeypatch.setattr(lm.Learner, "reduced_speaks", lambda self: self.reduced_gain[2] >= 10)
    cfg = make_cfg(tmp_path)
    recs = _records(cfg, synthetic_log(cfg, n=30), 30)
    fast, slow = lm.Learner(cfg.forecast.calibration_nights), lm.Learner(cfg.forecast.calibration_nights)
    fast.plan(recs)
    spoke = 0
    for rec in recs:
        a, b = fast.calibration(), slow.calibration()
        assert same(a, b), rec.night
        spoke += a.use_reduced
        x, h = rec.features, max(0.25, rec.hours_to_sunrise)
        for reduced in (None, True, False):
            assert same(a.regression_c(x, h, reduced), b.regression_c(x, h, reduced))
        fast.learn(rec)
        slow.learn(rec)
        assert same(fast.reduced_gain, slow.reduced_gain)
    assert spoke > 10


def test_a_learner_that_leaves_its_plan_solves_as_it_goes(tmp_path):
    cfg = make_cfg(tmp_path)
    recs = _records(cfg, synthetic_log(cfg, n=20), 20)
    fast, slow = lm.Learner(cfg.forecast.calibration_nights), lm.Learner(cfg.forecast.calibration_nights)
    fast.plan(recs[:5] + recs[6:])  # one night fewer than it will learn
    for rec in recs:
        fast.learn(rec)
        slow.learn(rec)
        assert same(fast.calibration(), slow.calibration())
    assert fast._plan is None


def test_ridge_with_a_penalty_per_matrix_is_ridge_one_at_a_time():
    from frostwatch.forecast.ridge import ridge_solve, ridge_solve_many

    rng = np.random.default_rng(5)
    ms, lams = [], []
    for _ in range(40):
        n, k = int(rng.integers(0, 40)), 4
        x = rng.normal(size=(n, k))
        if n and rng.random() < 0.3:
            x[:, 1] = 2.0  # no spread: grouped apart
        z = np.column_stack([np.ones(n), x, x @ rng.normal(size=k)])
        ms.append(z.T @ z)
        lams.append(float(rng.uniform(0.5, 20)))
    for m, lam, got in zip(ms, lams, ridge_solve_many(np.array(ms), np.array(lams)), strict=True):
        want = ridge_solve(m, lam)
        assert (want is None) == (got is None)
        if want is not None:
            assert same(want[0], got[0]) and same(want[1], got[1]) and same(want[2], got[2])


def _rows_both_ways(monkeypatch, cfg, series) -> tuple[str, str]:
    fast = json.dumps(bt.backtest(cfg, series))
    with monkeypatch.context() as m:
        m.setattr(lm.Learner, "plan", lambda self, records: None)
        slow = json.dumps(bt.backtest(cfg, series))
    return fast, slow


def test_backtest_rows_are_the_per_night_rows_on_synthetic_nights(tmp_path, monkeypatch):
    cfg = make_cfg(tmp_path)
    fast, slow = _rows_both_ways(monkeypatch, cfg, synthetic_log(cfg, n=30))
    assert fast == slow and len(json.loads(fast)) > 25


def _typical_year(site: str, tmp_path):
    """(config, series) of one of pvlib's TMY3 years as bench/tmy.py converts it and the backtest reads it."""
    pytest.importorskip("pvlib")
    from frostwatch.commands.logs import _first_rows
    from frostwatch.config import load_config
    from frostwatch.ingest.bulk import read_log_columns, series_of_columns

    spec = importlib.util.spec_from_file_location("bench_tmy", Path(__file__).resolve().parents[1] / "bench" / "tmy.py")
    tmy = sys.modules.get("bench_tmy") or importlib.util.module_from_spec(spec)
    if "bench_tmy" not in sys.modules:
        sys.modules["bench_tmy"] = tmy
        spec.loader.exec_module(tmy)
    log, cfg_path, _ = tmy.write_log_and_config(tmy.SITES[site], tmp_path)
    cfg = load_config(str(cfg_path))
    cols, _ = read_log_columns(log, {s.id for s in cfg.stations})
    return cfg, series_of_columns(cols, _first_rows(cols), key_order="file")


@pytest.mark.parametrize("site", ["greensboro", "sand_point"])
def test_backtest_rows_are_the_per_night_rows_on_a_typical_year(tmp_path, monkeypatch, site):
    """pvlib's Greensboro NC and Sand Point AK TMY3 years (NREL, Wilcox & Marion 2008), as
    bench/tmy.py converts them (at Sand Point the dusk regression on T0 and Td0 takes over)."""
    cfg, series = _typical_year(site, tmp_path)
    fast, slow = _rows_both_ways(monkeypatch, cfg, series)
    rows = json.loads(fast)
    assert fast == slow and len(rows) > 300
    assert math.isfinite(bt.backtest_summary(rows)["mae_c"])


LEFT_OUT = {"crossings_utc", "curve_time_utc", "curve_air_temp_c", "curve_cold_edge_c", "wet_bulb_c",
            "dew_point_trend_c_per_h", "dew_point_at_start_c"}


@pytest.mark.parametrize("protection", ["none", "overtree_sprinkler"])
def test_a_projection_without_curves_is_the_same_projection(tmp_path, protection):
    """The backtest's dusk forecasts skip the curves and crossings it does not score: every
    other field is the projection's own, at dusk, during the night and after sunrise."""
    cfg = make_cfg(tmp_path, protection)
    series = synthetic_log(cfg, n=12)
    s = cfg.site
    nights = nights_of_dates(s.latitude, s.longitude, s.tz, [dt.date(2027, 3, 20) + dt.timedelta(days=k) for k in range(12)])
    learner = lm.Learner(cfg.forecast.calibration_nights)
    checked = 0
    for night in nights:
        obs = slice_series(series, (night.sunset_utc - LOOKBACK).timestamp(), night.sunrise_utc.timestamp() + 3600.0)
        for at in (night.sunset_utc, night.dusk_utc, night.dusk_utc + dt.timedelta(hours=3, minutes=7),
                   night.sunrise_utc - dt.timedelta(minutes=30), night.sunrise_utc + dt.timedelta(minutes=20)):
            win = slice_series(obs, (night.sunset_utc - LOOKBACK).timestamp(), at.timestamp())
            full = forecast.project_block(at, cfg.blocks[0], cfg, win, night, learner.calibration())
            lean = forecast.project_block(at, cfg.blocks[0], cfg, win, night, learner.calibration(), curves=False)
            for f in dataclasses.fields(full):
                if f.name not in LEFT_OUT:
                    assert same(getattr(full, f.name), getattr(lean, f.name)), (at, f.name)
            assert lean.crossings_utc == {} and lean.curve_time_utc == ()
            checked += full.predicted_min_c is not None
        rec = forecast.night_record(cfg.blocks[0], cfg, obs, night)
        if rec is not None:
            learner.learn(rec)
    assert checked > 40


# ---- the nowcast's training points of many nights at once -------------------------------------


def _training_samples_one_night(cfg, series, station, stations, t, v, t0_s, t0_c, sunrise_s, end_s):
    """The nowcast's training points of one night as they were worked out before they were
    batched over nights (`nowcast.training_samples_many` must give these, bit for bit)."""
    from frostwatch.forecast.nowcast import NOWCAST_SAMPLE_STEP_S, NOWCAST_START_S, feature_matrix
    from frostwatch.forecast.sensors import INPUT_WINDOW_S, means_as_of
    from frostwatch.physics import humidity

    i_end = int(np.searchsorted(t, end_s, side="right"))
    grid = np.arange(t0_s + NOWCAST_START_S, sunrise_s + 1.0, NOWCAST_SAMPLE_STEP_S)
    idx = np.unique(np.searchsorted(t, grid, side="left"))
    idx = idx[(idx < i_end) & (t[np.minimum(idx, len(t) - 1)] <= sunrise_s)]
    if not len(idx):
        return ()
    times = t[idx]
    ids = [s.id for s in stations] + [s.id for s in cfg.stations if s.block is None]
    wind = means_as_of(series, ids, "wind_speed", times, INPUT_WINDOW_S)
    cloud = means_as_of(series, [s.id for s in cfg.stations], "cloud_area_fraction", times, INPUT_WINDOW_S)
    td = np.full(len(times), np.nan)
    for sid in [station] + [i for i in ids if i != station]:
        missing = np.isnan(td)
        if not missing.any():
            break
        d = means_as_of(series, [sid], "dew_point_temperature", times, INPUT_WINDOW_S)
        if np.isfinite(d[missing]).all():
            td = np.where(missing, d, td)
            continue
        rh = means_as_of(series, [sid], "relative_humidity", times, INPUT_WINDOW_S)
        ta = v[idx] if sid == station else means_as_of(series, [sid], "air_temperature", times, INPUT_WINDOW_S)
        ok = np.isfinite(rh) & np.isfinite(ta)
        from_rh = np.full(len(times), np.nan)
        if ok.any():
            from_rh[ok] = np.asarray(humidity.dew_point_c_from_rel_humidity(ta[ok], np.clip(rh[ok], 1.0, 100.0)), dtype=float)
        td = np.where(missing, np.where(np.isfinite(d), d, from_rh), td)
    latest, feats, ok = feature_matrix(t, v, t0_s, t0_c, sunrise_s, times, wind, cloud, td)
    tail_min = np.minimum.accumulate(v[:i_end][::-1])[::-1]
    drops = tail_min[idx] - v[idx]
    return tuple((tuple(feats[k].tolist()), float(drops[k])) for k in np.nonzero(ok)[0].tolist())


def _jobs_of(cfg, block, series, nights):
    """Each night's (its readings, speaking station, its air t and v, t0, T0, sunrise, end), as
    `forecast.records` hands them to `training_samples_many`."""
    from frostwatch.forecast.sensors import dusk_inputs, speaking_station, station_state

    stations = cfg.stations_of(block.id)
    jobs = []
    for night in nights:
        obs = slice_series(series, (night.sunset_utc - LOOKBACK).timestamp(), night.sunrise_utc.timestamp() + 3600.0)
        dusk_s = night.dusk_utc.timestamp()
        speaker = speaking_station([station_state(s, obs, dusk_s, cfg.forecast.stale_after_intervals) for s in stations])
        di = None if speaker is None else dusk_inputs(cfg, obs, speaker.station, stations, dusk_s)
        if di is not None:
            t, v = obs[(speaker.station, "air_temperature")]
            jobs.append((obs, speaker.station, t, v, dusk_s, di.temp_c, night.sunrise_utc.timestamp(),
                         night.sunrise_utc.timestamp() + 3600.0))
    return jobs


def _check_many_is_one_by_one(cfg, block, jobs) -> int:
    from frostwatch.forecast.nowcast import training_samples_many

    many = training_samples_many(cfg, cfg.stations_of(block.id), jobs)
    for job, got in zip(jobs, many, strict=True):
        assert same(got, _training_samples_one_night(cfg, job[0], job[1], cfg.stations_of(block.id), *job[2:])), job[4]
    return sum(len(g) for g in many)


def _demo_farm():
    """(config, series, the same series with each sensor silent for a few random hours, nights)
    of the demo farm's three invented nights (sample_sensor_logs/)."""
    from frostwatch.commands.logs import _first_rows
    from frostwatch.config import load_config
    from frostwatch.ingest.bulk import read_log_columns, series_of_columns

    demo = Path(__file__).resolve().parents[1] / "sample_sensor_logs"
    cfg = load_config(str(demo / "demo-farm.toml"))
    series: dict = {}
    for log in sorted(demo.glob("2027-04-1*.csv")):
        cols, _ = read_log_columns(log, {s.id for s in cfg.stations})
        for key, (t, v) in series_of_columns(cols, _first_rows(cols), key_order="file").items():
            old = series.get(key)
            series[key] = (t, v) if old is None else (np.concatenate([old[0], t]), np.concatenate([old[1], v]))
    s = cfg.site
    nights = nights_of_dates(s.latitude, s.longitude, s.tz, [dt.date(2027, 4, 14) + dt.timedelta(days=k) for k in range(3)])
    rng = np.random.default_rng(7)
    holed = {}
    for key, (t, v) in series.items():  # each series silent for a few random hours
        keep = np.ones(len(t), bool)
        for start in rng.uniform(t[0], t[-1], 3):
            keep &= ~((t >= start) & (t < start + rng.uniform(1800, 4 * 3600)))
        holed[key] = (t[keep], v[keep])
    return cfg, series, holed, nights


def test_training_points_of_many_nights_are_each_nights_own_on_the_demo_farm():
    """The demo farm's nights (invented, sample_sensor_logs/): humidity turned into dew points,
    two crop-height sensors in a block, site-wide sensors, every block; and the same nights with
    sensors silent for hours, so that nights differ in what they have."""
    cfg, series, holed, nights = _demo_farm()
    checked = 0
    for block in cfg.blocks:
        for ser in (series, holed):
            checked += _check_many_is_one_by_one(cfg, block, _jobs_of(cfg, block, ser, nights))
    assert checked > 100


def test_training_points_of_many_nights_are_each_nights_own_on_a_typical_year(tmp_path):
    """pvlib's Sand Point AK TMY3 year (NREL, Wilcox & Marion 2008) as bench/tmy.py converts it:
    nights of every length, cloud and wind sensors, months from different years."""
    cfg, series = _typical_year("sand_point", tmp_path)
    nights = nights_of_dates(cfg.site.latitude, cfg.site.longitude, cfg.site.tz, bt.candidate_nights(cfg, series))
    assert _check_many_is_one_by_one(cfg, cfg.blocks[0], _jobs_of(cfg, cfg.blocks[0], series, nights)) > 3000


# ---- the dusk forecast from the night's record -----------------------------------------------


def _check_dusk_memo(cfg, series, nights) -> int:
    """Each block's projection at each night's dusk with `projection.dusk_memo` (the dusk inputs
    and evening curve taken from the night's record) is the projection without it, field by
    field to the last bit, under a calibration that learns night by night."""
    from frostwatch.forecast.projection import dusk_memo

    checked = 0
    for block in cfg.blocks:
        learner = lm.Learner(cfg.forecast.calibration_nights)
        for night in nights:
            start_s = (night.sunset_utc - LOOKBACK).timestamp()
            obs = slice_series(series, start_s, night.sunrise_utc.timestamp() + 3600.0)
            rec = forecast.night_record(block, cfg, obs, night)
            if rec is None:
                continue
            win, cal = slice_series(obs, start_s, night.dusk_utc.timestamp()), learner.calibration()
            want = forecast.project_block(night.dusk_utc, block, cfg, win, night, cal, curves=False)
            memo = dusk_memo(block.id, rec, night, cal, float(humidity.pressure_hpa_from_elevation(cfg.site.elevation_m)))
            got = forecast.project_block(night.dusk_utc, block, cfg, win, night, cal, curves=False, memo=memo)
            assert same(got, want), (block.id, night.date)
            assert ("dusk", block.id, want.station, night.dusk_utc.timestamp()) in memo  # it was the memo's
            learner.learn(rec)
            checked += want.predicted_min_c is not None
    return checked


def test_the_dusk_forecast_from_the_record_is_the_projections_own_on_the_demo_farm():
    """The demo farm's nights (humidity sensors, two crop-height sensors in a block, site-wide
    sensors) and the same nights with sensors silent for hours."""
    cfg, series, holed, nights = _demo_farm()
    assert _check_dusk_memo(cfg, series, nights) + _check_dusk_memo(cfg, holed, nights) >= 8


def test_the_dusk_forecast_from_the_record_is_the_projections_own_on_a_typical_year(tmp_path):
    """pvlib's Miami FL TMY2 year (NREL; months from 1961-90) as bench/tmy.py converts it: a
    calibration that learns over a whole year, months from different years."""
    cfg, series = _typical_year("miami", tmp_path)
    nights = nights_of_dates(cfg.site.latitude, cfg.site.longitude, cfg.site.tz, bt.candidate_nights(cfg, series))
    assert _check_dusk_memo(cfg, series, nights) > 300
