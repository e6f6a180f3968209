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
from frostwatch.forecast.sensors import ASSUMED_DEPRESSION_C, INPUT_WINDOW_S, Series, _mean
from frostwatch.physics import humidity
from frostwatch.sorted_times import count_up_to

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

    Features (`settings.NOWCAST_FEATURES`):
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
    # the recent slope's sums over (now - 2 h, now]
    i2 = np.searchsorted(t_s, times_s - RECENT_SLOPE_S, side="right")
    feats, ok = _features_from_sums(sums[:, j], sums[2:, i2], j, times_s, t0_s, sunrise_s, latest,
                                    dew_point_c, wind_m_s, cloud_frac)
    return latest, feats, ok


def _features_from_sums(at_j, at_i2, j, times_s, t0_s, sunrise_s, latest, dew_point_c, wind_m_s, cloud_frac):
    """`feature_matrix`'s features and `ok` at each instant from the running sums up to it (`at_j`,
    its j readings: sum x (T - T0), sum x^2, n, t, t^2, T, t T) and the recent slope's sums up to
    2 h before it (`at_i2`); t0_s and sunrise_s are one night's or each instant's own."""
    sxy_j, sxx_j = at_j[0], at_j[1]
    ok = (sxx_j > 0) & (j > 0)
    b_obs = np.where(ok, sxy_j / np.where(sxx_j > 0, sxx_j, 1.0), 0.0)
    h_total = np.maximum(0.0, (sunrise_s - t0_s) / 3600.0)
    e_now = np.sqrt(np.maximum(0.0, (times_s - t0_s) / 3600.0))
    hl = np.maximum(0.0, (sunrise_s - times_s) / 3600.0)
    curve_drop = np.minimum(0.0, b_obs * (np.sqrt(h_total) - e_now))
    # recent slope by least squares over (now - 2 h, now], from running sums (times in hours from t0)
    n, st, stt, sv, stv = at_j[2:] - at_i2
    den = n * stt - st * st
    slope = np.where((n >= 2) & (den > 1e-12), (n * stv - st * sv) / np.where(den > 1e-12, den, 1.0), 0.0)
    td = np.asarray(dew_point_c, dtype=float)
    dep = np.where(np.isfinite(td), np.maximum(0.0, latest - np.minimum(td, latest)), ASSUMED_DEPRESSION_C)
    wind, cloud = _nan_to_zero(wind_m_s), _nan_to_zero(cloud_frac)
    feats = np.column_stack([curve_drop, np.sqrt(hl), np.minimum(MAX_RECENT_SLOPE_C_H, slope) * hl, wind, cloud, dep])
    return feats, ok


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
    j = count_up_to(t_s, now_s)
    i2 = int(t_s.searchsorted(now_s - RECENT_SLOPE_S, side="right"))
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
    i0 = int(t_s.searchsorted(t0_s + MIN_ELAPSED_H * 3600.0, side="right"))
    if j == 0 or j <= i0:
        return None
    latest = float(v_c[j - 1])
    x = np.sqrt((t_s[i0:j] - t0_s) / 3600.0)
    b_obs = float(np.dot(x, v_c[i0:j] - t0_c) / np.dot(x, x))
    slope = 0.0
    if j - i2 >= 2:
        tt = (t_s[i2:j] - t0_s) / 3600.0
        vv = v_c[i2:j]
        dt_ = tt - _mean(tt)  # np.mean's value (its sum over its count), without its wrapper
        den = float(np.dot(dt_, dt_))
        if den > 1e-12:
            slope = float(np.dot(dt_, vv - _mean(vv)) / den)
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
    then to `end_s`, minus the reading then). Built from arrays, no loop over readings.
    One night's `training_samples_many`."""
    return training_samples_many(cfg, stations, [(series, station, t, v, t0_s, t0_c, sunrise_s, end_s)])[0]


class _Rows:
    """Each night's own array of one series as the row of a padded 2-D array (nights x readings),
    so that what is worked out per night over its readings (running sums, the latest reading, the
    readings in a window) is done for all nights at once, with each night's own arithmetic:
    running sums start at each night's first reading, as they do for that night alone."""

    __slots__ = ("lens", "t", "v", "csum")

    def __init__(self, pairs: list, t_pad: float):
        self.lens = np.array([0 if p is None else len(p[0]) for p in pairs], dtype=np.int64)
        width = max(1, int(self.lens.max()) if len(self.lens) else 1)
        self.t = np.full((len(pairs), width), t_pad)  # after the last reading: later than any instant asked for
        self.v = np.zeros((len(pairs), width))
        if self.lens.any():
            rows = np.repeat(np.arange(len(pairs)), self.lens)
            cols = np.arange(len(rows)) - np.repeat(np.cumsum(self.lens) - self.lens, self.lens)
            self.t[rows, cols] = np.concatenate([p[0] for p in pairs if p is not None and len(p[0])])
            self.v[rows, cols] = np.concatenate([p[1] for p in pairs if p is not None and len(p[0])])
        self.csum = None

    def count_le(self, night: np.ndarray, at_s: np.ndarray) -> np.ndarray:
        """np.searchsorted(t, at, side="right") in each instant's night."""
        return (self.t[night] <= at_s[:, None]).sum(axis=1)

    def sums(self) -> np.ndarray:
        """Each night's np.concatenate([[0.0], np.cumsum(v)]) (zeros after its readings)."""
        if self.csum is None:
            self.csum = np.zeros((self.v.shape[0], self.v.shape[1] + 1))
            np.cumsum(self.v, axis=1, out=self.csum[:, 1:])
        return self.csum


def _means_many(rows_of, stations: list[str], quantity: str, night: np.ndarray, times_s: np.ndarray,
                window_s: float) -> np.ndarray:
    """`sensors.means_as_of` at each instant in its night's readings, the same numbers: each
    station's window sum from its night's running sum, added in the stations' order."""
    total = np.zeros(len(times_s))
    count = np.zeros(len(times_s))
    seen = []
    for sid in stations:
        rows = rows_of((sid, quantity))
        if rows is None:
            continue
        has = rows.lens[night] > 0  # the night has this series (a station may be silent some nights)
        j = rows.count_le(night, times_s)
        i = rows.count_le(night, times_s - window_s)
        csum = rows.sums()
        total = np.where(has, total + (csum[night, j] - csum[night, i]), total)
        count = np.where(has, count + (j - i), count)
        seen.append((rows, has, j))
    mean = total / np.maximum(count, 1)  # never a zero divisor
    if count.all():
        return mean
    last = np.full(len(times_s), np.nan)
    for rows, has, j in seen:  # the first station's latest reading within two windows
        prev = np.maximum(j - 1, 0)
        ok = has & (j > 0) & (times_s - rows.t[night, prev] <= 2.0 * window_s)
        last = np.where(np.isnan(last) & ok, rows.v[night, prev], last)
    return np.where(count > 0, mean, last)


def training_samples_many(
    cfg: Config, stations: list[Station],
    nights: list[tuple[Series, str, np.ndarray, np.ndarray, float, float, float, float]],
) -> list[tuple[tuple[tuple[float, ...], float], ...]]:
    """`training_samples` of many nights of a block, each (its series, the speaking station, that
    station's air temperature t and v, t0_s, t0_c, sunrise_s, end_s): the same numbers, worked
    out for all nights at once (each night's readings a row of padded arrays, `_Rows`), in
    groups of nights with the same speaking station."""
    out: list = [()] * len(nights)
    groups: dict[str, list[int]] = {}
    for n, job in enumerate(nights):
        groups.setdefault(job[1], []).append(n)
    for station, members in groups.items():
        for n, samples in zip(members, _samples_of_group(cfg, stations, station, [nights[n] for n in members]), strict=True):
            out[n] = samples
    return out


def _samples_of_group(cfg: Config, stations: list[Station], station: str, jobs: list) -> list:
    # each night's instants: the first reading at or after each half hour (as `np.arange` makes them)
    picks, night_of = [], []
    for n, (_, _, t, _, t0_s, _, sunrise_s, end_s) in enumerate(jobs):
        i_end = int(np.searchsorted(t, end_s, side="right"))
        grid = np.arange(t0_s + NOWCAST_START_S, sunrise_s + 1.0, NOWCAST_SAMPLE_STEP_S)
        idx = np.searchsorted(t, grid, side="left")  # ascending: np.unique's values, without its sort
        idx = idx[np.concatenate(([True], idx[1:] != idx[:-1]))] if len(idx) else idx
        idx = idx[(idx < i_end) & (t[np.minimum(idx, len(t) - 1)] <= sunrise_s)]
        picks.append(idx)
        night_of.append(np.full(len(idx), n))
    out: list = [()] * len(jobs)
    if not any(len(i) for i in picks):
        return out
    idx, night = np.concatenate(picks), np.concatenate(night_of)
    t_pad = max(float(j[2][-1]) for j in jobs if len(j[2])) + 1e7
    ids = [s.id for s in stations] + [s.id for s in cfg.stations if s.block is None]
    air = _Rows([(j[2], j[3]) for j in jobs], t_pad)
    times = air.t[night, idx]
    made: dict = {}

    def rows_of(key):  # each night's series of `key` as rows, made once (None where no night has it)
        if key not in made:
            made[key] = _Rows([j[0].get(key) for j in jobs], t_pad) if any(key in j[0] for j in jobs) else None
        return made[key]

    wind = _means_many(rows_of, ids, "wind_speed", night, times, INPUT_WINDOW_S)
    cloud = _means_many(rows_of, [s.id for s in cfg.stations], "cloud_area_fraction", night, times, INPUT_WINDOW_S)
    td = np.full(len(times), np.nan)
    for sid in [station] + [i for i in ids if i != station]:
        missing = np.isnan(td)
        if not missing.any():
            break
        d = _means_many(rows_of, [sid], "dew_point_temperature", night, times, INPUT_WINDOW_S)
        need = missing & ~np.isfinite(d)  # no dew point where one is missing: that night reads humidity
        from_rh = np.full(len(times), np.nan)
        if need.any():
            rh = _means_many(rows_of, [sid], "relative_humidity", night, times, INPUT_WINDOW_S)
            ta = air.v[night, idx] if sid == station else _means_many(rows_of, [sid], "air_temperature", night, times, INPUT_WINDOW_S)
            for n in np.unique(night[need]).tolist():  # one night at a time: the dew point's Newton
                mine = night == n  # iteration stops when all of a night's values have converged
                ok = mine & np.isfinite(rh) & np.isfinite(ta)
                if ok.any():
                    from_rh[ok] = np.asarray(humidity.dew_point_c_from_rel_humidity(ta[ok], np.clip(rh[ok], 1.0, 100.0)), dtype=float)
        td = np.where(missing, np.where(np.isfinite(d), d, from_rh), td)
    latest, feats, ok = _feature_rows(air, night, idx, times, jobs, wind, cloud, td)
    # the fall still to come: each night's minimum from then to end_s (its readings up to it)
    i_end = air.count_le(np.arange(len(jobs)), np.array([j[7] for j in jobs]))
    v_tail = np.where(np.arange(air.v.shape[1]) < i_end[:, None], air.v, np.inf)
    tail_min = np.minimum.accumulate(v_tail[:, ::-1], axis=1)[:, ::-1]
    drops = (tail_min[night, idx] - air.v[night, idx]).tolist()
    feat_rows = feats.tolist()
    kept: list[list] = [[] for _ in jobs]
    for k, n in zip(np.nonzero(ok)[0].tolist(), night[ok].tolist(), strict=True):
        kept[n].append((tuple(feat_rows[k]), drops[k]))
    return [tuple(x) for x in kept]


def _feature_rows(air: _Rows, night: np.ndarray, idx: np.ndarray, times_s: np.ndarray, jobs: list,
                  wind_m_s: np.ndarray, cloud_frac: np.ndarray, dew_point_c: np.ndarray):
    """`feature_matrix` of each night's instants in that night's readings, the same numbers."""
    t0_s = np.array([j[4] for j in jobs])
    t0_c = np.array([j[5] for j in jobs])
    sunrise_s = np.array([j[6] for j in jobs])
    valid = np.arange(air.t.shape[1]) < air.lens[:, None]
    t_s = np.where(valid, air.t, t0_s[:, None])  # after a night's readings: nothing that sums (zeros below)
    v_c = air.v
    j = air.count_le(night, times_s)
    latest = np.where(j > 0, v_c[night, np.maximum(j - 1, 0)], np.nan)
    el = (t_s - t0_s[:, None]) / 3600.0
    use = el > MIN_ELAPSED_H
    x = np.sqrt(np.where(use, el, 0.0))
    parts = np.stack([np.where(use, x * (v_c - t0_c[:, None]), 0.0), np.where(use, x * x, 0.0), np.ones_like(el), el,
                      el * el, v_c, el * v_c])
    sums = np.zeros((7, *el.shape[:1], el.shape[1] + 1))
    np.cumsum(np.where(valid, parts, 0.0), axis=2, out=sums[:, :, 1:])
    i2 = air.count_le(night, times_s - RECENT_SLOPE_S)
    feats, ok = _features_from_sums(sums[:, night, j], sums[2:, night, i2], j, times_s, t0_s[night], sunrise_s[night],
                                    latest, dew_point_c, wind_m_s, cloud_frac)
    return latest, feats, ok
