"""A block's night, projected: which sensor speaks for it, the dusk forecast, the nowcast,
the inversion, and the crossing times of the stage's critical temperatures. Pure: readings,
config and an injected `now` in, a `Projection` out.

The dusk forecast follows FAO-FP ch. 5 (Snyder & de Melo-Abreu 2005): at t0 = sunset + 2 h the
night minimum Tp comes from an Allen (1957)-type regression on the air temperature and dew point
at t0, fitted on the site's own past radiation nights (walk-forward; see `fit_calibration`), with
a physics-based prior (`frostwatch.physics.cooling.clear_night_minimum_prior_c`) until enough
nights are known. The regression is on Reuter's cooling coefficient K = (Tn - T0)/sqrt(h)
(see `Calibration`). The trend from t0 to sunrise is Reuter's square-root curve
T(t) = T0 + b' sqrt(t - t0), b' = (Tp - T0)/sqrt(h). At every evaluation after t0 the curve is
re-fitted to tonight's observed cooling (the nowcast); once the site has enough past nights the
nowcast's minimum is the site-learned remaining fall (`nowcast_features`). Where the radiation
model does not hold (wind above the limit, cloud) the projection leans on the observed trend and
says so. Figures and every variant tried: bench/results/forecast_skill.json and
bench/results/forecast_variants.json.
"""

from __future__ import annotations

import datetime as dt
import functools
import math
from dataclasses import dataclass, field

import numpy as np

from frostwatch import drying
from frostwatch import towers as towers_mod
from frostwatch.config import Block, Config, Station
from frostwatch.models import Projection, StationState
from frostwatch.night import Night
from frostwatch.physics import cooling, humidity, windmachine
from frostwatch.units import QUANTITIES

Series = dict[tuple[str, str], tuple[np.ndarray, np.ndarray]]

MIN_INTERVAL_S = 60.0  # a sensor is never expected more often than once a minute
DEFAULT_INTERVAL_S = 300.0  # assumed when a sensor has too few readings to tell
STUCK_WINDOW_S = 3600.0  # a crop-height air sensor flat to the last digit this long is suspect
STUCK_MIN_READINGS = 10  # a 5-min sensor gives 12-13 readings an hour
PRIOR_BAND_C = 2.0  # 1-sigma-ish uncertainty of the physics prior before any calibration
RIDGE_LAMBDA = 2.0  # ridge penalty on the standardised regression slopes
CALIBRATION_T0_CEILING_C = 16.0  # nights warmer than this at t0 are not frost-season nights
RADIATION_NIGHT_WIND_M_S = 2.0  # a past night is a radiation night if its mean wind was below this
RADIATION_NIGHT_CLOUD_FRAC = 0.3  # ... and its cloud never above this (FAO-FP ch. 5 usage)
ASSUMED_DEPRESSION_C = 6.0  # dew-point depression assumed with no humidity sensor
CLOUDY_FRAC = 0.5  # above this cloud fraction the radiation model is not used
NOWCAST_HALF_WEIGHT_H = 1.0  # after this many hours of tonight's data, it weighs as much as the dusk curve
GRID_STEP_S = 300.0
EXTRAPOLATE_AFTER_S = 600.0  # a dusk value older than this is carried along the last slope
INPUT_WINDOW_S = 3600.0  # wind and cloud at t0: the mean of the last hour (or one interval)
TREND_WEIGHT = {"windy": 0.8, "cloudy": 0.4}  # share of the observed trend where radiation fails
SPRINKLER_METHODS = ("overtree_sprinkler", "undertree_sprinkler")
MIN_REGRESSION_NIGHTS = 3  # below this many nights the physics prior alone gives the dusk forecast
WIND_TREND_S = 3 * 3600.0  # the dusk wind trend: wind at t0 minus wind this long before
NOWCAST_MIN_SAMPLES = 40  # half-hourly points of past nights before the learned nowcast is used
NOWCAST_RIDGE_LAMBDA = 1.0
NOWCAST_SAMPLE_STEP_S = 1800.0  # one training point per half hour of a past night
NOWCAST_START_S = 1800.0  # the learned nowcast starts half an hour after t0
NOWCAST_MIN_HOURS_LEFT = 0.5  # the band never shrinks below this many hours' worth


# ---- which sensor speaks for a block -----------------------------------------------------------


def usual_interval_s(t_s: np.ndarray, configured_s: float | None) -> float:
    """A station's usual reporting interval: the config's, or the median gap of its last readings."""
    if configured_s:
        return float(configured_s)
    if len(t_s) < 3:
        return DEFAULT_INTERVAL_S
    gaps = np.diff(t_s[-20:])
    gaps = gaps[gaps > 0]
    return max(MIN_INTERVAL_S, float(np.median(gaps))) if len(gaps) else DEFAULT_INTERVAL_S


def station_state(
    st: Station, series: Series, now_s: float, stale_after_intervals: float
) -> StationState:
    """Latest values of a station and whether its air temperature can be trusted now."""
    latest: dict[str, float] = {}
    latest_at: dict[str, dt.datetime] = {}
    problems: list[str] = []
    for q in QUANTITIES:  # only this station's series: the loop must not grow with the farm
        if (st.id, q) not in series:
            continue
        t, v = series[(st.id, q)]
        if len(t) == 0:
            continue
        idx = np.searchsorted(t, now_s, side="right") - 1
        if idx < 0:
            continue
        latest[q] = float(v[idx])
        latest_at[q] = dt.datetime.fromtimestamp(float(t[idx]), tz=dt.UTC)
    healthy = True
    key = (st.id, "air_temperature")
    if st.role in ("crop", "tower"):
        if key not in series or "air_temperature" not in latest:
            healthy = False
            problems.append(f"{st.id}: no air temperature reading")
        else:
            t, v = series[key]
            upto = t <= now_s
            t, v = t[upto], v[upto]
            interval = usual_interval_s(t, st.interval_s)
            age = now_s - t[-1]
            if age > stale_after_intervals * interval:
                healthy = False
                problems.append(
                    f"{st.id}: silent for {age / 60:.0f} min (usual interval {interval / 60:.0f} min); left out"
                )
            recent = v[t >= now_s - STUCK_WINDOW_S]
            if len(recent) >= STUCK_MIN_READINGS and np.all(recent == recent[0]):
                healthy = False
                problems.append(f"{st.id}: air temperature stuck at {recent[0]:g} degC for an hour; left out")
    return StationState(st.id, st.height_m, st.role, latest, latest_at, healthy, tuple(problems))


def speaking_station(states: list[StationState]) -> StationState | None:
    """The coldest healthy crop-height sensor (grower-needs E4/F1: never a stale value)."""
    ok = [s for s in states if s.role == "crop" and s.healthy and "air_temperature" in s.latest]
    return min(ok, key=lambda s: s.latest["air_temperature"]) if ok else None


# ---- calibration on the site's own nights -------------------------------------------------------


@dataclass(frozen=True)
class NightRecord:
    """What one past night did at a block's speaking sensor: the dusk values and the minimum.

    The `t0_*` values are as the forecast saw them at its issue time (readings up to t0 only), so
    that the regression is fitted on the same inputs it is later applied to.
    """

    night: dt.date
    station: str
    t0_temp_c: float
    t0_dew_point_c: float | None
    hours_to_sunrise: float
    observed_min_c: float
    observed_min_at_utc: dt.datetime
    mean_wind_m_s: float | None
    max_cloud_frac: float | None
    prior_c: float
    radiation_night: bool
    t0_wind_m_s: float | None = None
    t0_cloud_frac: float | None = None
    t0_wind_trend_m_s: float | None = None
    # (features, remaining drop) at times through the night, for the learned nowcast
    nowcast_samples: tuple[tuple[tuple[float, ...], float], ...] = ()


@dataclass(frozen=True)
class DuskInputs:
    """What is known at the dusk point t0 (sunset + 2 h) from readings up to t0."""

    station: str
    temp_c: float
    dew_point_c: float | None
    wind_m_s: float | None
    cloud_frac: float | None
    wind_trend_m_s: float | None = None


FEATURES = ("T0", "Td0", "cloud0", "wind0", "wind_trend0")


def feature_vector(
    t0_c: float, td0_c: float | None, cloud: float | None, wind: float | None, wind_trend: float | None = None
) -> tuple[float, ...]:
    """The regression's inputs, with the same stand-ins the physics prior uses when one is missing:
    dew point 6 degC below the air, clear sky, calm, steady wind."""
    return (t0_c, t0_c - ASSUMED_DEPRESSION_C if td0_c is None else td0_c, cloud or 0.0, wind or 0.0, wind_trend or 0.0)


NOWCAST_FEATURES = ("sqrt_curve_drop", "sqrt_hours_left", "recent_slope_x_hours_left", "wind", "cloud", "depression")


@dataclass(frozen=True)
class Calibration:
    """The site's dusk regression and its learned nowcast, fitted walk-forward on past nights.

    Dusk forecast: Reuter's square-root law Tn = T0 + K sqrt(h) (h: hours from t0 to sunrise),
    with the cooling coefficient K regressed on what is known at t0, K = k0 + a T0 + b Td0 +
    d cloud0 + e wind0 + f (wind0 - wind 3 h earlier); the regression of K on observed
    quantities is Dalla Nora et al. (2005)'s use of Reuter's model, and the inputs are FAO-FP
    ch. 5's (Allen 1957) plus cloud and wind. Ridge shrinkage pulls K toward the site's mean
    cooling coefficient (the "T0 minus the usual drop" rule), not toward the mean minimum, so a
    site with few nights still scales with tonight's T0. Cloud and wind carry the non-radiation
    nights instead of throwing them away.

    `coefs` are the regression's slopes as d Tn / d input at the fitted nights' mean night
    length (for display and sign checks); `k_coefs` are the fitted slopes of K.

    Nowcast: the remaining fall from the latest reading to the night's minimum, regressed on
    `NOWCAST_FEATURES` at half-hourly points of past nights (the site's learned correction of
    the square-root curve as a function of the hours left).
    """

    n_nights: int = 0
    mean_min_c: float = 0.0
    means: tuple[float, ...] = (0.0,) * len(FEATURES)
    coefs: tuple[float, ...] = (0.0,) * len(FEATURES)
    weight: float = 0.0  # share of the site regression; the physics prior has the rest
    residual_std_c: float = PRIOR_BAND_C
    nights: tuple[dt.date, ...] = field(default=())
    k_mean: float = 0.0
    k_coefs: tuple[float, ...] = (0.0,) * len(FEATURES)
    mean_sqrt_h: float = 3.0
    nc_samples: int = 0
    nc_mean: float = 0.0
    nc_means: tuple[float, ...] = (0.0,) * len(NOWCAST_FEATURES)
    nc_coefs: tuple[float, ...] = (0.0,) * len(NOWCAST_FEATURES)
    nc_scale_c: float = PRIOR_BAND_C  # residual std of the remaining fall per sqrt(hour left)

    def regression_c(self, x: tuple[float, ...], hours: float | None = None) -> float:
        """Tn = T0 + K(x) sqrt(h); `hours` defaults to the fitted nights' mean night length."""
        sq = self.mean_sqrt_h if hours is None else math.sqrt(max(0.0, hours))
        k = self.k_mean + sum(c * (xi - m) for c, xi, m in zip(self.k_coefs, x, self.means, strict=True))
        return x[0] + k * sq

    def predict_c(self, prior_c: float, x: tuple[float, ...], hours: float | None = None) -> float:
        """The dusk forecast of the minimum: regression and physics prior, weighted by nights known."""
        if self.weight <= 0.0:
            return prior_c
        return self.weight * self.regression_c(x, hours) + (1.0 - self.weight) * prior_c

    @property
    def nowcast_ready(self) -> bool:
        return self.nc_samples >= NOWCAST_MIN_SAMPLES

    def nowcast_drop_c(self, f: tuple[float, ...]) -> float:
        """The learned remaining fall (<= 0) from the latest reading to the night's minimum."""
        d = self.nc_mean + sum(c * (xi - m) for c, xi, m in zip(self.nc_coefs, f, self.nc_means, strict=True))
        return min(0.0, d)


def _ridge(x: np.ndarray, y: np.ndarray, lam: float) -> tuple[np.ndarray, np.ndarray, float]:
    """Ridge on standardised inputs: (means, slopes in the inputs' own units, mean of y)."""
    mu = x.mean(axis=0)
    sd = x.std(axis=0)
    use = sd > 1e-6  # a constant input (no cloud sensor: always clear) gets no slope
    coefs = np.zeros(x.shape[1])
    if len(y) >= 3 and use.any():
        z = (x[:, use] - mu[use]) / sd[use]
        beta = np.linalg.solve(z.T @ z + lam * np.eye(z.shape[1]), z.T @ (y - y.mean()))
        coefs[use] = beta / sd[use]
    return mu, coefs, float(y.mean())


_FIT_CACHE: dict[tuple[int, int, int], tuple[list, Calibration]] = {}


def fit_calibration(records: list[NightRecord], min_nights: int = 10) -> Calibration:
    """Fit the site regression on the frost-season nights among `records` (all earlier nights).

    Nights with T0 at or above `CALIBRATION_T0_CEILING_C` are left out (warm, humid nights teach
    nothing about frost; all nights are used while fewer than 3 cool ones are known). The slopes
    are ridge-shrunk toward the site's mean cooling coefficient, harder while fewer than
    `min_nights` are known (FAO-FP ch. 5 asks for about ten local nights), so that one odd night
    cannot swing the forecast; the physics prior alone is used below `MIN_REGRESSION_NIGHTS`
    (blending it in longer made the TMY3 benchmark worse: the prior runs warm there, see
    bench/results/forecast_variants.json). Memoised on the list's identity and length: the
    pipeline's history lists only grow.
    """
    key = (id(records), len(records), min_nights)
    hit = _FIT_CACHE.get(key)
    if hit is not None and hit[0] is records:
        return hit[1]
    cal = _fit(records, min_nights)
    if len(_FIT_CACHE) > 256:
        _FIT_CACHE.clear()
    _FIT_CACHE[key] = (records, cal)
    return cal


def _fit(records: list[NightRecord], min_nights: int) -> Calibration:
    cool = [r for r in records if r.t0_temp_c < CALIBRATION_T0_CEILING_C]
    rs = cool if len(cool) >= 3 else list(records)
    n = len(rs)
    if n == 0:
        return Calibration()
    x = np.array([feature_vector(r.t0_temp_c, r.t0_dew_point_c, r.t0_cloud_frac, r.t0_wind_m_s, r.t0_wind_trend_m_s) for r in rs])
    y = np.array([r.observed_min_c for r in rs])
    sq = np.sqrt(np.array([max(0.25, r.hours_to_sunrise) for r in rs]))
    k = (y - x[:, 0]) / sq  # each night's square-root cooling coefficient
    lam = RIDGE_LAMBDA * max(1.0, min_nights / n)
    mu, kc, k_mean = _ridge(x, k, lam)
    fitted = x[:, 0] + (k_mean + (x - mu) @ kc) * sq
    n_used = int(np.count_nonzero(kc))
    dof = max(1, n - 1 - n_used)
    sd_res = float(np.sqrt(np.sum((y - fitted) ** 2) / dof)) if n > 2 else PRIOR_BAND_C
    weight = 1.0 if n >= MIN_REGRESSION_NIGHTS else 0.0
    # until enough nights are known the band cannot be narrower than the prior's share of it
    w = min(1.0, n / min_nights)
    sd_res = math.sqrt(w * sd_res**2 + (1 - w) * PRIOR_BAND_C**2)
    msq = float(sq.mean())
    coefs = kc * msq
    coefs[0] += 1.0
    cal = dict(
        n_nights=n, mean_min_c=float(y.mean()), means=tuple(float(m) for m in mu), coefs=tuple(float(c) for c in coefs),
        weight=weight, residual_std_c=max(sd_res, 0.3), nights=tuple(r.night for r in rs),
        k_mean=k_mean, k_coefs=tuple(float(c) for c in kc), mean_sqrt_h=msq,
    )
    samples = [smp for r in rs for smp in r.nowcast_samples]
    if len(samples) >= NOWCAST_MIN_SAMPLES:
        fx = np.array([f for f, _ in samples])
        fy = np.array([d for _, d in samples])
        nmu, nc, nmean = _ridge(fx, fy, NOWCAST_RIDGE_LAMBDA)
        res = fy - (nmean + (fx - nmu) @ nc)
        hl = np.maximum(fx[:, 1] ** 2, NOWCAST_MIN_HOURS_LEFT)
        cal.update(
            nc_samples=len(samples), nc_mean=nmean, nc_means=tuple(float(m) for m in nmu),
            nc_coefs=tuple(float(c) for c in nc), nc_scale_c=float(np.sqrt(np.mean(res**2 / hl))),
        )
    return Calibration(**cal)


def nowcast_features(
    t_s: np.ndarray, v_c: np.ndarray, t0_s: float, t0_c: float, sunrise_s: float, now_s: float,
    wind: float | None, cloud: float | None, dew_point_c: float | None,
) -> tuple[float, tuple[float, ...]] | None:
    """(latest reading, `NOWCAST_FEATURES`) at `now_s` from readings up to then, or None.

    - the remaining fall of the square-root curve re-fitted to tonight's readings since t0
      (anchored at T0) from now to sunrise, never positive;
    - sqrt of the hours left to sunrise;
    - the slope of the last two hours (least squares, at most +0.5 degC/h) times the hours left;
    - wind, cloud fraction (clear when unknown) and dew-point depression now.
    """
    j = int(np.searchsorted(t_s, now_s, side="right"))
    if j == 0:
        return None
    t_now_c = float(v_c[j - 1])
    i0 = int(np.searchsorted(t_s, t0_s, side="right"))
    el = (t_s[i0:j] - t0_s) / 3600.0
    ok = el > 0.05
    if not ok.any():
        return None
    xs = np.sqrt(el[ok])
    b_obs = float(np.sum(xs * (v_c[i0:j][ok] - t0_c)) / np.sum(xs * xs))
    h_total = max(0.0, (sunrise_s - t0_s) / 3600.0)
    e_now = math.sqrt(max(0.0, (now_s - t0_s) / 3600.0))
    hl = max(0.0, (sunrise_s - now_s) / 3600.0)
    curve_drop = min(0.0, b_obs * (math.sqrt(h_total) - e_now))
    i2 = int(np.searchsorted(t_s, now_s - 7200.0, side="right"))
    slope = 0.0
    if j - i2 >= 2:
        tt = (t_s[i2:j] - now_s) / 3600.0
        vv = v_c[i2:j]
        dt_ = tt - tt.mean()
        den = float(np.sum(dt_ * dt_))
        if den > 0:
            slope = float(np.sum(dt_ * (vv - vv.mean())) / den)
    dep = ASSUMED_DEPRESSION_C if dew_point_c is None else max(0.0, t_now_c - min(dew_point_c, t_now_c))
    return t_now_c, (curve_drop, math.sqrt(hl), min(0.5, slope) * hl, wind or 0.0, cloud or 0.0, dep)


# ---- the projection --------------------------------------------------------------------------


def _latest_site_value(states: list[StationState], quantity: str) -> float | None:
    vals = [s.latest[quantity] for s in states if quantity in s.latest]
    return float(np.mean(vals)) if vals else None


def dew_point_of(state: StationState | None, site_states: list[StationState]) -> float | None:
    """Dew point at crop height: measured, or from relative humidity (liquid-water convention)."""
    for s in ([state] if state else []) + site_states:
        if s is None:
            continue
        if "dew_point_temperature" in s.latest:
            return s.latest["dew_point_temperature"]
        if "relative_humidity" in s.latest and "air_temperature" in s.latest:
            rh = max(1.0, min(100.0, s.latest["relative_humidity"]))
            return float(humidity.dew_point_c_from_rel_humidity(s.latest["air_temperature"], rh))
    return None


def recent_mean(series: Series, stations: list[str], quantity: str, now_s: float, window_s: float) -> float | None:
    """Mean of the stations' readings in the last `window_s` (or the latest within two windows)."""
    return _mean_as_of(series, stations, quantity, now_s, window_s)


def cloud_frac_now(series: Series, cfg: Config, now_s: float, air_temp_c: float, dew_point_c: float | None) -> float | None:
    """Cloud fraction from a cloud sensor, or from an infrared sky sensor; None when neither exists."""
    measured = recent_mean(series, [s.id for s in cfg.stations], "cloud_area_fraction", now_s, INPUT_WINDOW_S)
    if measured is not None:
        return measured
    sky = recent_mean(series, [s.id for s in cfg.stations if s.role == "sky"], "surface_temperature", now_s, INPUT_WINDOW_S)
    if sky is None or dew_point_c is None:
        return None
    e = humidity.vapour_pressure_hpa_from_dew_point(dew_point_c)
    from frostwatch.physics import radiation

    return float(radiation.cloud_frac_from_sky_temperature(sky, air_temp_c, e))


def as_of(series: Series, station: str, quantity: str, t_s: float, max_age_s: float) -> float | None:
    """The value at `t_s` from readings up to `t_s` only (what a forecast issued then could know).

    The latest reading, carried forward along the slope of the last two readings when it is
    older than `EXTRAPOLATE_AFTER_S` (an hourly log's last value can be most of an hour old at
    the dusk point; the evening fall then is steady). None if the latest is older than `max_age_s`.
    """
    key = (station, quantity)
    if key not in series:
        return None
    t, v = series[key]
    i = int(np.searchsorted(t, t_s, side="right")) - 1
    if i < 0 or t_s - t[i] > max_age_s:
        return None
    val = float(v[i])
    age = t_s - float(t[i])
    if age > EXTRAPOLATE_AFTER_S and i >= 1:
        gap = float(t[i] - t[i - 1])
        if 0 < gap <= 2.0 * max(age, EXTRAPOLATE_AFTER_S):
            val += (val - float(v[i - 1])) / gap * age
    return val


def _mean_as_of(series: Series, stations: list[str], quantity: str, t_s: float, window_s: float) -> float | None:
    """Mean of the readings in (t_s - window, t_s]; if none, the latest one within two windows."""
    vals, last = [], None
    for sid in stations:
        if (sid, quantity) not in series:
            continue
        t, v = series[(sid, quantity)]
        j = int(np.searchsorted(t, t_s, side="right"))
        i = int(np.searchsorted(t, t_s - window_s, side="right"))
        if j > i:
            vals.extend(v[i:j].tolist())
        elif j > 0 and t_s - t[j - 1] <= 2.0 * window_s:
            last = float(v[j - 1])
    if vals:
        return float(np.mean(vals))
    return last


def dusk_inputs(cfg: Config, series: Series, station: str, block_stations: list[Station], t0_s: float) -> DuskInputs | None:
    """Temperature, dew point, wind and cloud at t0 for `station`, from readings up to t0 only."""
    site = [s for s in cfg.stations if s.block is None]
    st = next((s for s in block_stations if s.id == station), None)
    interval = st.interval_s if st and st.interval_s else None
    if interval is None and (station, "air_temperature") in series:
        interval = usual_interval_s(series[(station, "air_temperature")][0], None)
    max_age = cfg.forecast.stale_after_intervals * (interval or DEFAULT_INTERVAL_S)
    t0_c = as_of(series, station, "air_temperature", t0_s, max_age)
    if t0_c is None:
        return None
    others = [station] + [s.id for s in block_stations if s.id != station] + [s.id for s in site]
    td = None
    def age_limit(sid: str, quantity: str) -> float:
        # each series is judged by its own usual interval (humidity often reports less often than air)
        if (sid, quantity) not in series:
            return max_age
        return max(max_age, cfg.forecast.stale_after_intervals * usual_interval_s(series[(sid, quantity)][0], None))

    for sid in others:
        td = as_of(series, sid, "dew_point_temperature", t0_s, age_limit(sid, "dew_point_temperature"))
        if td is None:
            rh = as_of(series, sid, "relative_humidity", t0_s, age_limit(sid, "relative_humidity"))
            ta = t0_c if sid == station else as_of(series, sid, "air_temperature", t0_s, age_limit(sid, "air_temperature"))
            if rh is not None and ta is not None:
                td = float(humidity.dew_point_c_from_rel_humidity(ta, max(1.0, min(100.0, rh))))
        if td is not None:
            break
    if td is not None:
        td = min(td, t0_c)
    window = max(INPUT_WINDOW_S, interval or 0.0)
    ids = [s.id for s in block_stations] + [s.id for s in site]
    if not any((i, "wind_speed") in series for i in ids):
        ids = [s.id for s in cfg.stations]  # no anemometer in the block: the farm's wind
    wind = _mean_as_of(series, ids, "wind_speed", t0_s, window)
    wind_then = _mean_as_of(series, ids, "wind_speed", t0_s - WIND_TREND_S, window)
    wind_trend = None if wind is None or wind_then is None else wind - wind_then
    cloud = _mean_as_of(series, [s.id for s in cfg.stations], "cloud_area_fraction", t0_s, window)
    if cloud is None and td is not None:
        sky = _mean_as_of(series, [s.id for s in cfg.stations if s.role == "sky"], "surface_temperature", t0_s, window)
        if sky is not None:
            e = humidity.vapour_pressure_hpa_from_dew_point(td)
            from frostwatch.physics import radiation

            cloud = float(radiation.cloud_frac_from_sky_temperature(sky, t0_c, e))
    return DuskInputs(station, t0_c, td, wind, None if cloud is None else max(0.0, min(1.0, cloud)), wind_trend)


def _sqrt_b_fit(elapsed_h: np.ndarray, temps_c: np.ndarray, t0_c: float) -> float | None:
    """Least-squares b of T - T0 = b sqrt(t - t0) through the anchored T0; None if too few points."""
    sel = elapsed_h > 0.05
    if sel.sum() < 3:
        return None
    x = np.sqrt(elapsed_h[sel])
    return float(np.sum(x * (temps_c[sel] - t0_c)) / np.sum(x * x))


def crossing_time(grid_s: np.ndarray, curve_c: np.ndarray, threshold_c: float) -> float | None:
    """First time the curve is at or below the threshold, interpolated; None if it never is."""
    below = np.nonzero(curve_c <= threshold_c)[0]
    if len(below) == 0:
        return None
    i = int(below[0])
    if i == 0:
        return float(grid_s[0])
    c0, c1 = curve_c[i - 1], curve_c[i]
    f = (c0 - threshold_c) / (c0 - c1) if c0 != c1 else 1.0
    return float(grid_s[i - 1] + f * (grid_s[i] - grid_s[i - 1]))


@functools.lru_cache(maxsize=4096)
def _prior_cached(t0_c: float, td_c: float, hours: float, wind: float, cloud: float, p_hpa: float) -> float:
    return float(cooling.clear_night_minimum_prior_c(
        t0_c, td_c, hours, wind_speed_m_s=wind, cloud_frac=cloud, pressure_hpa=p_hpa
    ))


def _prior_c(t0_c: float, td_c: float, hours: float, wind: float, cloud: float, p_hpa: float) -> float:
    """The physics prior, memoised on inputs rounded well inside their measurement error."""
    return _prior_cached(round(t0_c, 2), round(td_c, 2), round(hours, 2), round(wind, 1), round(cloud, 2), round(p_hpa))


def _utc(t_s: float | None) -> dt.datetime | None:
    return None if t_s is None else dt.datetime.fromtimestamp(round(t_s), tz=dt.UTC)


def project_block(
    now_utc: dt.datetime,
    block: Block,
    cfg: Config,
    series: Series,
    night: Night,
    calibration: Calibration | None = None,
    pressure_hpa: float | None = None,
) -> Projection:
    """Project `block`'s crop-height air (and wet bulb) from `now_utc` to sunrise."""
    now_s = now_utc.timestamp()
    fc = cfg.forecast
    cal = calibration or Calibration()
    p_hpa = pressure_hpa or float(humidity.pressure_hpa_from_elevation(cfg.site.elevation_m))
    stations = cfg.stations_of(block.id)
    site_stations = [s for s in cfg.stations if s.block is None]
    states = [station_state(s, series, now_s, fc.stale_after_intervals) for s in stations]
    site_states = [station_state(s, series, now_s, fc.stale_after_intervals) for s in site_stations]
    notes = [p for s in states for p in s.problems]
    speaker = speaking_station(states)
    base = dict(
        time_utc=now_utc, block=block.id, sunset_utc=night.sunset_utc, sunrise_utc=night.sunrise_utc
    )
    if speaker is None:
        notes.append(f"block {block.id}: no healthy crop-height sensor; no projection can be made")
        return Projection(
            **base, station=None, air_temp_c=None, dew_point_c=None, wet_bulb_c=None,
            predicted_min_c=None, predicted_min_at_utc=None, band_c=None, crossings_utc={},
            inversion_c=None, projected_inversion_c=None, inversion_class=None, wind_speed_m_s=None,
            regime="unmonitored", method="none", notes=tuple(notes),
        )

    air_c = speaker.latest["air_temperature"]
    td_c = dew_point_of(speaker, [s for s in states if s is not speaker] + site_states)
    if td_c is not None:
        td_c = min(td_c, air_c)
    wind = recent_mean(series, [s.id for s in stations + site_stations], "wind_speed", now_s, INPUT_WINDOW_S)
    if wind is None:
        # no anemometer in the block or site-wide: the farm's wind is better than none
        others = [s.id for s in cfg.stations if s.block not in (block.id, None)]
        wind = recent_mean(series, others, "wind_speed", now_s, INPUT_WINDOW_S)
        if wind is not None:
            notes.append("no wind sensor in this block: wind from the farm's other sensors")
    cloud = cloud_frac_now(series, cfg, now_s, air_c, td_c)
    # the wet bulb decides only for sprinkler blocks (and is shown in their alerts)
    wet_c = None  # computed with the wet-bulb curve below (one vectorised call)
    td_trend = td_at_start = None  # the dew point's fall tonight, for sprinkler blocks (below)
    if cloud is None:
        notes.append("no sky or cloud sensor: clear sky assumed")

    regime = "radiation"
    if wind is not None and wind > fc.radiation_wind_limit_m_s:
        regime = "windy"
        notes.append(
            f"wind {wind:.1f} m/s is above {fc.radiation_wind_limit_m_s:g} m/s: radiation model does not hold; "
            "projection leans on the observed trend"
        )
    elif cloud is not None and cloud >= CLOUDY_FRAC:
        regime = "cloudy"
        notes.append(f"cloud fraction {cloud:.1f}: radiation model does not hold; projection leans on the observed trend")

    sunrise_s = night.sunrise_utc.timestamp()
    dusk_s = night.dusk_utc.timestamp()
    hours_left = max(0.0, (sunrise_s - now_s) / 3600.0)
    t_air, v_air = series[(speaker.station, "air_temperature")]
    upto = t_air <= now_s
    t_air, v_air = t_air[upto], v_air[upto]

    # the dusk forecast: at t0 if we are past it, else from the latest values
    di = dusk_inputs(cfg, series, speaker.station, stations, dusk_s) if now_s >= dusk_s else None
    if di is not None:
        t0_c, td0_c, wind0, cloud0, trend0 = di.temp_c, di.dew_point_c, di.wind_m_s, di.cloud_frac, di.wind_trend_m_s
        t0_s, method = dusk_s, "dusk forecast"
    else:
        t0_c, td0_c, wind0, cloud0, t0_s, method = air_c, td_c, wind, cloud, now_s, "pre-dusk estimate"
        trend0 = None
    h_from_t0 = max(0.25, (sunrise_s - t0_s) / 3600.0)
    x = feature_vector(t0_c, td0_c, cloud0, wind0, trend0)
    prior = _prior_c(t0_c, x[1], h_from_t0, x[3], x[2], p_hpa)
    if not math.isfinite(prior):
        notes.append("the physics prior is undefined for these inputs; the site regression alone is used")
        prior = cal.regression_c(x, h_from_t0) if cal.weight > 0 else t0_c - 3.0
    tp_c = min(cal.predict_c(prior, x, h_from_t0), t0_c)
    if td0_c is None:
        notes.append(f"no humidity reading at dusk: dew point assumed {ASSUMED_DEPRESSION_C:g} K below the air for the dusk forecast")
    b_dusk = (tp_c - t0_c) / math.sqrt(h_from_t0)

    # the nowcast: tonight's observed cooling since t0 re-fits the curve's coefficient
    band = cal.residual_std_c
    elapsed_since_t0_h = max(0.0, (now_s - t0_s) / 3600.0)
    grid_s = np.arange(now_s, max(now_s, sunrise_s) + 1.0, GRID_STEP_S)
    if grid_s[-1] < sunrise_s:
        grid_s = np.append(grid_s, sunrise_s)
    e_now = math.sqrt(max(0.0, (now_s - t0_s) / 3600.0))
    e_grid = np.sqrt(np.maximum(0.0, (grid_s - t0_s) / 3600.0))
    # the curve starts from the air temperature now (carried along the last slope if the latest
    # reading is old, as in an hourly log), so the dusk forecast's minimum is the calibrated one
    anchor_c = as_of(series, speaker.station, "air_temperature", now_s, math.inf) or air_c
    if now_s >= dusk_s and now_s > t0_s:
        sel = t_air >= t0_s
        b_obs = _sqrt_b_fit((t_air[sel] - t0_s) / 3600.0, v_air[sel], t0_c)
    else:
        b_obs = None
    w_obs = elapsed_since_t0_h / (elapsed_since_t0_h + NOWCAST_HALF_WEIGHT_H)
    learned = None
    if di is not None and cal.nowcast_ready and t0_s + NOWCAST_START_S <= now_s < sunrise_s:
        learned = nowcast_features(t_air, v_air, t0_s, t0_c, sunrise_s, now_s, wind, cloud, td_c)
    if learned is not None:
        # the site's learned nowcast: the remaining fall from tonight's curve, recent slope,
        # hours left, wind, cloud and humidity; the curve keeps the square-root shape to it
        tp_nc = min(anchor_c, learned[0] + cal.nowcast_drop_c(learned[1]))
        span = math.sqrt(h_from_t0) - e_now
        b = (tp_nc - anchor_c) / span if span > 0.05 else 0.0
        curve = anchor_c + b * (e_grid - e_now)
        band = cal.nc_scale_c * math.sqrt(max(hours_left, NOWCAST_MIN_HOURS_LEFT))
        method = "nowcast (site-learned from tonight's cooling)"
    elif regime == "radiation" or now_s < dusk_s:
        # before dusk the evening fall is steep and says little about the night: use the dusk
        # curve (the prior carries wind and cloud); after dusk re-fit it to tonight's cooling
        if b_obs is not None:
            b = (1 - w_obs) * b_dusk + w_obs * min(b_obs, 0.5)
            band = band * (1 - 0.6 * w_obs)
            method = "nowcast (square-root curve re-fitted to tonight)"
        else:
            b = b_dusk
        curve = anchor_c + b * (e_grid - e_now)
    else:
        # the radiation model does not hold: as tonight shows its trend, lean on the trend of
        # the last two hours, blended with the dusk curve (whose regression carries cloud and wind)
        sel = t_air >= now_s - 7200.0
        slope = 0.0
        if sel.sum() >= 3 and t_air[sel][-1] - t_air[sel][0] >= 3000.0:
            slope = float(np.polyfit((t_air[sel] - now_s) / 3600.0, v_air[sel], 1)[0])
        slope = max(-2.0, min(0.5, slope))
        trend = anchor_c + slope * (grid_s - now_s) / 3600.0
        dusk_curve = anchor_c + b_dusk * (e_grid - e_now)
        w_trend = TREND_WEIGHT[regime] * w_obs
        curve = w_trend * trend + (1 - w_trend) * dusk_curve
        band = max(band, 1.5)
        method = f"observed trend ({regime} night)" if w_trend >= 0.2 else f"dusk forecast ({regime} night)"
    curve = np.minimum(curve, max(anchor_c, float(curve[0]))) if len(curve) else curve
    if learned is None:
        band *= math.sqrt(min(1.0, hours_left / 6.0)) if hours_left > 0 else 0.0
    band = max(band, 0.3)

    if now_s >= sunrise_s:
        # after sunrise: report what was observed, project nothing
        night_sel = t_air >= night.sunset_utc.timestamp()
        obs = v_air[night_sel] if night_sel.any() else v_air
        i = int(np.argmin(obs))
        tmin_c = float(obs[i])
        tmin_at = _utc(float(t_air[night_sel][i] if night_sel.any() else t_air[i]))
        crossings = {}
        if td_c is not None and block.protection in SPRINKLER_METHODS:
            wet_c = float(humidity.wet_bulb_c_from_dew_point(air_c, td_c, p_hpa))
            wet_c = wet_c if math.isfinite(wet_c) else None
        method = "observed (after sunrise)"
        band = 0.0
    else:
        i = int(np.argmin(curve))
        tmin_c = float(curve[i])
        tmin_at = _utc(float(grid_s[i]))
        thresholds = {
            "t10_margin": block.kill_10pct_c + block.margin_c,
            "t10": block.kill_10pct_c,
            "t90": block.kill_90pct_c,
        }
        crossings = {k: _utc(crossing_time(grid_s, curve, thr)) for k, thr in thresholds.items()}
        if td_c is not None and block.protection in SPRINKLER_METHODS:
            # the wet-bulb crossings follow tonight's dew point as it falls (frostwatch.drying):
            # at each grid point the air temperature whose wet bulb is the threshold, at that
            # point's projected dew point, in closed form (ASHRAE eqs. 33/35)
            wet_c = float(humidity.wet_bulb_c_from_dew_point(air_c, td_c, p_hpa))
            wet_c = wet_c if math.isfinite(wet_c) else None
            hist = drying.dew_point_history(series, [speaker.station] + [s.station for s in states + site_states
                                                                          if s is not speaker], now_s)
            td_trend = None if hist is None else drying.dew_point_trend_c_per_h(hist[0], hist[1], now_s)
            td_curve = drying.projected_dew_point_c(grid_s, now_s, td_c, drying.projected_fall_c_per_h(td_trend), curve)
            for key, thr in (("wet_bulb_t10_margin", thresholds["t10_margin"]), ("wet_bulb_t10", thresholds["t10"])):
                crossings[key] = _utc(drying.wet_bulb_crossing_s(grid_s, curve, td_curve, thr, p_hpa))
            at = crossings["wet_bulb_t10_margin"] or tmin_at
            td_at_start = float(np.interp(at.timestamp(), grid_s, td_curve)) if at is not None else td_c

    # inversion: tower minus crop height, now and projected to the minimum; a block without a
    # tower of its own uses the nearest (or the site-wide) one (frostwatch.towers)
    tower_states = {s.station: s for s in states + site_states}
    for st in cfg.stations:
        if st.role == "tower" and st.id not in tower_states:
            tower_states[st.id] = station_state(st, series, now_s, fc.stale_after_intervals)
    choice = towers_mod.tower_for_block(cfg, block, tower_states)
    towers = [tower_states[choice.station]] if choice is not None else []
    inv_c = proj_inv_c = None
    inv_class = None
    if towers:
        tower = towers[0]
        inv_c = tower.latest["air_temperature"] - air_c
        proj_inv_c = inv_c
        tt, tv = series[(tower.station, "air_temperature")]
        sel = (tt >= t0_s) & (tt <= now_s)
        t_tower0 = as_of(series, tower.station, "air_temperature", t0_s, 900.0)  # as known at t0, like the crop sensor
        if regime == "radiation" and t_tower0 is not None and now_s > t0_s and now_s < sunrise_s:
            b_tower = _sqrt_b_fit((tt[sel] - t0_s) / 3600.0, tv[sel], t_tower0)
            if b_tower is not None:
                e_now = math.sqrt((now_s - t0_s) / 3600.0)
                e_min = math.sqrt(max(0.0, (tmin_at.timestamp() - t0_s) / 3600.0)) if tmin_at else e_now
                tower_min = tower.latest["air_temperature"] + min(b_tower, 0.5) * (e_min - e_now)
                proj_inv_c = tower_min - tmin_c
        inv_class = windmachine.classify_inversion(inv_c)
    else:
        notes.append("no tower sensor: inversion not measured")
    tower_fields = {} if choice is None else dict(
        tower_station=choice.station, tower_own=choice.own, tower_site_wide=choice.site_wide,
        tower_distance_m=None if choice.distance_m is None else round(choice.distance_m, 0))
    drying_fields = {} if td_trend is None and td_at_start is None else dict(
        dew_point_trend_c_per_h=None if td_trend is None else round(td_trend, 2),
        dew_point_at_start_c=None if td_at_start is None else round(td_at_start, 2))

    return Projection(
        **base,
        station=speaker.station,
        air_temp_c=air_c,
        dew_point_c=td_c,
        wet_bulb_c=wet_c,
        predicted_min_c=round(tmin_c, 2),
        predicted_min_at_utc=tmin_at,
        band_c=round(band, 2),
        crossings_utc=crossings,
        inversion_c=None if inv_c is None else round(inv_c, 2),
        projected_inversion_c=None if proj_inv_c is None else round(proj_inv_c, 2),
        inversion_class=inv_class,
        wind_speed_m_s=None if wind is None else round(wind, 2),
        regime=regime,
        method=method,
        notes=tuple(notes),
        curve_time_utc=tuple(_utc(float(s)) for s in grid_s[:: max(1, len(grid_s) // 48)]) if now_s < sunrise_s else (),
        curve_air_temp_c=tuple(round(float(c), 2) for c in curve[:: max(1, len(grid_s) // 48)]) if now_s < sunrise_s else (),
        **tower_fields,
        **drying_fields,
    )


# ---- what a night did, for calibration and backtests -------------------------------------------


def night_record(
    block: Block, cfg: Config, series: Series, night: Night, pressure_hpa: float | None = None
) -> NightRecord | None:
    """What a finished night did at a block's speaking sensor: its inputs at t0, as a forecast
    issued then saw them (readings up to t0 only), and the observed minimum from t0 to one hour
    after sunrise. None when the night is not covered: no healthy crop-height sensor at t0, or a
    gap of more than `stale_after_intervals` intervals in its readings over the window.
    """
    dusk_s = night.dusk_utc.timestamp()
    sunset_s = night.sunset_utc.timestamp()
    sunrise_s = night.sunrise_utc.timestamp()
    end_s = sunrise_s + 3600.0
    stations = cfg.stations_of(block.id)
    site = [s for s in cfg.stations if s.block is None]
    states = [station_state(s, series, dusk_s, cfg.forecast.stale_after_intervals) for s in stations]
    speaker = speaking_station(states)
    if speaker is None:
        return None
    t, v = series[(speaker.station, "air_temperature")]
    st = next(s for s in stations if s.id == speaker.station)
    max_gap = cfg.forecast.stale_after_intervals * usual_interval_s(t[t <= dusk_s], st.interval_s)
    i0, i1 = int(np.searchsorted(t, dusk_s, side="left")), int(np.searchsorted(t, end_s, side="right"))
    tw, vw = t[i0:i1], v[i0:i1]
    if len(tw) < 3 or tw[0] - dusk_s > max_gap or sunrise_s - tw[-1] > max_gap or np.any(np.diff(tw) > max_gap):
        return None
    di = dusk_inputs(cfg, series, speaker.station, stations, dusk_s)
    if di is None:
        return None
    i = int(np.argmin(vw))
    ids = [s.id for s in stations + site]
    wind = _window_stat(series, ids, "wind_speed", sunset_s, sunrise_s, np.mean)
    cloud = _window_stat(series, [s.id for s in cfg.stations], "cloud_area_fraction", sunset_s, sunrise_s, np.max)
    if cloud is None and di.cloud_frac is not None:
        cloud = di.cloud_frac  # a sky sensor: its estimate at t0
    p_hpa = pressure_hpa or float(humidity.pressure_hpa_from_elevation(cfg.site.elevation_m))
    h = night.hours_to_sunrise(night.dusk_utc)
    x = feature_vector(di.temp_c, di.dew_point_c, di.cloud_frac, di.wind_m_s, di.wind_trend_m_s)
    prior = _prior_c(di.temp_c, x[1], h, x[3], x[2], p_hpa)
    samples = _nowcast_samples(cfg, series, speaker.station, stations, t, v, dusk_s, di.temp_c, sunrise_s, end_s)
    radiation = (wind is None or wind < RADIATION_NIGHT_WIND_M_S) and (cloud is None or cloud <= RADIATION_NIGHT_CLOUD_FRAC)
    return NightRecord(
        night=night.date,
        station=speaker.station,
        t0_temp_c=di.temp_c,
        t0_dew_point_c=di.dew_point_c,
        hours_to_sunrise=h,
        observed_min_c=float(vw[i]),
        observed_min_at_utc=_utc(float(tw[i])),
        mean_wind_m_s=wind,
        max_cloud_frac=cloud,
        prior_c=prior,
        radiation_night=radiation,
        t0_wind_m_s=di.wind_m_s,
        t0_cloud_frac=di.cloud_frac,
        t0_wind_trend_m_s=di.wind_trend_m_s,
        nowcast_samples=samples,
    )


def _nowcast_samples(
    cfg: Config, series: Series, station: str, stations: list[Station], t: np.ndarray, v: np.ndarray,
    t0_s: float, t0_c: float, sunrise_s: float, end_s: float,
) -> tuple[tuple[tuple[float, ...], float], ...]:
    """Training points for the learned nowcast: at readings half an hour or more after t0 and
    up to sunrise (at most one per `NOWCAST_SAMPLE_STEP_S`), the features as known then and the
    fall still to come (the minimum from then to `end_s`, minus the reading then)."""
    ids = [s.id for s in stations] + [s.id for s in cfg.stations if s.block is None]
    cloud_ids = [s.id for s in cfg.stations]
    i0 = int(np.searchsorted(t, t0_s + NOWCAST_START_S, side="left"))
    i1 = int(np.searchsorted(t, sunrise_s, side="right"))
    j_end = int(np.searchsorted(t, end_s, side="right"))
    if i1 <= i0:
        return ()
    # the minimum from each reading to the end of the window, computed once backwards
    tail_min = np.minimum.accumulate(v[i0:j_end][::-1])[::-1]
    out = []
    last = -math.inf
    for i in range(i0, i1):
        ts = float(t[i])
        if ts - last < NOWCAST_SAMPLE_STEP_S - 1.0:
            continue
        last = ts
        wind = _mean_as_of(series, ids, "wind_speed", ts, INPUT_WINDOW_S)
        cloud = _mean_as_of(series, cloud_ids, "cloud_area_fraction", ts, INPUT_WINDOW_S)
        td = None
        for sid in [station] + ids:
            td = _mean_as_of(series, [sid], "dew_point_temperature", ts, INPUT_WINDOW_S)
            rh = None if td is not None else _mean_as_of(series, [sid], "relative_humidity", ts, INPUT_WINDOW_S)
            if rh is not None:
                ta = float(v[i]) if sid == station else _mean_as_of(series, [sid], "air_temperature", ts, INPUT_WINDOW_S)
                if ta is not None:
                    td = float(humidity.dew_point_c_from_rel_humidity(ta, max(1.0, min(100.0, rh))))
            if td is not None:
                break
        f = nowcast_features(t, v, t0_s, t0_c, sunrise_s, ts, wind, cloud, td)
        if f is not None:
            out.append((f[1], float(tail_min[i - i0]) - f[0]))
    return tuple(out)


def _window_stat(series: Series, stations: list[str], quantity: str, start_s: float, end_s: float, stat) -> float | None:
    vals = []
    for sid in stations:
        if (sid, quantity) in series:
            t, v = series[(sid, quantity)]
            i, j = int(np.searchsorted(t, start_s, side="left")), int(np.searchsorted(t, end_s, side="right"))
            vals.extend(v[i:j].tolist())
    return float(stat(vals)) if vals else None
