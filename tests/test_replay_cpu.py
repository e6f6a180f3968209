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
