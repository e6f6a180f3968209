"""A block's night as curves and where they cross: Reuter's square-root curve from the air now to
the projected minimum at sunrise, tonight's evening cooling carried to sunrise, and the times the
curve (and its cold edge) reach the stage's critical temperatures, in air or, for sprinkler
blocks, in wet bulb as tonight's dew point falls. Pure functions of arrays; `projection.py`
wires them.

Reuter's law: T(t) = T0 + b' sqrt(t - t0) (Reuter 1951, in FAO-FP ch. 5, Snyder & de Melo-Abreu
2005).
"""

from __future__ import annotations

import datetime as dt
import functools
import math
from collections.abc import Callable

import numpy as np

from frostwatch import drying, instant_runs
from frostwatch.config import SPRINKLER_METHODS, Block
from frostwatch.forecast.sensors import Series
from frostwatch.physics import humidity

EVENING_FROM_S = 3600.0  # the evening curve is fitted to readings from an hour before sunset


# a whole second as a datetime; a night's grid instants recur from one evaluation to the next:
# made once each (the cache calls fromtimestamp directly, no Python frame between)
_utc_second = functools.lru_cache(maxsize=16384)(functools.partial(dt.datetime.fromtimestamp, tz=dt.UTC))


def _utc(t_s: float | None) -> dt.datetime | None:
    return None if t_s is None else _utc_second(round(t_s))


def utc_seconds(times_s: list[float]) -> tuple[dt.datetime, ...]:
    """`_utc` of many instants (none None), without a Python call per instant."""
    return tuple(map(_utc_second, map(round, times_s)))


def grid_utc(grid_s: np.ndarray, step: int, grid_step_s: float) -> tuple[dt.datetime, ...]:
    """`utc_seconds(grid_s[::step].tolist())` for a grid made by `np.arange(now_s, ..., grid_step_s)`
    with perhaps one more instant (sunrise) after it: from a whole second on, arange's instants
    are whole seconds `grid_step_s` apart, so each is the one before plus step * grid_step_s,
    without a float per instant. Other grids go through `utc_seconds`.

    Each instant is `_utc_second`'s own datetime of that second, sliced from a run made by an
    earlier evaluation where it can be (`_whole_seconds_run`): the next evaluations' grids share
    most of their instants (two minutes on, five-minute steps), so the same objects come back,
    and a datetime keeps its hash once worked out (the decision's JSON looks each instant's text
    up by it, `advice.codec._iso_utc_json`)."""
    pts = grid_s[::step]
    n = len(pts)
    first = float(pts[0]) if n else math.nan
    every_s = step * grid_step_s
    if not (first == math.floor(first) and every_s == math.floor(every_s)):  # NaN included
        return utc_seconds(pts.tolist())
    m = n if float(pts[-1]) == first + (n - 1) * every_s else n - 1  # the last: a whole step on, or sunrise
    out = _whole_seconds_run(int(first), int(every_s), m)
    out = out if m == n else out + (_utc(float(pts[-1])),)
    if every_s > 0:
        instant_runs.note(out, int(every_s), m)  # its first m whole seconds apart (the stored curve's thinning reads it)
    return out


GRID_RUNS_KEPT = 64  # runs of instants kept (per step and phase); emptied when full
_GRID_RUNS: dict[tuple[int, int], tuple[int, tuple[dt.datetime, ...]]] = {}


def _whole_seconds_run(a: int, every: int, m: int) -> tuple[dt.datetime, ...]:
    """`tuple(map(_utc_second, range(a, a + m * every, every)))` (every > 0): a slice of the run
    of the same step and phase made before when it holds these instants. The evaluations of a
    night go forward with the same end (the last whole step before sunrise), so the first of
    them makes the run and the next ones slice it, a copy of pointers."""
    if every <= 0:  # not a grid's step: made as asked
        return tuple(map(_utc_second, range(a, a + m * every, every)))
    key = (a % every, every)
    run = _GRID_RUNS.get(key)
    if run is not None:
        a0, made = run
        i = (a - a0) // every  # a whole number of steps: the same phase
        if a >= a0 and i + m <= len(made):
            return made[i:i + m]
    made = tuple(map(_utc_second, range(a, a + m * every, every)))
    if len(_GRID_RUNS) >= GRID_RUNS_KEPT:
        _GRID_RUNS.clear()
    _GRID_RUNS[key] = (a, made)
    return made


_GRID: tuple = (None, None)  # ((now, sunrise, t0, step), (grid, its square-root clock, {every: instants}))
GRID_ARRAYS_KEPT = 64  # grids kept (per sunrise, clock origin, step and phase); emptied when full
_GRID_ARRAYS: dict[tuple[float, float, float, float], tuple[float, int, np.ndarray, np.ndarray]] = {}
_WHOLE_LIMIT_S = 2.0**52  # whole seconds below this are exact in a float, and so are their sums


def grid_arrays(now_s: float, sunrise_s: float, t0_s: float, step_s: float) -> tuple[np.ndarray, np.ndarray]:
    """The projection's grid, `np.arange(now_s, max(now_s, sunrise_s) + 1, step_s)` then sunrise
    if it is not on it, and sqrt(hours since t0, at least 0) at each instant: read-only arrays.

    Sliced from the grid an earlier instant made for the same sunrise, clock origin t0 and step,
    when `now_s` is a whole number of steps after that one's start (and both are whole seconds):
    arange's instants are then `start + i * step` exactly (whole seconds), so the later grid is
    the earlier one without its first k instants, the same sunrise after them, and the clock is
    worked out instant by instant (IEEE subtraction, division, maximum and square root: the same
    floats wherever they sit in an array). A replay's evaluations every two minutes on a
    five-minute grid hold five phases per night; from dusk on (t0 fixed) each is made once."""
    stop = max(now_s, sunrise_s) + 1.0
    n = math.ceil((stop - now_s) / step_s)  # np.arange's length: ceil((stop - start) / step)
    whole = (now_s == math.floor(now_s) and step_s == math.floor(step_s) and 0.0 < step_s
             and abs(now_s) < _WHOLE_LIMIT_S and abs(stop) < _WHOLE_LIMIT_S)
    key = (sunrise_s, t0_s, step_s, now_s % step_s) if whole else None
    if key is not None:
        got = _GRID_ARRAYS.get(key)
        if got is not None:
            start, n0, grid_s, e_grid = got
            k = (now_s - start) / step_s  # a whole number: the same phase
            if now_s >= start and n0 - k == n:
                k = int(k)
                return grid_s[k:], e_grid[k:]
    grid_s = np.arange(now_s, stop, step_s)
    n0 = len(grid_s)
    if grid_s[-1] < sunrise_s:
        grid_s = np.concatenate((grid_s, (sunrise_s,)))
    e_grid = np.sqrt(np.maximum(0.0, (grid_s - t0_s) / 3600.0))
    grid_s.setflags(write=False)
    e_grid.setflags(write=False)
    if key is not None and n0 == n > 2 and t0_s != now_s:  # a grid of the night's instants to come (not before dusk: t0 moves with now)
        if len(_GRID_ARRAYS) >= GRID_ARRAYS_KEPT:
            _GRID_ARRAYS.clear()
        _GRID_ARRAYS[key] = (now_s, n0, grid_s, e_grid)
    return grid_s, e_grid


def night_grid(now_s: float, sunrise_s: float, t0_s: float, step_s: float) -> tuple[np.ndarray, np.ndarray, Callable]:
    """The projection's grid from now to sunrise (`np.arange(now_s, max(now_s, sunrise_s) + 1,
    step_s)`, then sunrise itself if it is not on it), sqrt(hours since t0, at least 0) at each
    instant (`grid_arrays`), and `instants(every)`: `grid_utc(grid, every, step_s)`. Made once per
    instant: every block of an evaluation projects on the same grid (read-only arrays, shared)."""
    global _GRID
    key = (now_s, sunrise_s, t0_s, step_s)
    held = _GRID
    if held[0] != key:
        held = _GRID = (key, (*grid_arrays(now_s, sunrise_s, t0_s, step_s), {}))
    grid_s, e_grid, times = held[1]

    def instants(every: int) -> tuple[dt.datetime, ...]:
        got = times.get(every)
        if got is None:
            got = times[every] = grid_utc(grid_s, every, step_s)
        return got

    return grid_s, e_grid, instants


def crossing_time(grid_s: np.ndarray, curve_c: np.ndarray, threshold_c: float) -> float | None:
    """First time the curve is at or below the threshold, interpolated; None if it never is."""
    below = curve_c <= threshold_c
    i = int(below.argmax())  # the first True (0 when there is none)
    if not below[i]:
        return None
    if i == 0:
        return float(grid_s[0])
    c0, c1 = curve_c[i - 1], curve_c[i]
    f = (c0 - threshold_c) / (c0 - c1) if c0 != c1 else 1.0
    return float(grid_s[i - 1] + f * (grid_s[i] - grid_s[i - 1]))


_lowest = np.minimum.reduce  # ndarray.min without its Python wrapper (NaN propagates the same)


def crossing_times(grid_s: np.ndarray, curve_c: np.ndarray, thresholds_c: list[float]) -> list[float | None]:
    """`crossing_time` of one curve at several thresholds, compared in one array operation (an
    evaluation asks three of each of a block's two curves): the same values. A curve whose
    lowest point is above every threshold (most of a season's nights) crosses none of them: told
    from its minimum alone (a NaN in the curve takes the long way; a NaN threshold is crossed by
    nothing either way)."""
    if len(curve_c) and thresholds_c and float(_lowest(curve_c)) > max(thresholds_c):
        return [None] * len(thresholds_c)
    below = curve_c <= np.array(thresholds_c)[:, None]
    first = below.argmax(axis=1).tolist()  # the first True of each row (0 when there is none)
    out: list[float | None] = []
    for k, (thr, i) in enumerate(zip(thresholds_c, first, strict=True)):
        if not below[k, i]:
            out.append(None)
        elif i == 0:
            out.append(float(grid_s[0]))
        else:
            c0, c1 = curve_c[i - 1], curve_c[i]
            f = (c0 - thr) / (c0 - c1) if c0 != c1 else 1.0
            out.append(float(grid_s[i - 1] + f * (grid_s[i] - grid_s[i - 1])))
    return out


def evening_curve_c(t_s: np.ndarray, v_c: np.ndarray, sunset_s: float, t0_s: float, t0_c: float, sunrise_s: float,
                    memo: dict | None = None) -> float | None:
    """Tonight's evening cooling carried to sunrise: T = a + b sqrt(t - sunset) fitted by least
    squares to the readings from an hour before sunset to t0 (time before sunset counts as 0),
    b <= 0, and the fall b (sqrt(sunrise - sunset) - sqrt(t0 - sunset)) added to T0. Reuter's
    curve from the evening itself, known at dusk before any past night; None with fewer than 3
    readings. `memo`: a replay's window memo (`pipeline.WindowMemo`, one fixed set of readings),
    which keeps the slope b of each cut of the readings (the same readings give the same b)."""
    b = _evening_fit("evening slope", _evening_slope, t_s, v_c, sunset_s, t0_s, memo)
    if b is None:
        return None
    return t0_c + b * _fall_to_sunrise(sunset_s, t0_s, sunrise_s)


def _evening_fit(name: str, fit, t_s: np.ndarray, v_c: np.ndarray, sunset_s: float, t0_s: float,
                 memo: dict | None):
    """`fit` of the evening's readings (an hour before sunset to t0), kept in `memo` by the cut;
    None with fewer than 3 readings or when `fit` gives none."""
    i0 = int(t_s.searchsorted(sunset_s - EVENING_FROM_S, side="left"))
    i1 = int(t_s.searchsorted(t0_s, side="right"))
    if i1 - i0 < 3:
        return None
    key = (name, sunset_s, i0, i1)
    got = _NO_SLOPE if memo is None else memo.get(key, _NO_SLOPE)
    if got is _NO_SLOPE:
        got = fit(t_s[i0:i1], v_c[i0:i1], sunset_s)
        if memo is not None:
            memo[key] = got
    return got


def _fall_to_sunrise(sunset_s: float, t0_s: float, sunrise_s: float) -> float:
    """sqrt(sunrise - sunset) - sqrt(t0 - sunset) [sqrt h]: what the slope b is multiplied by."""
    return math.sqrt(max(0.0, (sunrise_s - sunset_s) / 3600.0)) - math.sqrt(max(0.0, (t0_s - sunset_s) / 3600.0))


_NO_SLOPE = object()

# The evening curve before dusk (`evening_curve_spread_c`): the square-root law's misfit to a real
# evening, at least (degC, 1 sigma; engineering choice): a sensor's 0.1 degC steps or a smooth
# evening would otherwise make a fit through a reading or two after sunset look exact.
EVENING_MISFIT_MIN_C = 0.3


def evening_curve_spread_c(t_s: np.ndarray, v_c: np.ndarray, sunset_s: float, t0_s: float, t0_c: float,
                           sunrise_s: float, memo: dict | None = None) -> tuple[float, float] | None:
    """`evening_curve_c` with its uncertainty, for the estimate before dusk: (the evening curve's
    minimum at sunrise, its standard error [degC]); None where `evening_curve_c` gives none (fewer
    than 3 readings, or none after sunset).

    The standard error is the slope's, se(b) = s / sqrt(sum (x - mean x)^2) (least squares, s the
    residuals' standard deviation on n - 2 degrees of freedom, at least `EVENING_MISFIT_MIN_C`),
    carried to sunrise as the fall is. The readings of the hour before sunset all sit at 0 on the
    square-root clock, so a reading a minute after sunset alone sets the slope: its error is then
    tens of degrees (one such reading gave -20 degC at a new site), and it shrinks as the
    evening's cooling shows (about 1 degC half an hour after sunset on the demo's frost night, 0.2
    at dusk). The caller weighs the curve by it."""
    got = _evening_fit("evening slope and error", _evening_slope_error, t_s, v_c, sunset_s, t0_s, memo)
    if got is None:
        return None
    b, se_b = got
    carry = _fall_to_sunrise(sunset_s, t0_s, sunrise_s)
    return t0_c + b * carry, se_b * carry


def _evening_slope_error(t_s: np.ndarray, v_c: np.ndarray, sunset_s: float) -> tuple[float, float] | None:
    """(b, se(b)) of `_evening_slope`'s fit (the same b); None when the times do not spread."""
    x = np.sqrt(np.maximum(0.0, (t_s - sunset_s) / 3600.0))
    xm = x.mean()
    den = float(np.sum((x - xm) ** 2))
    if den <= 1e-9:
        return None
    vm = v_c.mean()
    b = float(np.sum((x - xm) * (v_c - vm)) / den)
    resid = v_c - (vm + b * (x - xm))
    s = max(EVENING_MISFIT_MIN_C, math.sqrt(float(np.sum(resid * resid)) / max(1, len(v_c) - 2)))
    return min(0.0, b), s / math.sqrt(den)


def _evening_slope(t_s: np.ndarray, v_c: np.ndarray, sunset_s: float) -> float | None:
    """b of T = a + b sqrt(t - sunset) by least squares (b <= 0); None when the times do not spread."""
    x = np.sqrt(np.maximum(0.0, (t_s - sunset_s) / 3600.0))
    xm = x.mean()
    den = float(np.sum((x - xm) ** 2))
    if den <= 1e-9:
        return None
    return min(0.0, float(np.sum((x - xm) * (v_c - v_c.mean())) / den))


def sqrt_curve_c(target_c: float, anchor_c: float, e_grid: np.ndarray, e_now: float, span: float) -> np.ndarray:
    """From the air now (`anchor_c`) to `target_c` at sunrise on the square-root clock since t0:
    `e_grid` and `e_now` are sqrt(hours since t0) at the grid's instants and now, `span` the
    clock's run from now to sunrise (Reuter's curve through the air now)."""
    if span <= 0.05:
        return np.full(len(e_grid), min(anchor_c, target_c))
    return anchor_c + (min(target_c, anchor_c) - anchor_c) / span * (e_grid - e_now)


def sqrt_curves_c(targets_c: tuple[float, ...], anchor_c: float, e_grid: np.ndarray, e_now: float,
                  span: float) -> np.ndarray:
    """`sqrt_curve_c` of several targets on the same grid as the rows of one array (a block's
    curve and its band's cold edge): each row the same floats, the clock's run from now
    (`e_grid - e_now`) taken once and each row's slope times it, plus the anchor, element by
    element as there."""
    if span <= 0.05:
        return np.array([sqrt_curve_c(t, anchor_c, e_grid, e_now, span) for t in targets_c])
    slopes = np.array([(min(t, anchor_c) - anchor_c) / span for t in targets_c], dtype=float)
    return anchor_c + slopes[:, None] * (e_grid - e_now)


def block_crossings(
    block: Block, grid_s: np.ndarray, curve_c: np.ndarray, cold_curve_c: np.ndarray, tmin_at: dt.datetime | None,
    air_c: float, td_c: float | None, p_hpa: float, series: Series, dew_point_stations: list[str], now_s: float,
) -> tuple[dict[str, dt.datetime | None], float | None, float | None, float | None]:
    """(crossings, wet bulb now, dew point trend, dew point at the wet-bulb start) of a block's
    projected night: when the curve and its cold edge reach T10 + margin, T10 and T90 and, for a
    sprinkler block with a dew point, when their wet bulb reaches T10 + margin and T10.

    The wet-bulb crossings follow tonight's dew point as it falls (`frostwatch.drying`): at each
    grid point the air temperature whose wet bulb is the threshold, at that point's projected dew
    point, in closed form (ASHRAE eqs. 33/35)."""
    thresholds = {"t10_margin": block.kill_10pct_c + block.margin_c, "t10": block.kill_10pct_c, "t90": block.kill_90pct_c}
    crossings: dict[str, dt.datetime | None] = {}
    thr_c = list(thresholds.values())
    on_curve, on_cold = crossing_times(grid_s, curve_c, thr_c), crossing_times(grid_s, cold_curve_c, thr_c)
    for k, at, at_cold in zip(thresholds, on_curve, on_cold, strict=True):
        crossings[k] = _utc(at)
        crossings[f"{k}_cold_edge"] = _utc(at_cold)
    wet_c = td_trend = td_at_start = None
    if td_c is not None and block.protection in SPRINKLER_METHODS:
        wet_c = float(humidity.wet_bulb_c_from_dew_point(air_c, td_c, p_hpa))
        wet_c = wet_c if math.isfinite(wet_c) else None
        hist = drying.dew_point_history(series, dew_point_stations, now_s)
        td_trend = None if hist is None else drying.dew_point_trend_c_per_h(hist[0], hist[1], now_s)
        fall = drying.projected_fall_c_per_h(td_trend)
        td_curve = drying.projected_dew_point_c(grid_s, now_s, td_c, fall, curve_c)
        td_cold = drying.projected_dew_point_c(grid_s, now_s, td_c, fall, cold_curve_c)
        keys = ("wet_bulb_t10_margin", "wet_bulb_t10")
        thr = [thresholds["t10_margin"], thresholds["t10"]]
        found = drying.wet_bulb_crossings_s(grid_s, [curve_c, cold_curve_c] * 2, [td_curve, td_cold] * 2,
                                            [thr[0], thr[0], thr[1], thr[1]], p_hpa)  # one solve for the four
        for k, key in enumerate(keys):
            crossings[key], crossings[f"{key}_cold_edge"] = _utc(found[2 * k]), _utc(found[2 * k + 1])
        at = crossings["wet_bulb_t10_margin"] or tmin_at
        td_at_start = float(np.interp(at.timestamp(), grid_s, td_curve)) if at is not None else td_c
    return crossings, wet_c, td_trend, td_at_start
