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


def test_backtest_rows_are_the_per_night_rows_on_a_typical_year(tmp_path, monkeypatch):
    """pvlib's Greensboro NC TMY3 year (NREL, Wilcox & Marion 2008), as bench/tmy.py converts it."""
    pytest.importorskip("pvlib")
    from frostwatch.commands.logs import _first_rows
    from frostwatch.config import load_config
    from frostwatch.ingest.bulk import read_log_columns, series_of_columns

    spec = importlib.util.spec_from_file_location("bench_tmy", Path(__file__).resolve().parents[1] / "bench" / "tmy.py")
    tmy = sys.modules.get("bench_tmy") or importlib.util.module_from_spec(spec)
    if "bench_tmy" not in sys.modules:
        sys.modules["bench_tmy"] = tmy
        spec.loader.exec_module(tmy)
    log, cfg_path, _ = tmy.write_log_and_config(tmy.SITES["greensboro"], tmp_path)
    cfg = load_config(str(cfg_path))
    cols, _ = read_log_columns(log, {s.id for s in cfg.stations})
    fast, slow = _rows_both_ways(monkeypatch, cfg, series_of_columns(cols, _first_rows(cols), key_order="file"))
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
