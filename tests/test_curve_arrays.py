"""The projection's arrays shared (issue 19, item 1), bit for bit the ones made afresh:

- `curves.grid_arrays`: the grid sliced from an earlier instant's, against `np.arange` and the
  square-root clock, whatever the order of the instants, their phase, the sunrise (on the grid or
  between) and the clock's origin;
- `curves.sqrt_curves_c`: a block's curve and cold edge as the rows of one array, and their drawn
  points rounded together, against `sqrt_curve_c` and `.round(2)` of each;
- the stored curve's half-hour points of a curve the grid made (`instant_runs`, its instants known
  to be whole seconds apart by the tuple itself) against the plain loop over the instants.
"""

from __future__ import annotations

import dataclasses
import datetime as dt
import math

import numpy as np
from hypothesis import given, settings
from hypothesis import strategies as st

from frostwatch import decision, instant_runs
from frostwatch.decision import CURVE_STEP_S, summarise_projection
from frostwatch.forecast import curves
from frostwatch.models import Projection


def _fresh(now_s: float, sunrise_s: float, t0_s: float, step_s: float) -> tuple[np.ndarray, np.ndarray]:
    grid_s = np.arange(now_s, max(now_s, sunrise_s) + 1.0, step_s)
    if grid_s[-1] < sunrise_s:
        grid_s = np.concatenate((grid_s, (sunrise_s,)))
    return grid_s, np.sqrt(np.maximum(0.0, (grid_s - t0_s) / 3600.0))


def _same(got, want) -> None:
    for g, w in zip(got, want, strict=True):
        assert g.dtype == w.dtype and g.shape == w.shape and g.tobytes() == w.tobytes()
        assert not g.flags.writeable


BASE_S = 1_712_599_800.0  # an evening in April 2024 (a whole multiple of 600 s)


@settings(max_examples=400, deadline=None)
@given(
    st.lists(st.integers(min_value=-40, max_value=400), min_size=1, max_size=40),  # instants, minutes on
    st.sampled_from([120.0, 60.0, 90.0, 120.5]),  # the cadence [s] (the last: not whole seconds)
    st.floats(min_value=0.0, max_value=14 * 3600.0),  # sunrise after the base [s]
    st.booleans(),  # sunrise on a whole second
    st.floats(min_value=-7200.0, max_value=7200.0),  # the clock's origin after the base [s]
    st.sampled_from([300.0, 600.0, 299.5]),
    st.booleans(),  # the origin moves with now (before dusk)
)
def test_grid_arrays_are_the_fresh_ones_bit_for_bit(steps, cadence_s, sunrise_off_s, whole_sunrise, t0_off_s, step_s,
                                                    t0_is_now):
    curves._GRID_ARRAYS.clear()
    sunrise_s = BASE_S + (math.floor(sunrise_off_s) if whole_sunrise else sunrise_off_s)
    for k in steps:
        now_s = BASE_S + k * cadence_s
        t0_s = now_s if t0_is_now else BASE_S + t0_off_s
        _same(curves.grid_arrays(now_s, sunrise_s, t0_s, step_s), _fresh(now_s, sunrise_s, t0_s, step_s))


def test_a_night_at_a_two_minute_cadence_slices_its_five_phases():
    """A night from dusk to sunrise every two minutes on the five-minute grid: the same arrays as
    made afresh, and after the first ten minutes every grid is a slice of one made before."""
    curves._GRID_ARRAYS.clear()
    dusk_s, sunrise_s = BASE_S + 120.0 * 7, BASE_S + 12 * 3600.0 + 17.25
    made = []
    real = np.arange

    def counting_arange(*a, **k):
        made.append(a[0])
        return real(*a, **k)

    curves.np.arange = counting_arange
    try:
        for i in range(1, 352):  # up to the last instant before sunrise (after it: a grid of one instant each)
            now_s = dusk_s + 120.0 * i
            curves.np.arange = real
            want = _fresh(now_s, sunrise_s, dusk_s, 300.0)
            curves.np.arange = counting_arange
            _same(curves.grid_arrays(now_s, sunrise_s, dusk_s, 300.0), want)
    finally:
        curves.np.arange = real
    assert len(made) == 5  # one grid per phase (now mod 300 s: 0, 120, 240, 60, 180)


FLOATS = st.floats(min_value=-30.0, max_value=30.0) | st.just(math.nan)


@settings(max_examples=400, deadline=None)
@given(FLOATS, FLOATS, FLOATS, st.floats(min_value=0.0, max_value=4.0), st.floats(min_value=-0.1, max_value=4.0),
       st.integers(min_value=1, max_value=200), st.integers(min_value=1, max_value=6), st.booleans())
def test_two_curves_in_one_array_are_each_curve_bit_for_bit(tp_c, low_c, anchor_c, e0, span, n, step, numpy_scalars):
    """Targets as Python floats or numpy float64 (the band's offsets are), spans at and below the
    flat-curve limit, NaN anywhere: the rows and their drawn points rounded are the ones of each
    curve made alone."""
    if numpy_scalars:
        tp_c, low_c = np.float64(tp_c), np.float64(low_c)
    e_grid = np.sqrt(np.linspace(e0 * e0, (e0 + max(span, 0.0)) ** 2, n))
    both = curves.sqrt_curves_c((tp_c, low_c), anchor_c, e_grid, e0, span)
    for row, target in zip(both, (tp_c, low_c), strict=True):
        alone = curves.sqrt_curve_c(target, anchor_c, e_grid, e0, span)
        assert row.dtype == alone.dtype and row.tobytes() == alone.tobytes()
    drawn = both[:, ::step].round(2).tolist()
    for got, target in zip(drawn, (tp_c, low_c), strict=True):
        want = curves.sqrt_curve_c(target, anchor_c, e_grid, e0, span)[::step].round(2).tolist()
        assert [repr(x) for x in got] == [repr(x) for x in want]



def _plain_kept(times, n) -> list[int]:
    out, due = [], None
    for i in range(n):
        if due is None or times[i] >= due:
            out.append(i)
            due = times[i] + dt.timedelta(seconds=CURVE_STEP_S)
    return out


@settings(max_examples=400, deadline=None)
@given(st.integers(min_value=0, max_value=10_000), st.sampled_from([120.0, 60.0, 7.0]),
       st.floats(min_value=0.0, max_value=16 * 3600.0), st.booleans(), st.integers(min_value=1, max_value=12))
def test_the_stored_curve_of_a_grid_keeps_the_plain_loops_points(k, cadence_s, sunrise_off_s, whole_sunrise, every):
    now_s = BASE_S + k * cadence_s
    sunrise_s = now_s + (math.floor(sunrise_off_s) if whole_sunrise else sunrise_off_s)
    grid_s, _ = curves.grid_arrays(now_s, sunrise_s, now_s - 3600.0, 300.0)
    times = curves.grid_utc(grid_s, every, 300.0)
    assert instant_runs.spacing_of(times) is not None
    copy = tuple(list(times))  # the same instants, not the tuple noted: the comparing way
    assert instant_runs.spacing_of(copy) is None
    for n in range(len(times) + 1):
        want = _plain_kept(times, n)
        assert decision._kept_points(times, n) == want
        assert decision._kept_points(copy, n) == want
    temps = tuple(float(x) for x in range(len(times)))
    p = _projection(times, temps)
    assert summarise_projection(p) == summarise_projection(dataclasses.replace(p, curve_time_utc=copy))


def test_a_tuple_noted_is_told_by_itself_and_only_while_kept():
    t0 = dt.datetime(2024, 4, 9, 4, tzinfo=dt.UTC)
    runs = [tuple(t0 + dt.timedelta(seconds=600 * i + j) for i in range(5)) for j in range(instant_runs.RUNS_KEPT + 1)]
    for r in runs:
        instant_runs.note(r, 600, 5)
    assert instant_runs.spacing_of(runs[0]) is None  # the oldest left
    assert instant_runs.spacing_of(runs[-1]) == (600, 5)
    assert instant_runs.spacing_of(list(runs[-1])) is None and instant_runs.spacing_of(tuple(list(runs[-1]))) is None


def test_noting_from_several_threads_never_raises_and_stays_bounded():
    """The daemon's evaluations and a replay's may note curves from more than one thread: the
    eviction of the oldest must not meet another thread's insertion mid-iteration."""
    import sys
    import threading

    t0 = dt.datetime(2024, 4, 9, 4, tzinfo=dt.UTC)
    errors: list[BaseException] = []

    def work(j: int) -> None:
        try:
            for k in range(3000):
                instant_runs.note(tuple(t0 + dt.timedelta(seconds=600 * i + j * 10_000 + k) for i in range(3)), 600, 3)
        except BaseException as e:  # noqa: BLE001  (any exception fails the test below)
            errors.append(e)

    threads = [threading.Thread(target=work, args=(j,)) for j in range(4)]
    switch = sys.getswitchinterval()
    sys.setswitchinterval(1e-6)  # threads switch often, as on a busy Pi (the old eviction raised here)
    try:
        for t in threads:
            t.start()
        for t in threads:
            t.join()
    finally:
        sys.setswitchinterval(switch)
    assert errors == []
    assert len(instant_runs._NOTED) <= instant_runs.RUNS_KEPT + len(threads)


def _projection(times, temps) -> Projection:
    return Projection(time_utc=times[0], block="b", sunset_utc=times[0], sunrise_utc=times[-1], station="s",
                      air_temp_c=1.0, dew_point_c=None, wet_bulb_c=None, predicted_min_c=0.5, predicted_min_at_utc=None,
                      band_c=0.3, crossings_utc={}, inversion_c=None, projected_inversion_c=None, inversion_class=None,
                      wind_speed_m_s=None, regime="radiation", method="m", notes=(), curve_time_utc=times,
                      curve_air_temp_c=temps)
