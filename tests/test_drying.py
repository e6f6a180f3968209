"""Tonight's dew point, projected: the bounded trend and the wet-bulb crossing that follows a falling
dew point, checked against psychrolib (ASHRAE 2017) and FAO-FP Table 7.5's method."""

import math

import numpy as np
import psychrolib
import pytest

from frostwatch.drying import (
    MAX_FALL_C,
    MAX_FALL_C_PER_H,
    dew_point_trend_c_per_h,
    projected_dew_point_c,
    projected_fall_c_per_h,
    start_air_temp_at_c,
    wet_bulb_crossing_s,
)
from frostwatch.physics.humidity import vapour_pressure_hpa_from_dew_point

psychrolib.SetUnitSystem(psychrolib.SI)
P_HPA = 1013.25


def _wet_bulb_psychrolib_c(t, td):
    # psychrolib reads a sub-zero dew point as a frost point, so hand it the humidity ratio from
    # the vapour pressure over water (the hygrometer convention)
    w = psychrolib.GetHumRatioFromVapPres(float(vapour_pressure_hpa_from_dew_point(td)) * 100.0, P_HPA * 100.0)
    return psychrolib.GetTWetBulbFromHumRatio(t, w, P_HPA * 100.0)


def _air_for_wet_bulb_psychrolib_c(target, td):
    lo, hi = target, target + 15.0  # the wet bulb rises with the air at a fixed dew point: bisect
    for _ in range(60):
        mid = 0.5 * (lo + hi)
        if _wet_bulb_psychrolib_c(mid, td) < target:
            lo = mid
        else:
            hi = mid
    return 0.5 * (lo + hi)


def test_each_2_k_fall_of_dew_point_raises_the_start_by_about_1_k_psychrolib():
    # Hand computation with psychrolib: the air temperature whose wet bulb is T10 + margin
    # (-2.2 + 1.0 = -1.2 C) at a dew point of -6 C, then -8 C, then -10 C. Each 2 K fall raises it
    # by 0.8-1.0 K (FAO-FP Table 7.5 method; frost-physics.md 10's table: 0.2 -> 1.2 -> 2.0 C at
    # Tc -2).
    starts = [_air_for_wet_bulb_psychrolib_c(-1.2, td) for td in (-6.0, -8.0, -10.0)]
    steps = np.diff(starts)
    assert np.all((steps > 0.75) & (steps < 1.05))
    # the same with frostwatch's projection: a dew point falling 0.5 K/h from -6 C reaches -8 C
    # after 4 h; the start air temperature at that time is psychrolib's for -8 C
    grid = np.arange(0.0, 4 * 3600.0 + 1, 300.0)
    td = projected_dew_point_c(grid, 0.0, -6.0, -0.5)
    assert td[-1] == pytest.approx(-8.0)
    got = start_air_temp_at_c(grid, 4 * 3600.0, td, -1.2, P_HPA)
    assert got == pytest.approx(starts[1], abs=0.05)


def test_wet_bulb_crossing_comes_earlier_on_a_drying_night():
    # Air cooling 1 K/h from +4 C; threshold -1.2 C. Dew point held at -6 C: the crossing is where
    # the air reaches the start temperature for -6 C. Falling 0.5 K/h: where it reaches the
    # (warmer, later-night) start temperature for the dew point of that moment -> earlier.
    grid = np.arange(0.0, 8 * 3600.0 + 1, 300.0)
    air = 4.0 - grid / 3600.0
    fixed = wet_bulb_crossing_s(grid, air, np.full_like(grid, -6.0), -1.2, P_HPA)
    falling = wet_bulb_crossing_s(grid, air, projected_dew_point_c(grid, 0.0, -6.0, -0.5, air), -1.2, P_HPA)
    s_fixed = _air_for_wet_bulb_psychrolib_c(-1.2, -6.0)
    assert fixed / 3600.0 == pytest.approx(4.0 - s_fixed, abs=0.05)
    # falling: solve 4 - h = start(-6 - 0.5 h) with psychrolib, by bisection on h
    lo, hi = 0.0, 8.0
    for _ in range(50):
        h = 0.5 * (lo + hi)
        if 4.0 - h > _air_for_wet_bulb_psychrolib_c(-1.2, -6.0 - 0.5 * h):
            lo = h
        else:
            hi = h
    assert falling / 3600.0 == pytest.approx(h, abs=0.05)
    assert falling < fixed - 0.3 * 3600.0  # at least 20 min earlier here


def test_trend_is_bounded_and_only_a_fall_counts():
    t = np.arange(0.0, 7200.0 + 1, 600.0)
    assert dew_point_trend_c_per_h(t, -5.0 - 0.6 * t / 3600.0, 7200.0) == pytest.approx(-0.6)
    assert projected_fall_c_per_h(-0.6) == pytest.approx(-0.6)
    assert projected_fall_c_per_h(-3.0) == -MAX_FALL_C_PER_H
    assert projected_fall_c_per_h(0.4) == 0.0  # a rising dew point is not projected to keep rising
    assert projected_fall_c_per_h(None) == 0.0
    assert dew_point_trend_c_per_h(t[:2], np.array([-5.0, -5.1]), 600.0) is None  # too few readings
    grid = np.arange(0.0, 12 * 3600.0 + 1, 3600.0)
    td = projected_dew_point_c(grid, 0.0, -5.0, -1.0)
    assert td.min() == pytest.approx(-5.0 - MAX_FALL_C)
    capped = projected_dew_point_c(grid, 0.0, -5.0, -0.2, air_curve_c=np.full_like(grid, -5.5))
    assert np.all(capped <= -5.5)


def test_no_crossing_and_dew_point_above_threshold():
    grid = np.arange(0.0, 3600.0 + 1, 300.0)
    assert wet_bulb_crossing_s(grid, np.full_like(grid, 5.0), np.full_like(grid, -3.0), -2.0, P_HPA) is None
    # dew point above the threshold: the wet bulb reaches it only with the air
    air = 0.0 - grid / 3600.0 * 3.0
    got = wet_bulb_crossing_s(grid, air, np.full_like(grid, -1.0), -2.0, P_HPA)
    assert got / 3600.0 == pytest.approx(2.0 / 3.0, abs=0.02)
    assert math.isfinite(start_air_temp_at_c(grid, None, np.full_like(grid, -8.0), -1.2, P_HPA))


def test_projection_on_a_drying_night_uses_the_falling_dew_point(tmp_path):
    # a sprinkler block: air cooling along a square-root curve, dew point falling 0.6 K/h. The
    # projected wet-bulb crossing of T10 + margin must come where the air curve meets the start
    # temperature of the dew point projected for that moment (earlier than with today's held).
    import datetime as dt

    from forecast_site import make_cfg

    from frostwatch import forecast
    from frostwatch.night import night_of_date

    cfg = make_cfg(tmp_path, "overtree_sprinkler")
    block = cfg.block("b")
    night = night_of_date(46.4, -120.3, cfg.site.tz, dt.date(2027, 4, 20))
    t0 = night.sunset_utc.timestamp()
    t = np.arange(t0 - 3 * 3600, t0 + 3 * 3600 + 1, 300.0)
    air = 9.0 - 2.0 * np.sqrt(np.maximum(0.0, (t - t[0]) / 3600.0))
    td = -2.0 - 0.6 * (t - t[0]) / 3600.0
    series = {("b-low", "air_temperature"): (t, air), ("b-low-2", "air_temperature"): (t, air + 0.3),
              ("b-low", "dew_point_temperature"): (t, td)}
    now = dt.datetime.fromtimestamp(t[-1], dt.UTC)
    p = forecast.project_block(now, block, cfg, series, night)
    assert p.dew_point_trend_c_per_h == pytest.approx(-0.6, abs=0.01)
    held = p.crossings_utc["wet_bulb_t10_margin"]
    assert p.dew_point_at_start_c < p.dew_point_c
    # the same curve with the dew point held: later
    grid = np.array([c.timestamp() for c in p.curve_time_utc])
    curve = np.array(p.curve_air_temp_c)
    thr = block.kill_10pct_c + block.margin_c
    from frostwatch.physics.humidity import pressure_hpa_from_elevation

    fixed = wet_bulb_crossing_s(grid, curve, np.full_like(grid, p.dew_point_c), thr, pressure_hpa_from_elevation(300.0))
    assert held is not None and fixed is not None
    assert held.timestamp() < fixed - 600.0  # at least 10 min earlier (the curve is stored thinned)
    assert p.dew_point_at_start_c == pytest.approx(
        max(p.dew_point_c - 0.6 * ((held or p.predicted_min_at_utc).timestamp() - t[-1]) / 3600.0, p.dew_point_c - MAX_FALL_C),
        abs=0.05)
