"""A season's night records in one pass (`forecast.night_records`, the backtest's path: the
physics priors of all nights stepped together) are the records `night_record` makes one night at
a time (the daemon's path), field for field."""

from __future__ import annotations

import datetime as dt

from forecast_site import make_cfg
from test_backtest import synthetic_log

from frostwatch import forecast
from frostwatch.forecast import projection
from frostwatch.pipeline import LOOKBACK, Evaluator, slice_series


def test_records_of_a_season_equal_each_night_alone(tmp_path):
    cfg = make_cfg(tmp_path)
    series = synthetic_log(cfg, n=20)
    ev = Evaluator(cfg)
    nights = ev.nights([dt.date(2027, 3, 19) + dt.timedelta(days=k) for k in range(22)])  # and two uncovered
    windows = [(slice_series(series, (n.sunset_utc - LOOKBACK).timestamp(), n.sunrise_utc.timestamp() + 3600.0), n)
               for n in nights]
    block = cfg.blocks[0]
    many = forecast.night_records(block, cfg, windows, ev.pressure_hpa)
    projection._PRIMED.clear()
    projection._prior_cached.cache_clear()
    one = [forecast.night_record(block, cfg, w, n, ev.pressure_hpa) for w, n in windows]
    assert many == one
    assert sum(r is not None for r in many) == 20 and many[0] is None and many[-1] is None
