"""The year replay's CPU cuts (issue 19, item 1, sixth pass) change no value: each fast path is held
to the plain way it replaces.

- `curves.crossing_times` tells a curve that stays above every threshold from its minimum alone;
- `Calibration.nowcast_blend_c` keeps its "skill-weighted: ..." text per bin and set of methods;
- `curves.grid_utc` hands out the same datetime objects for the same seconds (their hashes kept).
"""

from __future__ import annotations

import dataclasses
import datetime as dt
import math

import numpy as np
from hypothesis import given, settings
from hypothesis import strategies as st

from frostwatch.forecast.calibration import NOWCAST_BINS, Calibration, nowcast_bin
from frostwatch.forecast.curves import crossing_time, crossing_times, grid_utc, utc_seconds

THRESHOLDS = st.lists(st.floats(min_value=-9.0, max_value=9.0) | st.just(math.nan), min_size=1, max_size=4)


@settings(max_examples=300, deadline=None)
@given(st.lists(st.floats(min_value=-8.0, max_value=8.0), min_size=1, max_size=60), THRESHOLDS,
       st.sampled_from([0.0, 1e-12, 0.004, 0.3, 5.0]), st.booleans())
def test_a_curve_above_every_threshold_crosses_none_as_crossing_time_says(curve, thresholds, lift, nan_in_curve):
    """A curve lifted so that its lowest point is the highest threshold plus `lift` (0: the
    lowest point *is* the threshold, which is a crossing): crossing_times is each crossing_time,
    to the bit, NaN thresholds and a NaN in the curve included."""
    c = np.array(curve, dtype=float)
    finite = [t for t in thresholds if t == t]
    c = c - c.min() + (max(finite) if finite else 0.0) + lift
    if nan_in_curve and len(c) > 2:
        c[len(c) // 2] = math.nan
    grid = 1.8e9 + 300.0 * np.arange(len(c), dtype=float)
    want = [repr(crossing_time(grid, c, thr)) for thr in thresholds]
    assert [repr(x) for x in crossing_times(grid, c, thresholds)] == want


def test_a_curve_touching_the_threshold_at_its_lowest_point_crosses_there():
    grid = 1.8e9 + 300.0 * np.arange(4, dtype=float)
    c = np.array([3.0, 1.0, -1.0, 2.0])
    assert crossing_times(grid, c, [-1.0, -1.5, math.nan]) == [grid[1] + 300.0, None, None]
    assert crossing_times(grid, c, [-1.5]) == [None]


def _calibration(weights_by_bin: dict, naive: float | None) -> Calibration:
    w = [None] * NOWCAST_BINS
    for b, pairs in weights_by_bin.items():
        w[b] = tuple(pairs)
    return Calibration(nc_weights=tuple(w), naive_fall_c=naive)


def _plain_words(cal: Calibration, f, hours_left: float, learned) -> str:
    """The text as nowcast_blend_c wrote it before it was kept: formatted afresh."""
    comps = ["refit", "dusk_curve"] + (["naive"] if cal.naive_drop_c(f) is not None else []) + (
        ["learned"] if learned is not None else [])
    w = dict(cal.nc_weights[nowcast_bin(hours_left)])
    total = sum([w[k] for k in comps])
    return "skill-weighted: " + ", ".join(f"{k} {w[k] / total:.0%}" for k in comps)


@settings(max_examples=200, deadline=None)
@given(st.lists(st.tuples(st.sampled_from([0.5, 2.0, 6.0, 11.0]), st.booleans(),
                          st.sampled_from([None, -0.4, 0.0])), min_size=1, max_size=12),
       st.lists(st.floats(min_value=0.0, max_value=5.0), min_size=4, max_size=4))
def test_the_blend_words_kept_per_bin_are_the_words_formatted_afresh(calls, weights):
    """Calls in any order, bins and methods (the naive fall there or not, the learned fall there
    or not) say what formatting each time says; a calibration copied with other weights (sharing
    the kept texts' dict) says its own weights' words."""
    methods = ("refit", "dusk_curve", "naive", "learned")
    pairs = list(zip(methods, [x + 0.01 for x in weights], strict=True))
    by_bin = {nowcast_bin(h): pairs for h in (0.5, 2.0, 6.0, 11.0)}
    with_naive, without = _calibration(by_bin, 0.8), _calibration(by_bin, None)
    other = dataclasses.replace(with_naive, nc_weights=tuple(
        None if p is None else tuple((k, v * (i + 2)) for i, (k, v) in enumerate(p)) for p in with_naive.nc_weights))
    assert other.extra is with_naive.extra  # the copy shares the kept texts
    f = (-0.5, 1.0, -0.2, 1.0, 0.0, 2.0)
    for hours_left, naive, learned in calls:
        for cal in ((with_naive if naive else without), other):
            _, said = cal.nowcast_blend_c(f, hours_left, -0.7, 1.5, learned, True)
            assert said == _plain_words(cal, f, hours_left, learned)


@given(st.sampled_from([9.0e8, 9.0e8 + 120.0, 1.7e9 + 0.5, 1.7e9 + 1.5]), st.floats(min_value=0.0, max_value=14.0))
def test_the_curves_instants_are_the_same_objects_from_one_grid_to_the_next(now_s, hours):
    """Two grids two minutes apart give equal instants as the one-by-one conversion does, and
    where they share an instant it is the same datetime object."""
    grids = []
    for start in (now_s, now_s + 120.0, now_s + 600.0):
        sunrise_s = now_s + hours * 3600.0
        g = np.arange(start, max(start, sunrise_s) + 1.0, 300.0)
        if g[-1] < sunrise_s:
            g = np.concatenate((g, (sunrise_s,)))
        got = grid_utc(g, 1, 300.0)
        assert got == utc_seconds(g.tolist())
        grids.append(got)
    shared = set(map(id, grids[0])) & set(map(id, grids[2]))
    assert len(shared) == len(set(grids[0]) & set(grids[2]))


@settings(max_examples=300, deadline=None)
@given(st.lists(st.tuples(st.integers(min_value=-3, max_value=400), st.sampled_from([300, 600, 900, 1200]),
                          st.integers(min_value=0, max_value=60)), min_size=1, max_size=25),
       st.sampled_from([0, 60, 120, 7]))
def test_the_runs_of_instants_sliced_from_earlier_runs_are_the_instants_made_afresh(calls, phase_s):
    """`curves._whole_seconds_run` over any sequence of grids (forward as a night's evaluations,
    backward, other steps, runs longer than the one kept, the table emptied when full) gives the
    datetimes of `_utc_second` for each instant, the same objects where that cache holds them."""
    from frostwatch.forecast import curves

    for k, every, m in calls:
        a = 1_800_000_000 + 120 * k + phase_s
        got = curves._whole_seconds_run(a, every, m)
        want = tuple(dt.datetime.fromtimestamp(x, tz=dt.UTC) for x in range(a, a + m * every, every))
        assert got == want and all(g.tzinfo is dt.UTC for g in got)
    old = curves.GRID_RUNS_KEPT
    curves.GRID_RUNS_KEPT = 2  # emptied when full: still the same instants
    try:
        for k, every, m in calls:
            a = 1_800_000_000 + 120 * k + phase_s
            assert curves._whole_seconds_run(a, every, m) == tuple(curves._utc_second(x) for x in range(a, a + m * every, every))
    finally:
        curves.GRID_RUNS_KEPT = old


NUMBERS = st.sampled_from([None, 0.0, -0.0, 0, 1, 1.0, True, False, 2.5, -3.25, math.nan, math.inf, np.float64(2.5),
                           np.float64(-0.0), 12.34])
ZONES = [dt.UTC, dt.timezone(dt.timedelta(0)), dt.timezone(dt.timedelta(hours=-5)), None]


@st.composite
def _projections(draw):
    from frostwatch.models import Projection

    t = dt.datetime(2027, 4, 14, 9, 30, tzinfo=dt.UTC)
    crossings = {}
    for k in draw(st.lists(st.sampled_from(["t10", "t10_margin", "t90", "t10_cold_edge"]), unique=True, max_size=4)):
        zone = draw(st.sampled_from(ZONES))
        crossings[k] = None if zone is None else (t + dt.timedelta(minutes=draw(st.sampled_from([0, 30])))).astimezone(zone)
    notes = tuple(draw(st.lists(st.sampled_from(["no tower sensor: inversion not measured", "wind 3.1 m/s", "é\"q\""]),
                                max_size=3)))
    return Projection(
        time_utc=t, block="b", station=draw(st.sampled_from([None, "s1", "s2"])), air_temp_c=draw(NUMBERS),
        dew_point_c=draw(NUMBERS), wet_bulb_c=draw(NUMBERS), predicted_min_c=None, predicted_min_at_utc=None,
        band_c=None, crossings_utc=crossings, inversion_c=draw(NUMBERS), projected_inversion_c=draw(NUMBERS),
        inversion_class=draw(st.sampled_from([None, "strong", "weak"])), wind_speed_m_s=draw(NUMBERS),
        regime="radiation", method="m", notes=notes,
    )


LOOK_ALIKES = [[0.0, -0.0, 0, False, np.float64(0.0), np.float64(-0.0)], [1, 1.0, True, np.float64(1.0)],
               [2.5, np.float64(2.5)], [math.nan, np.float64(math.nan)]]
DETAIL_NUMBERS = ["air_temp_c", "dew_point_c", "wet_bulb_c", "inversion_c", "projected_inversion_c", "wind_speed_m_s"]


@settings(max_examples=300, deadline=None)
@given(_projections(), st.sampled_from(DETAIL_NUMBERS), st.sampled_from(LOOK_ALIKES), st.sampled_from(["t10", "t90"]),
       st.permutations(ZONES[:3]))
def test_the_projection_rows_detail_kept_by_value_is_the_detail_written_afresh(base, name, alikes, crossing, zones):
    """A projection and its copies that differ from it only by a look-alike value (0.0 and -0.0,
    0 and False, 1, 1.0 and True, numpy's floats, NaN) or by one crossing's zone (the same
    instant) get, one after the other, the detail text json.dumps writes for each, from the
    table or not; the row holds it."""
    from frostwatch.store.db import Store
    from frostwatch.store.detail import plain_detail_json, projection_detail_json

    at = dt.datetime(2027, 4, 14, 9, 30, tzinfo=dt.UTC)
    variants = [dataclasses.replace(base, **{name: v}) for v in alikes]
    variants += [dataclasses.replace(base, crossings_utc={**base.crossings_utc, crossing: at.astimezone(z)}) for z in zones]
    for p in [base] + variants + variants[::-1]:
        want = plain_detail_json(p)
        assert projection_detail_json(p) == want
        assert Store._projection_row(p)[-1] == want


@settings(max_examples=200, deadline=None)
@given(st.lists(_projections(), min_size=1, max_size=20))
def test_projections_in_any_order_get_the_detail_written_afresh(projections):
    from frostwatch.store.detail import plain_detail_json, projection_detail_json

    for p in projections + projections[::-1]:
        assert projection_detail_json(p) == plain_detail_json(p)
