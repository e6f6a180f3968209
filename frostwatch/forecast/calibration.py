"""The site's calibration as `projection.project_block` reads it: an immutable `Calibration`
snapshot (the dusk regression, the learned nowcast, each method's recent skill weights and the
80 % band) that only takes dot products and table lookups. The snapshot is made by
`forecast.learner.Learner`, which learns night by night from sufficient statistics (no refit over
the history).

Nights with protection running (sprinklers or wind machines) are left out: their minimum is the
protection's doing, not the night's (issue 14). They are counted and said.

Its neighbours, once in this module and still importable from it: the settings and switches
(`forecast.settings`), the inputs, kinds of dusk and nowcast bins (`forecast.features`), the
dusk regression's dew-point weighting and reduced regression (`forecast.dusk_regression`) and
what a past night did (`forecast.past_night`). A benchmark trying a variant sets a setting in
every module of `settings.READERS`, this one among them.
"""

from __future__ import annotations

import datetime as dt
import math
from dataclasses import dataclass, field

import numpy as np

from frostwatch.forecast.dusk_regression import k_model_key, reduced_index, reduced_model, strata_mix
from frostwatch.forecast.features import dusk_regime, feature_vector, nowcast_bin
from frostwatch.forecast.past_night import NightRecord
from frostwatch.forecast.ridge import ridge_solve
from frostwatch.forecast.settings import (
    APPROACH_METHODS,
    APPROACH_WHEN_COOLING,
    BAND_FROM_QUANTILES,
    BAND_MEMORY,
    BAND_MIN_RESIDUALS,
    BAND_PER_SQRT_HOUR,
    BAND_QUANTILES,
    BAND_Z,
    COLD_EVENING_WEIGHT,
    DUSK_CALM_WIND_M_S,
    DUSK_CLEAR_CLOUD_FRAC,
    DUSK_METHODS,
    EVENING_CLEAR_CALM_ONLY,
    FEATURES,
    FORCE_DUSK_METHOD,
    INVERSION_MEMORY,
    LEAD_BAND_RAW,
    LEAD_COLD_NIGHTS,
    LEAD_HALF_LIFE,
    LEAD_HOURS,
    LEAD_MODE,
    LEAD_SHRINK,
    LEARNING_MEAN,
    MIN_REGRESSION_NIGHTS,
    NAIVE_WHEN_COOLING,
    NOWCAST_APPROACH_BLEND,
    NOWCAST_BIN_H,
    NOWCAST_BINS,
    NOWCAST_BLEND,
    NOWCAST_FEATURES,
    NOWCAST_HALF_WEIGHT_H,
    NOWCAST_LEAD_CORRECTION,
    NOWCAST_METHODS,
    NOWCAST_MIN_SAMPLES,
    NOWCAST_RIDGE_LAMBDA,
    PRIOR_BAND_C,
    PRIOR_CLEAR_CALM_ONLY,
    PRIOR_OFFSET_SHRINK_NIGHTS,
    PROTECTION_QUANTITIES,
    REDUCED_INPUTS,
    REDUCED_MIN_NIGHTS,
    REDUCED_SWITCH_Z,
    RIDGE_LAMBDA,
    SIMILAR_BY,
    SIMILAR_WIDTH_C,
    SKILL_BY_REGIME,
    SKILL_FLOOR_C2,
    SKILL_HALF_LIFE,
    SKILL_MIN_SCORED,
    SKILL_SHRINK,
    T0_STRATUM_C,
    USE_EVENING,
    USE_NAIVE,
    USE_PRESSURE_TREND,
)

# every name this module held before it was split keeps its import path (`from
# frostwatch.forecast.calibration import X`)
__all__ = [
    "APPROACH_METHODS", "APPROACH_WHEN_COOLING", "BAND_FROM_QUANTILES", "BAND_MEMORY", "BAND_MIN_RESIDUALS",
    "BAND_PER_SQRT_HOUR", "BAND_QUANTILES", "BAND_Z", "COLD_EVENING_WEIGHT", "DUSK_CALM_WIND_M_S",
    "DUSK_CLEAR_CLOUD_FRAC", "DUSK_METHODS", "EVENING_CLEAR_CALM_ONLY", "FEATURES", "FORCE_DUSK_METHOD",
    "INVERSION_MEMORY", "LEAD_BAND_RAW", "LEAD_COLD_NIGHTS", "LEAD_HALF_LIFE", "LEAD_HOURS", "LEAD_MODE",
    "LEAD_SHRINK", "LEARNING_MEAN", "MIN_REGRESSION_NIGHTS", "NAIVE_WHEN_COOLING", "NOWCAST_APPROACH_BLEND",
    "NOWCAST_BINS", "NOWCAST_BIN_H", "NOWCAST_BLEND", "NOWCAST_FEATURES", "NOWCAST_HALF_WEIGHT_H",
    "NOWCAST_LEAD_CORRECTION", "NOWCAST_METHODS", "NOWCAST_MIN_SAMPLES", "NOWCAST_RIDGE_LAMBDA",
    "PRIOR_BAND_C", "PRIOR_CLEAR_CALM_ONLY", "PRIOR_OFFSET_SHRINK_NIGHTS", "PROTECTION_QUANTITIES",
    "REDUCED_INPUTS", "REDUCED_MIN_NIGHTS", "REDUCED_SWITCH_Z", "RIDGE_LAMBDA", "SIMILAR_BY",
    "SIMILAR_WIDTH_C", "SKILL_BY_REGIME", "SKILL_FLOOR_C2", "SKILL_HALF_LIFE", "SKILL_MIN_SCORED",
    "SKILL_SHRINK", "T0_STRATUM_C", "USE_EVENING", "USE_NAIVE", "USE_PRESSURE_TREND", "Calibration",
    "NightRecord", "dusk_regime", "feature_vector", "k_model_key", "nowcast_bin", "reduced_index",
    "reduced_model", "strata_mix",
]


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
    warm humid nights' cooling. Beside it, the same regression on T0 and Td0 alone
    (`REDUCED_INPUTS`, from the same moment matrices) is scored walk-forward on every night
    learned; it speaks in place of the full one once its absolute error is lower by more than one
    standard error (`use_reduced`): at a site whose cloud, wind and trends at dusk carry no
    cooling, their slopes only add noise to the fit (Sand Point's typical year: 0.841 -> 0.823
    degC on all nights). The physics prior carries the first nights, corrected by its mean error
    on the nights seen so far. Once both have been scored on a few nights they are blended by
    their recent skill (weights ~ 1 / mean squared error).

    Nowcast: the fall still to come from the latest reading, from four methods blended by their
    recent skill at the same hours left to sunrise: a ridge regression on `NOWCAST_FEATURES`
    learned per hour left, tonight's square-root curve re-fitted since t0 (Reuter), the dusk
    curve, and the naive fall (the mean fall over the 2 h before the minimum of the nights
    learned). The blend's weights are set at every half hour of past nights, where it falls short
    of the fall that comes as a minimum approaches; the approach correction (`nc_lead`,
    `NOWCAST_LEAD_CORRECTION`) scales the blend's fall by the ratio learned, per hours-left bin, at
    the instants 2 h before past nights' minima (shrunk toward 1, `forecast.ridge.lead_fit`). On
    those nights, while the last 2 h cooled, the approach blend (`nc_approach`,
    `NOWCAST_APPROACH_BLEND`) then mixes the corrected fall with the naive fall by their skill at
    those instants alone. The band stays the blend's own, around the blend before both.

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
    nc_lead: tuple = ()  # per bin: (offset, ratio) of the approach correction, fall' = offset + ratio x fall
    nc_approach: tuple = ()  # ((method, weight), ...) of the approach blend (APPROACH_METHODS); empty: none yet
    mean_min_c: float = 0.0
    naive_fall_c: float | None = None  # the mean fall over the 2 h before the minimum of the nights learned
    dusk_strata: tuple = ()  # (the stratum's value of the similarity input, moment matrix) when nights are weighted
    # the inversion at the minimum of the recent clear calm nights learned (no protection running):
    # their median and how many (`frostwatch.forecast.inversion`, the site-history projection)
    inversion_at_min_c: float | None = None
    inversion_nights: int = 0
    calibration_lambda: float = RIDGE_LAMBDA
    # the dusk regression on REDUCED_INPUTS fitted to all nights alike (`reduced_model`; None: not
    # fitted), and whether it speaks in place of the full one (its walk-forward error lower, `Learner`)
    k_reduced: tuple | None = None
    use_reduced: bool = False
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
        """d Tn / d input at the fitted nights' mean night length (for display and sign checks), of
        the regression that speaks."""
        k_coefs = self.k_reduced[1] if self.use_reduced and self.k_reduced is not None else self.k_coefs
        c = [k * self.mean_sqrt_h for k in k_coefs]
        c[0] += 1.0
        return tuple(c)

    def _k_model(self, similar_c: float, reduced: bool = False) -> tuple:
        plain = (self.means, self.k_coefs, self.k_mean)
        if reduced:
            if self.k_reduced is None:
                return plain
            plain = self.k_reduced
        if not self.dusk_strata or SIMILAR_WIDTH_C is None:
            return plain
        key = k_model_key(similar_c)
        ekey = ("reduced", key) if reduced else key
        hit = self.extra.get(ekey)
        if hit is None:
            m = strata_mix(self.dusk_strata, key)
            if reduced:
                ix = reduced_index()
                fit = reduced_model(ridge_solve(m[np.ix_(ix, ix)], self.calibration_lambda))
                hit = plain if fit is None else fit
            else:
                fit = ridge_solve(m, self.calibration_lambda)
                hit = plain if fit is None else (tuple(fit[0]), tuple(fit[1]), fit[2])
            self.extra[ekey] = hit
        return hit

    def regression_c(self, x: tuple[float, ...], hours: float | None = None, reduced: bool | None = None) -> float:
        """Tn = T0 + K(x) sqrt(h); `hours` defaults to the fitted nights' mean night length.
        `reduced`: the regression on REDUCED_INPUTS (True) or on all inputs (False); by default
        the one that speaks (`use_reduced`)."""
        sq = self.mean_sqrt_h if hours is None else math.sqrt(max(0.0, hours))
        means, k_coefs, k_mean = self._k_model(x[SIMILAR_BY], self.use_reduced if reduced is None else reduced)
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
        self, prior_c: float, x: tuple[float, ...], hours: float | None = None, evening_c: float | None = None,
        comps: dict[str, float] | None = None,
    ) -> float:
        """The dusk forecast of the minimum (before capping at T0); `comps`, when given, is
        `dusk_components` of the same arguments (a caller that scores them too)."""
        if comps is None:
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

    def naive_drop_c(self, f: tuple[float, ...]) -> float | None:
        """The naive method's fall still to come: minus the mean fall over the 2 h before the
        minimum of the nights learned (None before any)."""
        if self.naive_fall_c is None:
            return None
        if NAIVE_WHEN_COOLING and f[2] >= 0.0:
            return 0.0
        return -self.naive_fall_c

    def nowcast_drop_c(
        self, f: tuple[float, ...], hours_left: float, dusk_curve_drop_c: float, elapsed_since_t0_h: float,
        lead: bool = True, dusk_min_c: float | None = None, approach: bool = True, blend: tuple | None = None,
    ) -> tuple[float, str]:
        """The blended fall still to come (<= 0) and which methods spoke; with `lead`, the approach
        correction (`NOWCAST_LEAD_CORRECTION`) applied, and with `approach` too, the approach blend
        (`NOWCAST_APPROACH_BLEND`). `blend`: `nowcast_fall_c` of these arguments, when the caller
        has it (`lead=False` gives it alone)."""
        drop, spoke = blend or self.nowcast_fall_c(f, hours_left, dusk_curve_drop_c, elapsed_since_t0_h)
        if lead and NOWCAST_LEAD_CORRECTION and self.nc_lead and self.cold_night(dusk_min_c):
            offset, ratio = self.nc_lead[nowcast_bin(hours_left)]
            if offset != 0.0 or ratio != 1.0:
                drop = min(0.0, offset + ratio * drop)
                spoke += (f"; x{ratio:.2f}" if offset == 0.0 else f"; {offset:+.2f} + x{ratio:.2f}") + " as on past nights' approach"
        if lead and approach and self.approaching(f, dusk_min_c):
            w = dict(self.nc_approach)
            naive = self.naive_drop_c(f)
            if naive is not None and w.get("naive", 0.0) > 0.0:
                drop = min(0.0, w["corrected"] * drop + w["naive"] * naive)
                spoke += f"; naive fall {w['naive']:.0%} as 2 h before past nights' minima"
        return drop, spoke

    def approaching(self, f: tuple[float, ...], dusk_min_c: float | None) -> bool:
        """Whether the approach blend applies: a cold night (`cold_night`) and, with
        `APPROACH_WHEN_COOLING`, an instant whose last 2 h cooled (the recent slope feature < 0)."""
        return (NOWCAST_APPROACH_BLEND and bool(self.nc_approach) and self.cold_night(dusk_min_c)
                and (not APPROACH_WHEN_COOLING or f[2] < 0.0))

    def cold_night(self, dusk_min_c: float | None) -> bool:
        """True unless `LEAD_COLD_NIGHTS` and tonight's dusk forecast is not below the mean minimum learned."""
        return not LEAD_COLD_NIGHTS or (dusk_min_c is not None and self.n_nights > 0 and dusk_min_c < self.mean_min_c)

    def nowcast_fall_c(
        self, f: tuple[float, ...], hours_left: float, dusk_curve_drop_c: float, elapsed_since_t0_h: float
    ) -> tuple[float, str]:
        """The blended fall still to come (<= 0) before the approach correction and the approach
        blend, and which methods spoke (`nowcast_drop_c` with `lead=False`)."""
        return self.nowcast_blend_c(f, hours_left, dusk_curve_drop_c, elapsed_since_t0_h,
                                    self.learned_drop_c(f, hours_left), True)

    def nowcast_blend_c(
        self, f: tuple[float, ...], hours_left: float, dusk_curve_drop_c: float, elapsed_since_t0_h: float,
        learned: float | None, say: bool = False,
    ) -> tuple[float, str]:
        """`nowcast_drop_c` with the learned method's fall given (`learned_drop_c`, worked out
        once by a caller that also scores it); which methods spoke is said only with `say`."""
        comps = {"refit": min(0.0, f[0]), "dusk_curve": min(0.0, dusk_curve_drop_c)}
        naive = self.naive_drop_c(f)
        if naive is not None and USE_NAIVE:
            comps["naive"] = naive
        if learned is not None:
            comps["learned"] = learned
        b = nowcast_bin(hours_left)
        w = self.nc_weights[b] if self.nc_weights and NOWCAST_BLEND else None
        w = dict(w) if w else None
        if w and w.keys() >= comps.keys():  # every method that spoke has a weight
            total = sum([w[k] for k in comps])  # lists, not generators: the same sums, in the same order
            drop = sum([w[k] * v for k, v in comps.items()]) / total
            return min(0.0, drop), self._blend_words(b, w, comps, total) if say else ""
        if learned is not None:
            return learned, "learned"
        w_obs = elapsed_since_t0_h / (elapsed_since_t0_h + NOWCAST_HALF_WEIGHT_H)
        return min(0.0, w_obs * comps["refit"] + (1 - w_obs) * comps["dusk_curve"]), "refit"

    def _blend_words(self, b: int, w: dict, comps: dict, total: float) -> str:
        """Which methods spoke in bin `b`'s skill-weighted blend, with their shares of `total`
        ("skill-weighted: refit 32%, dusk_curve 29%, ..."). The text depends only on the bin's
        weights and which methods spoke: kept in `extra` instead of formatted at every evaluation,
        with the very weights object it was made from (a calibration copied with other weights
        shares `extra` but not that object)."""
        key = ("blend words", b, tuple(comps))
        hit = self.extra.get(key)
        if hit is not None and hit[0] is self.nc_weights[b]:
            return hit[1]
        text = "skill-weighted: " + ", ".join(f"{k} {w[k] / total:.0%}" for k in comps)
        self.extra[key] = (self.nc_weights[b], text)
        return text

    def nowcast_band(self, hours_left: float) -> tuple[float, float, int]:
        if self.nc_bands:
            return self.nc_bands[nowcast_bin(hours_left)]
        s = PRIOR_BAND_C * math.sqrt(min(1.0, max(hours_left, 0.5) / 6.0))
        return -BAND_Z * s, BAND_Z * s, 0
