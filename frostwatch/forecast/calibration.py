"""The site's calibration, learned night by night from sufficient statistics (no refit over the
history): the dusk regression, the learned nowcast, each method's recent skill, and the residuals
that make the 80 % band.

A `Learner` per block takes each finished night (`NightRecord`) once. Before adding it, it scores
the forecasts the current calibration would have made on that night (walk-forward by
construction): those errors feed the skill weights and the band. Then it adds the night's rows to
the normal equations. `Learner.calibration()` is an immutable `Calibration` snapshot that
`projection.project_block` reads; it only takes dot products and table lookups.

Nights with protection running (sprinklers or wind machines) are left out: their minimum is the
protection's doing, not the night's (issue 14). They are counted and said.
"""

from __future__ import annotations

import datetime as dt
import math
from collections import deque
from dataclasses import dataclass, field

import numpy as np

from frostwatch.forecast.sensors import ASSUMED_DEPRESSION_C

FEATURES = ("T0", "Td0", "cloud0", "wind0", "wind_trend0", "pressure_trend0")
NOWCAST_FEATURES = ("sqrt_curve_drop", "sqrt_hours_left", "recent_slope_x_hours_left", "wind", "cloud", "depression")
DUSK_METHODS = ("regression", "drop_regression", "prior", "evening_curve")
NOWCAST_METHODS = ("learned", "refit", "dusk_curve")

PRIOR_BAND_C = 2.0  # 1-sigma uncertainty of the physics prior before any calibration
RIDGE_LAMBDA = 2.0  # ridge penalty on the standardised dusk regression slopes
MIN_REGRESSION_NIGHTS = 3  # below this many nights the physics prior (with its learned offset) speaks
PRIOR_OFFSET_SHRINK_NIGHTS = 0.5  # the prior's offset is the mean error shrunk by n / (n + this)
NOWCAST_RIDGE_LAMBDA = 1.0
NOWCAST_MIN_SAMPLES = 20  # training points in an hours-left bin before its learned nowcast is used
NOWCAST_BIN_H = 1.0  # the learned nowcast and its band are kept per hour left to sunrise
NOWCAST_BINS = 14
NOWCAST_HALF_WEIGHT_H = 1.0  # with no skill known yet, tonight's re-fit weighs as much as the dusk curve after this
SKILL_HALF_LIFE = 30.0  # nights (dusk) or samples per bin (nowcast) for the recent-skill average
SKILL_MIN_SCORED = 5  # scored nights before a method's skill sets its weight
SKILL_FLOOR_C2 = 0.05  # added to each mean squared error so one lucky method cannot take all the weight
SKILL_SHRINK = 0.0  # share of the error covariance shrunk to its diagonal
BAND_QUANTILES = (0.1, 0.9)  # the 80 % band
BAND_Z = 1.2816  # the 10 % and 90 % points of a normal distribution, before residuals are known
BAND_MIN_RESIDUALS = 20
BAND_MEMORY = 300  # residuals kept per band bin (the most recent)
SIMILAR_WIDTH_C = 5.0  # dusk regression weighted toward similar nights (Gaussian width); None: all alike
SIMILAR_BY = 1  # ... similar in this input of FEATURES: 1 the dew point at t0 (the air mass), 0 T0
T0_STRATUM_C = 2.0  # nights are pooled in strata this wide of that input
PROTECTION_QUANTITIES = ("sprinkler_running", "wind_machine_running")
DUSK_CLEAR_CLOUD_FRAC = 0.3  # a dusk is "clear and calm" (the physics prior's own ground) at or below this
DUSK_CALM_WIND_M_S = 2.5  # ... and this wind (the wind-machine cut-off, FAO-FP)
SKILL_BY_REGIME = True
FORCE_DUSK_METHOD = None  # for benchmarks of one method alone
USE_EVENING = True
PRIOR_CLEAR_CALM_ONLY = True  # True: the physics prior enters the blend only on clear calm dusks
LEARNING_MEAN = True
NOWCAST_BLEND = True  # False: the learned nowcast alone once it exists (benchmark variant)
USE_PRESSURE_TREND = True
BAND_FROM_QUANTILES = True  # False: a normal band from the residuals' spread (benchmark variant)
BAND_PER_SQRT_HOUR = True  # dusk band residuals scaled by sqrt(hours to sunrise) (benchmark variant)
INVERSION_MEMORY = 30  # clear calm nights whose inversion at the minimum is kept (the most recent)
COLD_EVENING_WEIGHT = 0.75  # share of the evening curve beside the prior while no regression exists


def dusk_regime(x: tuple[float, ...]) -> str:
    """Which skill record a dusk belongs to: the prior is physics for clear calm nights only."""
    if not SKILL_BY_REGIME:
        return "any"
    return "clear_calm" if x[2] <= DUSK_CLEAR_CLOUD_FRAC and x[3] <= DUSK_CALM_WIND_M_S else "other"


def feature_vector(
    t0_c: float, td0_c: float | None, cloud: float | None, wind: float | None, wind_trend: float | None = None,
    pressure_trend: float | None = None,
) -> tuple[float, ...]:
    """The dusk regression's inputs, with the same stand-ins the physics prior uses when one is
    missing: dew point 6 degC below the air, clear sky, calm, steady wind and pressure."""
    return (t0_c, t0_c - ASSUMED_DEPRESSION_C if td0_c is None else td0_c, cloud or 0.0, wind or 0.0, wind_trend or 0.0,
            (pressure_trend or 0.0) if USE_PRESSURE_TREND else 0.0)


def nowcast_bin(hours_left: float) -> int:
    return int(min(NOWCAST_BINS - 1, max(0.0, hours_left) // NOWCAST_BIN_H))


@dataclass(frozen=True)
class NightRecord:
    """What one past night did at a block's speaking sensor: the dusk values and the minimum.

    The `t0_*` values are as the forecast saw them at its issue time (readings up to t0 only), so
    that the regression is fitted on the same inputs it is later applied to. `nowcast_samples`
    holds (features, fall still to come) at half-hourly points of the night, features as known
    then. `protected` is True when sprinklers or wind machines ran during the night.
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
    nowcast_samples: tuple[tuple[tuple[float, ...], float], ...] = ()
    protected: bool = False
    t0_pressure_trend_hpa: float | None = None
    evening_curve_c: float | None = None
    inversion_at_min_c: float | None = None  # tower minus crop height at the observed minimum

    @property
    def features(self) -> tuple[float, ...]:
        return feature_vector(self.t0_temp_c, self.t0_dew_point_c, self.t0_cloud_frac, self.t0_wind_m_s,
                              self.t0_wind_trend_m_s, self.t0_pressure_trend_hpa)


def _ridge_solve(m: np.ndarray, lam: float) -> tuple[np.ndarray, np.ndarray, float] | None:
    """Ridge regression from the augmented moment matrix M = sum z z^T, z = [1, x, y].

    Returns (means of x, slopes in x's own units, mean of y), the slopes shrunk on standardised
    inputs; an input with no spread gets no slope. None with fewer than two rows.
    """
    n = m[0, 0]
    if n < 2:
        return None
    k = m.shape[0] - 2
    mean = m[0, 1:] / n
    cov = m[1:, 1:] / n - np.outer(mean, mean)
    mu, y_mean = mean[:k], float(mean[k])
    sxx, sxy = cov[:k, :k], cov[:k, k]
    sd = np.sqrt(np.maximum(np.diag(sxx), 0.0))
    use = sd > 1e-6
    coefs = np.zeros(k)
    if use.any():
        d = sd[use]
        z = sxx[np.ix_(use, use)] / np.outer(d, d)
        beta = np.linalg.solve(n * z + lam * np.eye(int(use.sum())), n * sxy[use] / d)
        coefs[use] = beta / d
    return mu, coefs, y_mean


class _Skill:
    """Recent skill of competing methods: exponentially weighted second moments of their errors
    (squares and cross products), and the combination that minimises the expected squared error
    of the blend (Bates & Granger 1969: w ~ S^-1 1, weights summing to one; here kept in [0, 1]
    and the error covariance shrunk halfway to its diagonal, so that two methods that err
    together do not get opposite weights)."""

    __slots__ = ("methods", "m2", "scored")

    def __init__(self, methods: tuple[str, ...]):
        self.methods = methods
        self.m2 = np.eye(len(methods)) * PRIOR_BAND_C**2
        self.scored = dict.fromkeys(methods, 0)

    @property
    def mse(self) -> dict[str, float]:
        return {m: float(self.m2[i, i]) for i, m in enumerate(self.methods)}

    def add(self, errors: dict[str, float]) -> None:
        a = 1.0 - 0.5 ** (1.0 / SKILL_HALF_LIFE)
        idx = [i for i, m in enumerate(self.methods) if errors.get(m) is not None and math.isfinite(errors[m])]
        if not idx:
            return
        e = np.array([errors[self.methods[i]] for i in idx])
        sub = np.ix_(idx, idx)
        self.m2[sub] = (1 - a) * self.m2[sub] + a * np.outer(e, e)
        for i in idx:
            self.scored[self.methods[i]] += 1

    def weights(self, available: tuple[str, ...]) -> dict[str, float] | None:
        """Blend weights among the available methods; None until each has been scored."""
        if any(self.scored[m] < SKILL_MIN_SCORED for m in available):
            return None
        idx = [self.methods.index(m) for m in available]
        s = self.m2[np.ix_(idx, idx)]
        s = (1 - SKILL_SHRINK) * s + SKILL_SHRINK * np.diag(np.diag(s)) + SKILL_FLOOR_C2 * np.eye(len(idx))
        try:
            w = np.linalg.solve(s, np.ones(len(idx)))
        except np.linalg.LinAlgError:
            w = 1.0 / np.diag(s)
        w = np.clip(w / w.sum(), 0.0, None) if w.sum() > 0 else 1.0 / np.diag(s)
        w = w / w.sum()
        return {m: float(x) for m, x in zip(available, w, strict=True)}


def _band_from(residuals, spread_c: float) -> tuple[float, float, int]:
    """(low, high) offsets of the 80 % band from residuals (observed - predicted); a normal band of
    `spread_c` until enough are known, blended in as they come."""
    r = np.asarray(residuals, dtype=float)
    n = len(r)
    normal = (-BAND_Z * spread_c, BAND_Z * spread_c)
    if n < BAND_MIN_RESIDUALS:
        if n < 3:
            return normal[0], normal[1], n
        sd = float(np.sqrt((np.sum(r**2) + 3 * spread_c**2) / (n + 3)))
        return -BAND_Z * sd + float(np.mean(r)) * n / (n + 3), BAND_Z * sd + float(np.mean(r)) * n / (n + 3), n
    if not BAND_FROM_QUANTILES:
        m, sd = float(np.mean(r)), float(np.std(r))
        return m - BAND_Z * sd, m + BAND_Z * sd, n
    lo, hi = np.quantile(r, BAND_QUANTILES)
    return float(lo), float(hi), n


@dataclass(frozen=True)
class Calibration:
    """A snapshot of the site's calibration for one block (see the module docstring).

    Dusk forecast: Reuter's square-root law Tn = T0 + K sqrt(h) (h: hours from t0 to sunrise),
    with the cooling coefficient K regressed on what is known at t0, K = k0 + a T0 + b Td0 +
    d cloud0 + e wind0 + f (wind0 - wind 3 h earlier) (Dalla Nora et al. 2005's use of Reuter's
    model; the inputs are FAO-FP ch. 5's, after Allen 1957, plus cloud and wind), ridge-shrunk
    toward the site's mean cooling coefficient (the "T0 minus the usual fall" rule), harder while
    few nights are known. The regression weighs each past night by how close its dew point at t0
    was to tonight's (Gaussian, `SIMILAR_WIDTH_C`): the dew point marks the air mass (dry air lets
    more longwave out), so the few dry cold nights of a humid site are not forecast with the
    warm humid nights' cooling. The physics prior carries the first nights, corrected by its mean error
    on the nights seen so far. Once both have been scored on a few nights they are blended by
    their recent skill (weights ~ 1 / mean squared error).

    Nowcast: the fall still to come from the latest reading, from three methods blended by their
    recent skill at the same hours left to sunrise: a ridge regression on `NOWCAST_FEATURES`
    learned per hour left, tonight's square-root curve re-fitted since t0 (Reuter), and the dusk
    curve.

    Band: the 10 % and 90 % points of the recent walk-forward errors of the same forecast (at
    dusk, or at the same hours left), a normal band from the prior's spread until enough are known.
    """

    n_nights: int = 0
    n_protected: int = 0
    nights: tuple[dt.date, ...] = ()
    calibration_nights: int = 10
    means: tuple[float, ...] = (0.0,) * len(FEATURES)
    k_mean: float = 0.0
    k_coefs: tuple[float, ...] = (0.0,) * len(FEATURES)
    mean_sqrt_h: float = 3.0
    drop_model: tuple | None = None  # (means, slopes, mean fall) of the regression on Tn - T0
    prior_offset_c: float = 0.0
    dusk_weights: tuple = ()  # ((regime, ((method, weight), ...)), ...)
    dusk_band: tuple[float, float, int] | None = None  # (low, high, n); None: the prior's normal band
    nc_models: tuple = ()  # per hour-left bin: (means, coefs, mean drop) or None
    nc_samples: tuple[int, ...] = (0,) * NOWCAST_BINS
    nc_weights: tuple = (None,) * NOWCAST_BINS  # per bin: ((method, weight), ...) or None
    nc_bands: tuple = ()  # per bin: (low, high, n)
    mean_min_c: float = 0.0
    dusk_strata: tuple = ()  # (the stratum's value of the similarity input, moment matrix) when nights are weighted
    # the inversion at the minimum of the recent clear calm nights learned (no protection running):
    # their median and how many (`frostwatch.forecast.inversion`, the site-history projection)
    inversion_at_min_c: float | None = None
    inversion_nights: int = 0
    calibration_lambda: float = RIDGE_LAMBDA
    extra: dict = field(default_factory=dict, compare=False)

    # ---- dusk --------------------------------------------------------------------------------

    @property
    def weight(self) -> float:
        """Share of the site regression in the dusk forecast (0 while the prior speaks alone)."""
        return 1.0 if self.n_nights >= MIN_REGRESSION_NIGHTS else 0.0

    @property
    def learning(self) -> bool:
        return self.n_nights < self.calibration_nights

    @property
    def coefs(self) -> tuple[float, ...]:
        """d Tn / d input at the fitted nights' mean night length (for display and sign checks)."""
        c = [k * self.mean_sqrt_h for k in self.k_coefs]
        c[0] += 1.0
        return tuple(c)

    def _k_model(self, similar_c: float) -> tuple:
        if not self.dusk_strata or SIMILAR_WIDTH_C is None:
            return self.means, self.k_coefs, self.k_mean
        key = round(similar_c * 2) / 2
        hit = self.extra.get(key)
        if hit is None:
            m = sum((math.exp(-0.5 * ((c - key) / SIMILAR_WIDTH_C) ** 2) + 1e-3) * mm for c, mm in self.dusk_strata)
            fit = _ridge_solve(m, self.calibration_lambda)
            hit = (self.means, self.k_coefs, self.k_mean) if fit is None else (tuple(fit[0]), tuple(fit[1]), fit[2])
            self.extra[key] = hit
        return hit

    def regression_c(self, x: tuple[float, ...], hours: float | None = None) -> float:
        """Tn = T0 + K(x) sqrt(h); `hours` defaults to the fitted nights' mean night length."""
        sq = self.mean_sqrt_h if hours is None else math.sqrt(max(0.0, hours))
        means, k_coefs, k_mean = self._k_model(x[SIMILAR_BY])
        k = k_mean + sum(c * (xi - m) for c, xi, m in zip(k_coefs, x, means, strict=True))
        return x[0] + k * sq

    def dusk_components(
        self, prior_c: float, x: tuple[float, ...], hours: float | None = None, evening_c: float | None = None
    ) -> dict[str, float]:
        out = {"prior": prior_c + self.prior_offset_c}
        if evening_c is not None and math.isfinite(evening_c) and USE_EVENING:
            out["evening_curve"] = evening_c
        if self.n_nights >= MIN_REGRESSION_NIGHTS:
            out["regression"] = self.regression_c(x, hours)
            if self.drop_model is not None:
                mu, coefs, mean = self.drop_model
                out["drop_regression"] = x[0] + mean + float(np.dot(coefs, np.asarray(x) - mu))
        return out

    def predict_c(
        self, prior_c: float, x: tuple[float, ...], hours: float | None = None, evening_c: float | None = None
    ) -> float:
        """The dusk forecast of the minimum (before capping at T0)."""
        comps = self.dusk_components(prior_c, x, hours, evening_c)
        if "regression" not in comps:
            if "evening_curve" in comps:
                return COLD_EVENING_WEIGHT * comps["evening_curve"] + (1 - COLD_EVENING_WEIGHT) * comps["prior"]
            return comps["prior"]
        if FORCE_DUSK_METHOD in comps:
            return comps[FORCE_DUSK_METHOD]
        w = dict(dict(self.dusk_weights).get(dusk_regime(x), ()))
        if w and "evening_curve" not in comps:
            w.pop("evening_curve", None)
        used = {k: v for k, v in comps.items() if k in w}
        if not used or sum(w[k] for k in used) <= 0:
            if LEARNING_MEAN and self.learning:
                return float(np.mean([v for k, v in comps.items() if k != "drop_regression"]))
            return comps["regression"]
        return sum(w[k] * v for k, v in used.items()) / sum(w[k] for k in used)

    def dusk_band_c(self, hours: float) -> tuple[float, float]:
        """(low, high) offsets of the dusk forecast's 80 % band for a night of `hours` to sunrise."""
        if self.dusk_band is None:
            spread = PRIOR_BAND_C * (math.sqrt(max(0.25, hours)) / 3.0 if BAND_PER_SQRT_HOUR else 1.0)
            return -BAND_Z * spread, BAND_Z * spread
        lo, hi, n = self.dusk_band
        if BAND_PER_SQRT_HOUR:
            sq = math.sqrt(max(0.25, hours))
            return lo * sq, hi * sq
        return lo, hi

    @property
    def residual_std_c(self) -> float:
        """The dusk band's spread for a night of typical length (9 h), as a standard deviation."""
        lo, hi = self.dusk_band_c(9.0)
        return (hi - lo) / (2 * BAND_Z)

    # ---- nowcast -----------------------------------------------------------------------------

    @property
    def nowcast_ready(self) -> bool:
        return any(n >= NOWCAST_MIN_SAMPLES for n in self.nc_samples)

    def learned_drop_c(self, f: tuple[float, ...], hours_left: float) -> float | None:
        b = nowcast_bin(hours_left)
        model = self.nc_models[b] if self.nc_models else None
        if model is None or self.nc_samples[b] < NOWCAST_MIN_SAMPLES:
            return None
        mu, coefs, mean = model
        return min(0.0, mean + float(np.dot(coefs, np.asarray(f) - mu)))

    def nowcast_drop_c(
        self, f: tuple[float, ...], hours_left: float, dusk_curve_drop_c: float, elapsed_since_t0_h: float
    ) -> tuple[float, str]:
        """The blended fall still to come (<= 0) and which methods spoke."""
        comps = {"refit": min(0.0, f[0]), "dusk_curve": min(0.0, dusk_curve_drop_c)}
        learned = self.learned_drop_c(f, hours_left)
        if learned is not None:
            comps["learned"] = learned
        w = self.nc_weights[nowcast_bin(hours_left)] if self.nc_weights and NOWCAST_BLEND else None
        w = dict(w) if w else None
        if w and all(k in w for k in comps):
            total = sum(w[k] for k in comps)
            drop = sum(w[k] * v for k, v in comps.items()) / total
            return min(0.0, drop), "skill-weighted: " + ", ".join(f"{k} {w[k] / total:.0%}" for k in comps)
        if learned is not None:
            return learned, "learned"
        w_obs = elapsed_since_t0_h / (elapsed_since_t0_h + NOWCAST_HALF_WEIGHT_H)
        return min(0.0, w_obs * comps["refit"] + (1 - w_obs) * comps["dusk_curve"]), "refit"

    def nowcast_band(self, hours_left: float) -> tuple[float, float, int]:
        if self.nc_bands:
            return self.nc_bands[nowcast_bin(hours_left)]
        s = PRIOR_BAND_C * math.sqrt(min(1.0, max(hours_left, 0.5) / 6.0))
        return -BAND_Z * s, BAND_Z * s, 0


class Learner:
    """Sufficient statistics of one block's calibration, updated one finished night at a time."""

    def __init__(self, calibration_nights: int = 10):
        self.calibration_nights = calibration_nights
        k = len(FEATURES)
        self.dusk_m = np.zeros((k + 2, k + 2))
        self.drop_m = np.zeros((k + 2, k + 2))
        self.dusk_strata: dict[int, np.ndarray] = {}
        self.sum_sqrt_h = 0.0
        self.sum_min_c = 0.0
        self.prior_err_sum = 0.0
        self.n = 0
        self.n_protected = 0
        self.nights: list[dt.date] = []
        self.dusk_skill: dict[str, _Skill] = {}
        self.dusk_residuals: deque = deque(maxlen=BAND_MEMORY)
        f = len(NOWCAST_FEATURES)
        self.nc_m = np.zeros((NOWCAST_BINS, f + 2, f + 2))
        self.nc_skill = [_Skill(NOWCAST_METHODS) for _ in range(NOWCAST_BINS)]
        self.nc_residuals = [deque(maxlen=BAND_MEMORY) for _ in range(NOWCAST_BINS)]
        self.inversions: deque = deque(maxlen=INVERSION_MEMORY)
        self._cal: Calibration | None = None

    def learn(self, rec: NightRecord) -> bool:
        """Score the current calibration on `rec`, then add it. False (nothing learned) for a
        protected night."""
        if rec.protected:
            self.n_protected += 1
            self._cal = None
            return False
        cal = self.calibration()
        x = rec.features
        h = max(0.25, rec.hours_to_sunrise)
        # dusk: each method's error and the blended forecast's residual (as project_block caps it)
        comps = cal.dusk_components(rec.prior_c, x, h, rec.evening_curve_c)
        if math.isfinite(rec.prior_c):
            self.dusk_skill.setdefault(dusk_regime(x), _Skill(DUSK_METHODS)).add(
                {k: v - rec.observed_min_c for k, v in comps.items()})
            pred = min(cal.predict_c(rec.prior_c, x, h, rec.evening_curve_c), rec.t0_temp_c)
            self.dusk_residuals.append((rec.observed_min_c - pred) / (math.sqrt(h) if BAND_PER_SQRT_HOUR else 1.0))
            self.prior_err_sum += rec.observed_min_c - rec.prior_c
        b_dusk = (min(cal.predict_c(rec.prior_c, x, h, rec.evening_curve_c), rec.t0_temp_c) - rec.t0_temp_c) / math.sqrt(h)
        if not math.isfinite(b_dusk):
            b_dusk = 0.0
        # nowcast samples: methods' errors and the blend's residual per hours-left bin
        for f, drop in rec.nowcast_samples:
            hl = f[1] ** 2
            el = max(0.0, h - hl)
            dusk_drop = b_dusk * (math.sqrt(h) - math.sqrt(el))
            b = nowcast_bin(hl)
            errs = {"refit": min(0.0, f[0]) - drop, "dusk_curve": min(0.0, dusk_drop) - drop}
            learned = cal.learned_drop_c(f, hl)
            if learned is not None:
                errs["learned"] = learned - drop
            self.nc_skill[b].add(errs)
            pred, _ = cal.nowcast_drop_c(f, hl, dusk_drop, el)
            self.nc_residuals[b].append(drop - pred)
            z = np.concatenate([[1.0], f, [drop]])
            self.nc_m[b] += np.outer(z, z)
        # the dusk regression's row: K = (Tn - T0) / sqrt(h)
        k = (rec.observed_min_c - rec.t0_temp_c) / math.sqrt(h)
        z = np.concatenate([[1.0], x, [k]])
        zz = np.outer(z, z)
        self.dusk_m += zz
        stratum = round(x[SIMILAR_BY] / T0_STRATUM_C)
        self.dusk_strata[stratum] = self.dusk_strata.get(stratum, 0.0) + zz
        zd = np.concatenate([[1.0], x, [rec.observed_min_c - rec.t0_temp_c]])
        self.drop_m += np.outer(zd, zd)
        self.sum_sqrt_h += math.sqrt(h)
        self.sum_min_c += rec.observed_min_c
        self.n += 1
        self.nights.append(rec.night)
        if rec.radiation_night and rec.inversion_at_min_c is not None and math.isfinite(rec.inversion_at_min_c):
            self.inversions.append(rec.inversion_at_min_c)
        self._cal = None
        return True

    def calibration(self) -> Calibration:
        if self._cal is None:
            self._cal = self._snapshot()
        return self._cal

    def _snapshot(self) -> Calibration:
        n = self.n
        out: dict = {"n_nights": n, "n_protected": self.n_protected, "nights": tuple(self.nights),
                     "calibration_nights": self.calibration_nights}
        if self.inversions:
            out.update(inversion_at_min_c=float(np.median(self.inversions)), inversion_nights=len(self.inversions))
        if n:
            out["mean_sqrt_h"] = self.sum_sqrt_h / n
            out["mean_min_c"] = self.sum_min_c / n
            out["prior_offset_c"] = self.prior_err_sum / (n + PRIOR_OFFSET_SHRINK_NIGHTS)
            lam = RIDGE_LAMBDA * max(1.0, self.calibration_nights / n)
            out["calibration_lambda"] = lam
            if SIMILAR_WIDTH_C is not None:
                out["dusk_strata"] = tuple((b * T0_STRATUM_C, m.copy()) for b, m in sorted(self.dusk_strata.items()))
            fit = _ridge_solve(self.dusk_m, lam)
            if fit is not None:
                mu, coefs, k_mean = fit
                out.update(means=tuple(float(m) for m in mu), k_coefs=tuple(float(c) for c in coefs), k_mean=k_mean)
            elif n == 1:
                out["k_mean"] = float(self.dusk_m[0, -1])
            fit = _ridge_solve(self.drop_m, lam)
            if fit is not None:
                out["drop_model"] = (fit[0], fit[1], fit[2])
        weights = []
        if n >= MIN_REGRESSION_NIGHTS:
            for regime, skill in sorted(self.dusk_skill.items()):
                avail = tuple(m for m in DUSK_METHODS if skill.scored[m] > 0
                              and not (m == "prior" and regime == "other" and PRIOR_CLEAR_CALM_ONLY))
                w = skill.weights(avail)
                if w:
                    weights.append((regime, tuple(w.items())))
        out["dusk_weights"] = tuple(weights)
        spread = PRIOR_BAND_C / 3.0 if BAND_PER_SQRT_HOUR else PRIOR_BAND_C  # sqrt of a typical 9 h night
        out["dusk_band"] = _band_from(self.dusk_residuals, spread)
        models, counts, weights, bands = [], [], [], []
        for b in range(NOWCAST_BINS):
            m = self.nc_m[b]
            counts.append(int(m[0, 0]))
            fit = _ridge_solve(m, NOWCAST_RIDGE_LAMBDA) if m[0, 0] >= NOWCAST_MIN_SAMPLES else None
            models.append(fit)
            avail = NOWCAST_METHODS if fit is not None else ("refit", "dusk_curve")
            w = self.nc_skill[b].weights(avail)
            weights.append(tuple(w.items()) if w else None)
            hl = (b + 0.5) * NOWCAST_BIN_H
            bands.append(_band_from(self.nc_residuals[b], PRIOR_BAND_C * math.sqrt(min(1.0, hl / 6.0))))
        out.update(nc_models=tuple(models), nc_samples=tuple(counts), nc_weights=tuple(weights), nc_bands=tuple(bands))
        return Calibration(**out)


_FIT_CACHE: dict[tuple[int, int], tuple[list, Learner, int]] = {}


def fit_calibration(records: list[NightRecord], min_nights: int = 10) -> Calibration:
    """The calibration learned from `records` in order (all earlier nights). Kept incrementally per
    list: a history that only grows is learned one new night at a time."""
    key = (id(records), min_nights)
    hit = _FIT_CACHE.get(key)
    if hit is None or hit[0] is not records or hit[2] > len(records):
        if len(_FIT_CACHE) > 256:
            _FIT_CACHE.clear()
        hit = (records, Learner(min_nights), 0)
    lst, learner, done = hit
    for rec in records[done:]:
        learner.learn(rec)
    _FIT_CACHE[key] = (lst, learner, len(records))
    return learner.calibration()
