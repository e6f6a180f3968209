"""Tonight's cooling so far, as features of the nowcast: one function for the live projection and
for the training points of past nights, so both see the same thing (vectorised over instants).
Also what a finished night gives the nowcast to learn from: its training points
(`training_samples`) and the fall over the 2 h before its minimum (`fall_before_min_c`, the naive
method's).
"""

from __future__ import annotations

import math

import numpy as np

from frostwatch.config import Config, Station
from frostwatch.forecast.sensors import ASSUMED_DEPRESSION_C, INPUT_WINDOW_S, Series, means_as_of
from frostwatch.physics import humidity

RECENT_SLOPE_S = 7200.0  # the recent slope: least squares over the last two hours
MAX_RECENT_SLOPE_C_H = 0.5
MIN_ELAPSED_H = 0.05  # readings closer than this to t0 do not enter the square-root re-fit
NOWCAST_SAMPLE_STEP_S = 1800.0  # one training point per half hour of a past night
NOWCAST_START_S = 1800.0  # the nowcast's training points start half an hour after t0


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
    el = (t_s - t0_s) / 3600.0  # hours since t0 (also the recent slope's clock)
    use = el > MIN_ELAPSED_H
    x = np.sqrt(np.where(use, el, 0.0))
    # every running sum in one array, a row each, each summed in order from zero (as np.cumsum sums
    # one row alone): sum x (T - T0), sum x^2; and for the recent slope n, t, t^2, T, t T
    sums = np.zeros((7, len(t_s) + 1))
    np.cumsum(np.stack([np.where(use, x * (v_c - t0_c), 0.0), np.where(use, x * x, 0.0), np.ones_like(el), el,
                        el * el, v_c, el * v_c]), axis=1, out=sums[:, 1:])
    at_j = sums[:, j]
    sxy_j, sxx_j = at_j[0], at_j[1]
    ok = (sxx_j > 0) & (j > 0)
    b_obs = np.where(ok, sxy_j / np.where(sxx_j > 0, sxx_j, 1.0), 0.0)
    h_total = max(0.0, (sunrise_s - t0_s) / 3600.0)
    e_now = np.sqrt(np.maximum(0.0, (times_s - t0_s) / 3600.0))
    hl = np.maximum(0.0, (sunrise_s - times_s) / 3600.0)
    curve_drop = np.minimum(0.0, b_obs * (math.sqrt(h_total) - e_now))
    # recent slope by least squares over (now - 2 h, now], from running sums (times in hours from t0)
    i2 = np.searchsorted(t_s, times_s - RECENT_SLOPE_S, side="right")
    n, st, stt, sv, stv = at_j[2:] - sums[2:, i2]
    den = n * stt - st * st
    slope = np.where((n >= 2) & (den > 1e-12), (n * stv - st * sv) / np.where(den > 1e-12, den, 1.0), 0.0)
    td = np.asarray(dew_point_c, dtype=float)
    dep = np.where(np.isfinite(td), np.maximum(0.0, latest - np.minimum(td, latest)), ASSUMED_DEPRESSION_C)
    wind, cloud = _nan_to_zero(wind_m_s), _nan_to_zero(cloud_frac)
    feats = np.column_stack([curve_drop, np.sqrt(hl), np.minimum(MAX_RECENT_SLOPE_C_H, slope) * hl, wind, cloud, dep])
    return latest, feats, ok


def _nan_to_zero(values) -> np.ndarray:
    """np.nan_to_num(values, nan=0.0), without its cost when every value is finite."""
    a = np.asarray(values, dtype=float)
    return a if np.isfinite(a).all() else np.nan_to_num(a, nan=0.0)


def features_at(
    t_s: np.ndarray, v_c: np.ndarray, t0_s: float, t0_c: float, sunrise_s: float, now_s: float,
    wind_m_s: float | None, cloud_frac: float | None, dew_point_c: float | None, memo: dict | None = None,
) -> tuple[float, tuple[float, ...]] | None:
    """(latest reading, features) at one instant, or None before any reading since t0. The same
    sums as `feature_matrix`, taken directly over the readings that matter (an evaluation's path).

    `memo` (a replay's `pipeline.WindowMemo` values; the readings its window, which ends at
    `now_s`) keeps the sums over the readings while they are the same."""
    j = int(np.searchsorted(t_s, now_s, side="right"))
    i2 = int(np.searchsorted(t_s, now_s - RECENT_SLOPE_S, side="right"))
    key = ("nowcast sums", t0_s, t0_c, j, i2)
    sums = None if memo is None else memo.get(key)
    if sums is None:
        sums = _sums(t_s, v_c, t0_s, t0_c, j, i2)
        if memo is not None:
            memo[key] = sums
    if sums is None:
        return None
    latest, b_obs, slope = sums
    h_total = max(0.0, (sunrise_s - t0_s) / 3600.0)
    e_now = math.sqrt(max(0.0, (now_s - t0_s) / 3600.0))
    hl = max(0.0, (sunrise_s - now_s) / 3600.0)
    td = dew_point_c
    dep = ASSUMED_DEPRESSION_C if td is None or not math.isfinite(td) else max(0.0, latest - min(td, latest))
    wind = 0.0 if wind_m_s is None or not math.isfinite(wind_m_s) else wind_m_s
    cloud = 0.0 if cloud_frac is None or not math.isfinite(cloud_frac) else cloud_frac
    return latest, (min(0.0, b_obs * (math.sqrt(h_total) - e_now)), math.sqrt(hl),
                    min(MAX_RECENT_SLOPE_C_H, slope) * hl, float(wind), float(cloud), float(dep))


def _sums(t_s: np.ndarray, v_c: np.ndarray, t0_s: float, t0_c: float, j: int, i2: int) -> tuple[float, float, float] | None:
    """(latest reading, b' observed since t0, recent slope) over the readings before index j
    (the recent slope from index i2); None before any reading since t0 + MIN_ELAPSED_H."""
    i0 = int(np.searchsorted(t_s, t0_s + MIN_ELAPSED_H * 3600.0, side="right"))
    if j == 0 or j <= i0:
        return None
    latest = float(v_c[j - 1])
    x = np.sqrt((t_s[i0:j] - t0_s) / 3600.0)
    b_obs = float(np.dot(x, v_c[i0:j] - t0_c) / np.dot(x, x))
    slope = 0.0
    if j - i2 >= 2:
        tt = (t_s[i2:j] - t0_s) / 3600.0
        vv = v_c[i2:j]
        dt_ = tt - tt.mean()
        den = float(np.dot(dt_, dt_))
        if den > 1e-12:
            slope = float(np.dot(dt_, vv - vv.mean()) / den)
    return latest, b_obs, slope


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


NAIVE_LEAD_S = 7200.0  # the naive nowcast's fall: over the 2 h before a past night's minimum


def fall_before_min_c(t_s: np.ndarray, v_c: np.ndarray, min_s: float, min_c: float, t0_s: float) -> float | None:
    """The reading `NAIVE_LEAD_S` before a night's minimum minus the minimum (interpolated), or
    None when that is before t0."""
    at_s = min_s - NAIVE_LEAD_S
    if at_s < t0_s:
        return None
    return float(np.interp(at_s, t_s, v_c)) - min_c


def training_samples(
    cfg: Config, series: Series, station: str, stations: list[Station], t: np.ndarray, v: np.ndarray,
    t0_s: float, t0_c: float, sunrise_s: float, end_s: float,
) -> tuple[tuple[tuple[float, ...], float], ...]:
    """Training points for the nowcast: the first reading at or after each half hour from t0 +
    30 min to sunrise, the features as known then and the fall still to come (the minimum from
    then to `end_s`, minus the reading then). Built from arrays, no loop over readings."""
    i_end = int(np.searchsorted(t, end_s, side="right"))
    grid = np.arange(t0_s + NOWCAST_START_S, sunrise_s + 1.0, NOWCAST_SAMPLE_STEP_S)
    idx = np.searchsorted(t, grid, side="left")  # ascending: np.unique's values, without its sort
    idx = idx[np.concatenate(([True], idx[1:] != idx[:-1]))] if len(idx) else idx
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
        if np.isfinite(d[missing]).all():  # a dew point wherever one is missing: humidity not needed
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
    tail_min = np.minimum.accumulate(v[: i_end][::-1])[::-1]
    drops = tail_min[idx] - v[idx]
    rows, falls = feats.tolist(), drops.tolist()
    return tuple((tuple(rows[k]), falls[k]) for k in np.nonzero(ok)[0].tolist())
