"""The site's calibration learned night by night from sufficient statistics (no refit over the
history): a `Learner` per block takes each finished night (`NightRecord`) once. Before adding it,
it scores the forecasts the current calibration would have made on that night (walk-forward by
construction): those errors feed the skill weights (`_Skill`) and the band (`_band_from`). Then it
adds the night's rows to the normal equations (`forecast.ridge`). `Learner.calibration()` is the
immutable `forecast.calibration.Calibration` snapshot that the projection reads.

Nights with protection running (sprinklers or wind machines) are left out: their minimum is the
protection's doing, not the night's (issue 14). They are counted and said.

The settings are `forecast.calibration`'s (benchmarks that try a variant set them in both modules).
"""

from __future__ import annotations

import datetime as dt
import math
from bisect import bisect_left, insort
from collections import deque

import numpy as np

from frostwatch.forecast.calibration import (
    BAND_FROM_QUANTILES,
    BAND_MEMORY,
    BAND_MIN_RESIDUALS,
    BAND_PER_SQRT_HOUR,
    BAND_QUANTILES,
    BAND_Z,
    DUSK_METHODS,
    FEATURES,
    INVERSION_MEMORY,
    LEAD_BAND_RAW,
    LEAD_HALF_LIFE,
    LEAD_HOURS,
    LEAD_MODE,
    LEAD_SHRINK,
    MIN_REGRESSION_NIGHTS,
    NOWCAST_BIN_H,
    NOWCAST_BINS,
    NOWCAST_FEATURES,
    NOWCAST_LEAD_CORRECTION,
    NOWCAST_METHODS,
    NOWCAST_MIN_SAMPLES,
    NOWCAST_RIDGE_LAMBDA,
    PRIOR_BAND_C,
    PRIOR_CLEAR_CALM_ONLY,
    PRIOR_OFFSET_SHRINK_NIGHTS,
    RIDGE_LAMBDA,
    SIMILAR_BY,
    SIMILAR_WIDTH_C,
    SKILL_FLOOR_C2,
    SKILL_HALF_LIFE,
    SKILL_MIN_SCORED,
    SKILL_SHRINK,
    T0_STRATUM_C,
    USE_NAIVE,
    Calibration,
    NightRecord,
    dusk_regime,
    nowcast_bin,
)
from frostwatch.forecast.ridge import lead_fit, ridge_solve_many
from frostwatch.forecast.snapshot_plan import SnapshotPlan


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
        if len(idx) == len(self.methods):  # every method scored (the usual case): no fancy indexing
            self.m2 = (1 - a) * self.m2 + a * (e[:, None] * e[None, :])  # np.outer(e, e), without its wrapper
        else:
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


class _Window:
    """The last `maxlen` residuals in arrival order (a deque) and the same values kept sorted, so
    that the band's quantiles need no sort at each snapshot."""

    __slots__ = ("recent", "sorted", "nan")

    def __init__(self, maxlen: int):
        self.recent: deque = deque(maxlen=maxlen)
        self.sorted: list[float] = []
        self.nan = 0  # NaN residuals held (they have no place in the order)

    def append(self, x: float) -> None:
        x = float(x)
        if len(self.recent) == self.recent.maxlen:
            old = self.recent[0]
            if old != old:
                self.nan -= 1
            else:
                del self.sorted[bisect_left(self.sorted, old)]
        self.recent.append(x)
        if x != x:
            self.nan += 1
        else:
            insort(self.sorted, x)

    def __len__(self) -> int:
        return len(self.recent)

    def __iter__(self):
        return iter(self.recent)


def _quantile_sorted(v: list[float], q: float) -> float:
    """np.quantile's default ('linear', Hyndman & Fan type 7) of sorted values, with numpy's own
    arithmetic (virtual index (n - 1) q, and its two-sided interpolation), so bit for bit."""
    n = len(v)
    vi = (n - 1) * q
    i = math.floor(vi)
    if vi >= n - 1:
        return v[n - 1]
    if vi < 0:
        return v[0]
    a, b, g = v[i], v[i + 1], vi - i
    diff = b - a
    return b - diff * (1 - g) if g >= 0.5 else a + diff * g


def _band_from(residuals, spread_c: float) -> tuple[float, float, int]:
    """(low, high) offsets of the 80 % band from residuals (observed - predicted); a normal band of
    `spread_c` until enough are known, blended in as they come."""
    n = len(residuals)
    normal = (-BAND_Z * spread_c, BAND_Z * spread_c)
    if n < BAND_MIN_RESIDUALS:
        if n < 3:
            return normal[0], normal[1], n
        r = np.asarray(list(residuals), dtype=float)
        sd = float(np.sqrt((np.sum(r**2) + 3 * spread_c**2) / (n + 3)))
        return -BAND_Z * sd + float(np.mean(r)) * n / (n + 3), BAND_Z * sd + float(np.mean(r)) * n / (n + 3), n
    if not BAND_FROM_QUANTILES:
        r = np.asarray(list(residuals), dtype=float)
        m, sd = float(np.mean(r)), float(np.std(r))
        return m - BAND_Z * sd, m + BAND_Z * sd, n
    if isinstance(residuals, _Window) and not residuals.nan:
        lo, hi = (_quantile_sorted(residuals.sorted, q) for q in BAND_QUANTILES)
    else:
        lo, hi = np.quantile(np.asarray(list(residuals), dtype=float), BAND_QUANTILES)
    return float(lo), float(hi), n


def _weights_many(items: list[tuple[_Skill, tuple[str, ...]]]) -> list[dict[str, float] | None]:
    """`_Skill.weights` of each (skill, available methods), the same numbers: the small solves
    of records with the same available methods go to LAPACK as one stack."""
    out: list = [None] * len(items)
    groups: dict[tuple[int, ...], list[int]] = {}
    for i, (skill, avail) in enumerate(items):
        if any(skill.scored[m] < SKILL_MIN_SCORED for m in avail):
            continue
        if not avail:
            out[i] = {}  # as `_Skill.weights` of no method
            continue
        groups.setdefault(tuple(skill.methods.index(m) for m in avail), []).append(i)
    for idx, members in groups.items():
        k = len(idx)
        s = np.stack([items[i][0].m2 for i in members])
        if idx != tuple(range(s.shape[1])):
            s = s[:, idx][:, :, idx]
        diag = np.zeros_like(s)
        r = np.arange(k)
        diag[:, r, r] = s[:, r, r]
        s = (1 - SKILL_SHRINK) * s + SKILL_SHRINK * diag + SKILL_FLOOR_C2 * np.eye(k)
        try:
            w_all = np.linalg.solve(s, np.ones((len(members), k, 1)))[:, :, 0]
        except np.linalg.LinAlgError:
            for i in members:
                out[i] = items[i][0].weights(items[i][1])
            continue
        total = w_all.sum(axis=1)  # rows of 2 to 4 numbers: summed in order, as one row alone
        positive = (total > 0)[:, None]
        w_all = np.where(positive, np.maximum(w_all / np.where(positive, total[:, None], 1.0), 0.0), 1.0 / s[:, r, r])  # np.clip(x, 0.0, None) is np.maximum(x, 0.0)
        w_all = (w_all / w_all.sum(axis=1)[:, None]).tolist()
        for j, i in enumerate(members):
            out[i] = dict(zip(items[i][1], w_all[j], strict=True))
    return out


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
        self.dusk_residuals = _Window(BAND_MEMORY)
        f = len(NOWCAST_FEATURES)
        self.nc_m = np.zeros((NOWCAST_BINS, f + 2, f + 2))
        self.nc_skill = [_Skill(NOWCAST_METHODS) for _ in range(NOWCAST_BINS)]
        self.nc_residuals = [_Window(BAND_MEMORY) for _ in range(NOWCAST_BINS)]
        self.fall_sum_c = 0.0  # the fall over the 2 h before each learned night's minimum (the naive nowcast)
        self.fall_n = 0
        # the approach correction's decayed sums per bin: weight, blend, observed fall, blend^2, blend x fall
        self.lead_sums = np.zeros((5, NOWCAST_BINS))
        self.inversions: deque = deque(maxlen=INVERSION_MEMORY)
        self._cal: Calibration | None = None
        self._bins: list = [None] * NOWCAST_BINS  # per bin (model, weights, band) as last snapshot; None: changed
        self._plan: SnapshotPlan | None = None  # the ridge fits worked out ahead (`plan`), while it is followed

    def plan(self, records: list[NightRecord]) -> None:
        """Work out at once the ridge fits of every snapshot to come while `records` are learned
        in this order, one after the other (a backtest knows all its nights before it starts):
        the same moment matrices, summed in the same order, solved as one stack. A fresh learner
        only; learning any other record drops the plan (the snapshots then solve as they go)."""
        if self.n or self.n_protected or self._plan is not None:
            return
        self._plan = SnapshotPlan.of(list(records), self.calibration_nights)

    def learn(self, rec: NightRecord) -> bool:
        """Score the current calibration on `rec`, then add it. False (nothing learned) for a
        protected night."""
        if self._plan is not None and not self._plan.follows(rec):
            self._plan = None
        if rec.protected:
            self.n_protected += 1
            self._cal = None
            return False
        cal = self.calibration()
        x = rec.features
        h = max(0.25, rec.hours_to_sunrise)
        # dusk: each method's error and the blended forecast's residual (as project_block caps it)
        comps = cal.dusk_components(rec.prior_c, x, h, rec.evening_curve_c)
        pred_dusk = min(cal.predict_c(rec.prior_c, x, h, rec.evening_curve_c), rec.t0_temp_c)
        if math.isfinite(rec.prior_c):
            self.dusk_skill.setdefault(dusk_regime(x), _Skill(DUSK_METHODS)).add(
                {k: v - rec.observed_min_c for k, v in comps.items()})
            self.dusk_residuals.append((rec.observed_min_c - pred_dusk) / (math.sqrt(h) if BAND_PER_SQRT_HOUR else 1.0))
            self.prior_err_sum += rec.observed_min_c - rec.prior_c
        b_dusk = (pred_dusk - rec.t0_temp_c) / math.sqrt(h)
        if not math.isfinite(b_dusk):
            b_dusk = 0.0
        # nowcast samples: methods' errors and the blend's residual per hours-left bin
        bins = []
        lead_hl = None if rec.min_hours_left is None else rec.min_hours_left + LEAD_HOURS
        lead = None  # (distance in hours, f, hours left, dusk drop, elapsed, fall) of the point nearest then
        for f, drop in rec.nowcast_samples:
            hl = f[1] ** 2
            el = max(0.0, h - hl)
            dusk_drop = b_dusk * (math.sqrt(h) - math.sqrt(el))
            b = nowcast_bin(hl)
            errs = {"refit": min(0.0, f[0]) - drop, "dusk_curve": min(0.0, dusk_drop) - drop}
            naive = cal.naive_drop_c(f)
            if naive is not None:
                errs["naive"] = naive - drop
            learned = cal.learned_drop_c(f, hl)
            if learned is not None:
                errs["learned"] = learned - drop
            self.nc_skill[b].add(errs)
            self._bins[b] = None
            if LEAD_BAND_RAW:  # the blend before the correction: nowcast_drop_c(lead=False)'s number
                pred, _ = cal.nowcast_blend_c(f, hl, dusk_drop, el, learned)
            else:
                pred, _ = cal.nowcast_drop_c(f, hl, dusk_drop, el, lead=True, dusk_min_c=pred_dusk)
            self.nc_residuals[b].append(drop - pred)
            bins.append(b)
            if lead_hl is not None and abs(hl - lead_hl) <= 0.26 and (lead is None or abs(hl - lead_hl) < lead[0]):
                lead = (abs(hl - lead_hl), f, hl, dusk_drop, el, drop)
        if lead is not None and NOWCAST_LEAD_CORRECTION and cal.cold_night(pred_dusk):
            _, f, hl, dusk_drop, el, drop = lead
            raw, _ = cal.nowcast_drop_c(f, hl, dusk_drop, el, lead=False)
            self.lead_sums *= 0.5 ** (1.0 / LEAD_HALF_LIFE)
            self.lead_sums[:, nowcast_bin(hl)] += (1.0, raw, drop, raw * raw, raw * drop)
        if bins:  # each sample's outer product added to its bin's moments, in order (as one by one)
            z = np.array([(1.0, *f, drop) for f, drop in rec.nowcast_samples])
            np.add.at(self.nc_m, bins, z[:, :, None] * z[:, None, :])
        # the dusk regression's row: K = (Tn - T0) / sqrt(h)
        k = (rec.observed_min_c - rec.t0_temp_c) / math.sqrt(h)
        z = np.concatenate([[1.0], x, [k]])
        zz = np.outer(z, z)
        self.dusk_m += zz
        stratum = round(x[SIMILAR_BY] / T0_STRATUM_C)
        self.dusk_strata[stratum] = self.dusk_strata.get(stratum, 0.0) + zz
        zd = np.concatenate([[1.0], x, [rec.observed_min_c - rec.t0_temp_c]])
        self.drop_m += np.outer(zd, zd)
        if rec.fall_before_min_c is not None and math.isfinite(rec.fall_before_min_c):
            self.fall_sum_c += rec.fall_before_min_c
            self.fall_n += 1
            if self.fall_n == 1:  # every bin may now blend the naive fall
                self._bins = [None] * NOWCAST_BINS
        self.sum_sqrt_h += math.sqrt(h)
        self.sum_min_c += rec.observed_min_c
        self.n += 1
        self.nights.append(rec.night)
        if rec.radiation_night and rec.inversion_at_min_c is not None and math.isfinite(rec.inversion_at_min_c):
            self.inversions.append(rec.inversion_at_min_c)
        self._cal = None
        return True

    def nowcast_methods(self, learned: bool) -> tuple[str, ...]:
        """The nowcast methods an hours-left bin blends: the learned one once its bin has a model,
        the naive fall once a past night has given one."""
        return tuple(k for k in NOWCAST_METHODS if (k != "learned" or learned) and (k != "naive" or (self.fall_n and USE_NAIVE)))

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
                # each stratum's matrix is replaced, never changed in place, when a night joins it
                out["dusk_strata"] = tuple((b * T0_STRATUM_C, m) for b, m in sorted(self.dusk_strata.items()))
                fits = self._plan.k_fits.get(n) if self._plan is not None else None
                if fits:  # the weighted regressions the next nights ask for, worked out ahead
                    out["extra"] = {key: (tuple(f[0]), tuple(f[1]), f[2]) for key, f in fits.items() if f is not None}
            planned = self._plan.dusk.get(n) if self._plan is not None else None
            fit, drop_fit = planned or ridge_solve_many(np.stack([self.dusk_m, self.drop_m]), lam)
            if fit is not None:
                mu, coefs, k_mean = fit
                out.update(means=tuple(float(m) for m in mu), k_coefs=tuple(float(c) for c in coefs), k_mean=k_mean)
            elif n == 1:
                out["k_mean"] = float(self.dusk_m[0, -1])
            fit = drop_fit
            if fit is not None:
                out["drop_model"] = (fit[0], fit[1], fit[2])
        if self.fall_n:
            out["naive_fall_c"] = self.fall_sum_c / self.fall_n
        regimes = sorted(self.dusk_skill.items()) if n >= MIN_REGRESSION_NIGHTS else []
        dusk_items = [(skill, tuple(m for m in DUSK_METHODS if skill.scored[m] > 0 and not (
            m == "prior" and regime == "other" and PRIOR_CLEAR_CALM_ONLY))) for regime, skill in regimes]
        # the dusk weights and the changed bins' nowcast weights in one call (one stack per shape)
        found = self._refresh_bins([b for b in range(NOWCAST_BINS) if self._bins[b] is None], dusk_items)
        weights = [(regime, tuple(w.items())) for (regime, _), w in zip(regimes, found, strict=True) if w]
        out["dusk_weights"] = tuple(weights)
        spread = PRIOR_BAND_C / 3.0 if BAND_PER_SQRT_HOUR else PRIOR_BAND_C  # sqrt of a typical 9 h night
        out["dusk_band"] = _band_from(self.dusk_residuals, spread)
        counts = [int(self.nc_m[b][0, 0]) for b in range(NOWCAST_BINS)]
        models, weights, bands = (list(x) for x in zip(*self._bins, strict=True))
        out.update(nc_models=tuple(models), nc_samples=tuple(counts), nc_weights=tuple(weights), nc_bands=tuple(bands))
        if NOWCAST_LEAD_CORRECTION and self.lead_sums[0].any():
            out["nc_lead"] = lead_fit(self.lead_sums, LEAD_MODE, LEAD_SHRINK)
        return Calibration(**out)

    def _refresh_bins(self, changed: list[int], other_items: list | None = None) -> list:
        """The learned nowcast, skill weights and band of the hours-left bins a night changed
        (the others are as at the last snapshot), their ridge solves and weights as one stack each.
        Returns `_weights_many` of `other_items`, worked out in the same call."""
        other_items = other_items or []
        if not changed:
            return _weights_many(other_items) if other_items else []
        ready = [b for b in changed if self.nc_m[b][0, 0] >= NOWCAST_MIN_SAMPLES]
        models = dict.fromkeys(changed)
        if ready and self._plan is not None:  # fits worked out ahead, by the bin's sample count
            for b in ready:
                models[b] = self._plan.nc[b].get(int(self.nc_m[b][0, 0]))
            ready = [b for b in ready if models[b] is None]
        if ready:
            models.update(zip(ready, ridge_solve_many(self.nc_m[ready], NOWCAST_RIDGE_LAMBDA), strict=True))
        found = _weights_many(other_items + [(self.nc_skill[b], self.nowcast_methods(models[b] is not None))
                                             for b in changed])
        for b, w in zip(changed, found[len(other_items):], strict=True):
            band = _band_from(self.nc_residuals[b], PRIOR_BAND_C * math.sqrt(min(1.0, (b + 0.5) * NOWCAST_BIN_H / 6.0)))
            self._bins[b] = (models[b], tuple(w.items()) if w else None, band)
        return found[:len(other_items)]


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
