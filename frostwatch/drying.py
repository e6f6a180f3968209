"""Tonight's dew point, projected: its recent fall, where it goes by the crossing, and the wet-bulb
crossing that follows a falling dew point.

Pure: arrays and an injected `now` in, numbers out. On a drying night (dry air moving in, or
mixing from above) the dew point keeps falling, and the wet bulb with it: at a fixed air
temperature near the sprinkler start, each 2 K fall of the dew point lowers the wet bulb by
about 1 K, so the start temperature comes about 1 K warmer (FAO-FP 2005 Table 7.5: e.g. for
T10 -2 degC, a dew point of -6 degC starts at 0.2 degC, one of -8 degC at 1.2 degC). Holding
tonight's current dew point fixed therefore gives a start that comes late exactly when it matters.

The trend is the least-squares slope of the last `TREND_WINDOW_S`, counted only as a fall (a
rising dew point is not projected to keep rising: the crossing then comes no later than at
today's value) and bounded, so that one odd reading cannot move the start by hours.
"""

from __future__ import annotations

import math

import numpy as np

from frostwatch.physics.humidity import air_temp_c_for_wet_bulb
from frostwatch.physics.wet_bulb import air_temp_c_for_wet_bulb_rows
from frostwatch.sorted_times import count_up_to

TREND_WINDOW_S = 7200.0  # the last two hours of dew-point readings give the trend
TREND_MIN_SPAN_S = 3600.0  # ... which must span at least an hour, with at least 3 readings
TREND_MIN_READINGS = 3
# A dew point is not projected to fall faster than this, nor by more than MAX_FALL_C over the
# night (ENGINEERING CHOICE: drying fronts seldom exceed 1 K/h at orchard sensors; the cap keeps
# a short burst from projecting a desert by dawn).
MAX_FALL_C_PER_H = 1.0
MAX_FALL_C = 4.0


def dew_point_trend_c_per_h(t_s: np.ndarray, dew_point_c: np.ndarray, now_s: float,
                            window_s: float = TREND_WINDOW_S) -> float | None:
    """Least-squares slope of the dew point over the window before `now_s` [degC h-1].

    None without `TREND_MIN_READINGS` finite readings spanning `TREND_MIN_SPAN_S` in the window.
    """
    t = np.asarray(t_s, dtype=float)
    v = np.asarray(dew_point_c, dtype=float)
    sel = (t > now_s - window_s) & (t <= now_s) & np.isfinite(v)
    if sel.sum() < TREND_MIN_READINGS or float(t[sel][-1] - t[sel][0]) < min(TREND_MIN_SPAN_S, window_s / 2):
        return None
    return float(np.polyfit((t[sel] - now_s) / 3600.0, v[sel], 1)[0])


def projected_fall_c_per_h(trend_c_per_h: float | None) -> float:
    """The fall the projection uses [degC h-1, <= 0]: the trend, only if falling, at most
    `MAX_FALL_C_PER_H`; 0 without a trend."""
    if trend_c_per_h is None or not math.isfinite(trend_c_per_h):
        return 0.0
    return max(-MAX_FALL_C_PER_H, min(0.0, trend_c_per_h))


def projected_dew_point_c(grid_s: np.ndarray, now_s: float, dew_point_now_c: float, fall_c_per_h: float,
                          air_curve_c: np.ndarray | None = None) -> np.ndarray:
    """The dew point along `grid_s`: today's value falling at `fall_c_per_h`, by at most
    `MAX_FALL_C`, and never above the projected air temperature (saturated air deposits frost and
    its dew point falls with it)."""
    hours = np.maximum(0.0, (np.asarray(grid_s, dtype=float) - now_s) / 3600.0)
    td = dew_point_now_c + np.maximum(fall_c_per_h * hours, -MAX_FALL_C)
    if air_curve_c is not None:
        td = np.minimum(td, np.asarray(air_curve_c, dtype=float))
    return td


def wet_bulb_crossing_s(grid_s: np.ndarray, air_curve_c: np.ndarray, dew_point_c: np.ndarray, threshold_c: float,
                        pressure_hpa: float) -> float | None:
    """First time the wet bulb of (air, dew point) along the grid reaches `threshold_c`, or None.

    At each grid point the air temperature whose wet bulb is the threshold, at that point's dew
    point, is found in closed form (ASHRAE eqs. 33/35, `air_temp_c_for_wet_bulb`); the wet bulb
    is at or below the threshold exactly where the air curve is at or below it. Where the dew
    point is above the threshold the wet bulb reaches it only with the air. Linear interpolation
    between grid points.
    """
    return wet_bulb_crossings_s(grid_s, [air_curve_c], [dew_point_c], [threshold_c], pressure_hpa)[0]


def wet_bulb_crossings_s(grid_s: np.ndarray, air_curves_c, dew_points_c, thresholds_c, pressure_hpa: float
                         ) -> list[float | None]:
    """`wet_bulb_crossing_s` for several (air curve, dew point curve, threshold) on one grid,
    solved in one call (an evaluation asks four of them for every sprinkler block)."""
    g = np.asarray(grid_s, dtype=float)
    air = np.asarray(air_curves_c, dtype=float)
    td = np.minimum(np.asarray(dew_points_c, dtype=float), air)
    thr = np.asarray(thresholds_c, dtype=float).reshape(-1, 1)
    # air_temp_c_for_wet_bulb at each row's threshold (the threshold's own terms worked out once)
    air_at = air_temp_c_for_wet_bulb_rows(thr[:, 0], td, pressure_hpa)
    air_at = np.where(np.isfinite(air_at), air_at, thr)
    return _first_crossings_s(g, air - air_at)  # gap <= 0 once the wet bulb is at or below


def _first_crossings_s(g: np.ndarray, gaps: np.ndarray) -> list[float | None]:
    """`_first_crossing_s` of each row of `gaps`, the rows compared in one array operation."""
    below = gaps <= 0.0
    if below.shape[1] == 0:
        return [None] * below.shape[0]
    first = below.argmax(axis=1).tolist()  # the first True of each row (0 when there is none)
    out: list[float | None] = []
    for k, i in enumerate(first):
        if not below[k, i]:
            out.append(None)
        elif i == 0:
            out.append(float(g[0]))
        else:
            g0, g1 = gaps[k, i - 1], gaps[k, i]
            f = g0 / (g0 - g1) if g0 != g1 else 1.0
            out.append(float(g[i - 1] + f * (g[i] - g[i - 1])))
    return out


def _first_crossing_s(g: np.ndarray, gap: np.ndarray) -> float | None:
    below = np.nonzero(gap <= 0.0)[0]
    if len(below) == 0:
        return None
    i = int(below[0])
    if i == 0:
        return float(g[0])
    g0, g1 = gap[i - 1], gap[i]
    f = g0 / (g0 - g1) if g0 != g1 else 1.0
    return float(g[i - 1] + f * (g[i] - g[i - 1]))


def start_air_temp_at_c(grid_s: np.ndarray, crossing_s: float | None, dew_point_c: np.ndarray, threshold_c: float,
                        pressure_hpa: float) -> float | None:
    """The sprinkler start air temperature at the projected dew point of the crossing (or of the
    grid's end when there is no crossing): the air temperature whose wet bulb is the threshold."""
    g = np.asarray(grid_s, dtype=float)
    if len(g) == 0:
        return None
    at = g[-1] if crossing_s is None else crossing_s
    td = float(np.interp(at, g, np.asarray(dew_point_c, dtype=float)))
    v = float(air_temp_c_for_wet_bulb(threshold_c, td, pressure_hpa))
    return v if math.isfinite(v) else None


def dew_point_history(series, station_ids: list[str], now_s: float, window_s: float = TREND_WINDOW_S
                      ) -> tuple[np.ndarray, np.ndarray] | None:
    """(times, dew points) of the first of `station_ids` with humidity readings in the window.

    A station's own `dew_point_temperature` readings, or its `relative_humidity` with its air
    temperature at the same moments (WMO convention, over water). None when no station has any.
    """
    from frostwatch.physics.humidity import dew_point_c_from_rel_humidity

    for sid in station_ids:
        for quantity in ("dew_point_temperature", "relative_humidity"):
            if (sid, quantity) not in series:
                continue
            t, v = series[(sid, quantity)]
            # (now - window, now] of the sorted times, as a slice (the values a mask selects)
            i, j = int(t.searchsorted(now_s - window_s, side="right")), count_up_to(t, now_s)
            if j <= i:
                continue
            t, v = np.asarray(t[i:j], dtype=float), np.asarray(v[i:j], dtype=float)
            if quantity == "dew_point_temperature":
                return t, v
            if (sid, "air_temperature") not in series:
                continue
            ta_t, ta_v = series[(sid, "air_temperature")]
            if len(ta_t) == 0:
                continue
            air = np.interp(t, np.asarray(ta_t, dtype=float), np.asarray(ta_v, dtype=float))
            return t, np.asarray(dew_point_c_from_rel_humidity(air, np.clip(v, 1.0, 100.0)), dtype=float)
    return None
