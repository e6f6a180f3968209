"""Tonight's cooling so far, as features of the nowcast: one function for the live projection and
for the training points of past nights, so both see the same thing (vectorised over instants).
"""

from __future__ import annotations

import math

import numpy as np

from frostwatch.forecast.sensors import ASSUMED_DEPRESSION_C

RECENT_SLOPE_S = 7200.0  # the recent slope: least squares over the last two hours
MAX_RECENT_SLOPE_C_H = 0.5
MIN_ELAPSED_H = 0.05  # readings closer than this to t0 do not enter the square-root re-fit


def feature_matrix(
    t_s: np.ndarray, v_c: np.ndarray, t0_s: float, t0_c: float, sunrise_s: float, times_s: np.ndarray,
    wind_m_s: np.ndarray, cloud_frac: np.ndarray, dew_point_c: np.ndarray,
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """(latest reading, features, ok) at each of `times_s`, from readings up to each instant.

    Features (`calibration.NOWCAST_FEATURES`):
    - the fall still to come on tonight's square-root curve T = T0 + b sqrt(t - t0), b fitted by
      least squares through T0 to the readings since t0 (Reuter), from now to sunrise (<= 0);
    - sqrt of the hours left to sunrise;
    - the slope of the last two hours (least squares, at most +0.5 degC/h) times the hours left;
    - wind, cloud fraction (clear when unknown: NaN -> 0) and dew-point depression now (6 K
      assumed without a humidity reading).
    `ok` is False where no reading since t0 exists yet.
    """
    times_s = np.asarray(times_s, dtype=float)
    j = np.searchsorted(t_s, times_s, side="right")
    latest = np.where(j > 0, v_c[np.maximum(j - 1, 0)], np.nan)
    # Reuter re-fit through T0: b = sum(x (T - T0)) / sum(x^2), x = sqrt(t - t0), over readings since t0
    el = (t_s - t0_s) / 3600.0
    use = el > MIN_ELAPSED_H
    x = np.sqrt(np.where(use, el, 0.0))
    sxy = np.concatenate([[0.0], np.cumsum(np.where(use, x * (v_c - t0_c), 0.0))])
    sxx = np.concatenate([[0.0], np.cumsum(np.where(use, x * x, 0.0))])
    ok = (sxx[j] > 0) & (j > 0)
    b_obs = np.where(ok, sxy[j] / np.where(sxx[j] > 0, sxx[j], 1.0), 0.0)
    h_total = max(0.0, (sunrise_s - t0_s) / 3600.0)
    e_now = np.sqrt(np.maximum(0.0, (times_s - t0_s) / 3600.0))
    hl = np.maximum(0.0, (sunrise_s - times_s) / 3600.0)
    curve_drop = np.minimum(0.0, b_obs * (math.sqrt(h_total) - e_now))
    # recent slope by least squares over (now - 2 h, now], from running sums (times in hours from t0)
    th = (t_s - t0_s) / 3600.0
    c = [np.concatenate([[0.0], np.cumsum(a)]) for a in (np.ones_like(th), th, th * th, v_c, th * v_c)]
    i2 = np.searchsorted(t_s, times_s - RECENT_SLOPE_S, side="right")
    n, st, stt, sv, stv = (a[j] - a[i2] for a in c)
    den = n * stt - st * st
    slope = np.where((n >= 2) & (den > 1e-12), (n * stv - st * sv) / np.where(den > 1e-12, den, 1.0), 0.0)
    td = np.asarray(dew_point_c, dtype=float)
    dep = np.where(np.isfinite(td), np.maximum(0.0, latest - np.minimum(td, latest)), ASSUMED_DEPRESSION_C)
    wind = np.nan_to_num(np.asarray(wind_m_s, dtype=float), nan=0.0)
    cloud = np.nan_to_num(np.asarray(cloud_frac, dtype=float), nan=0.0)
    feats = np.column_stack([curve_drop, np.sqrt(hl), np.minimum(MAX_RECENT_SLOPE_C_H, slope) * hl, wind, cloud, dep])
    return latest, feats, ok


def features_at(
    t_s: np.ndarray, v_c: np.ndarray, t0_s: float, t0_c: float, sunrise_s: float, now_s: float,
    wind_m_s: float | None, cloud_frac: float | None, dew_point_c: float | None,
) -> tuple[float, tuple[float, ...]] | None:
    """(latest reading, features) at one instant, or None before any reading since t0. The same
    sums as `feature_matrix`, taken directly over the readings that matter (an evaluation's path)."""
    j = int(np.searchsorted(t_s, now_s, side="right"))
    i0 = int(np.searchsorted(t_s, t0_s + MIN_ELAPSED_H * 3600.0, side="right"))
    if j == 0 or j <= i0:
        return None
    latest = float(v_c[j - 1])
    x = np.sqrt((t_s[i0:j] - t0_s) / 3600.0)
    b_obs = float(np.dot(x, v_c[i0:j] - t0_c) / np.dot(x, x))
    h_total = max(0.0, (sunrise_s - t0_s) / 3600.0)
    e_now = math.sqrt(max(0.0, (now_s - t0_s) / 3600.0))
    hl = max(0.0, (sunrise_s - now_s) / 3600.0)
    i2 = int(np.searchsorted(t_s, now_s - RECENT_SLOPE_S, side="right"))
    slope = 0.0
    if j - i2 >= 2:
        tt = (t_s[i2:j] - t0_s) / 3600.0
        vv = v_c[i2:j]
        dt_ = tt - tt.mean()
        den = float(np.dot(dt_, dt_))
        if den > 1e-12:
            slope = float(np.dot(dt_, vv - vv.mean()) / den)
    td = dew_point_c
    dep = ASSUMED_DEPRESSION_C if td is None or not math.isfinite(td) else max(0.0, latest - min(td, latest))
    wind = 0.0 if wind_m_s is None or not math.isfinite(wind_m_s) else wind_m_s
    cloud = 0.0 if cloud_frac is None or not math.isfinite(cloud_frac) else cloud_frac
    return latest, (min(0.0, b_obs * (math.sqrt(h_total) - e_now)), math.sqrt(hl),
                    min(MAX_RECENT_SLOPE_C_H, slope) * hl, float(wind), float(cloud), float(dep))


def _features_at_via_matrix(
    t_s: np.ndarray, v_c: np.ndarray, t0_s: float, t0_c: float, sunrise_s: float, now_s: float,
    wind_m_s: float | None, cloud_frac: float | None, dew_point_c: float | None,
) -> tuple[float, tuple[float, ...]] | None:
    """`features_at` through `feature_matrix` (tests check the two agree)."""
    nan = float("nan")
    latest, feats, ok = feature_matrix(
        t_s, v_c, t0_s, t0_c, sunrise_s, np.array([now_s]),
        np.array([nan if wind_m_s is None else wind_m_s]), np.array([nan if cloud_frac is None else cloud_frac]),
        np.array([nan if dew_point_c is None else dew_point_c]),
    )
    if not ok[0]:
        return None
    return float(latest[0]), tuple(float(v) for v in feats[0])
