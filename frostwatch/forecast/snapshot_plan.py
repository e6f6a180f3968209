"""A learner's snapshots' ridge fits worked out ahead for a known run of nights (pure).

`Learner.plan` hands a backtest's whole run of night records to `SnapshotPlan.of`, which sums the
moment matrices as `Learner.learn` sums them and solves them all as one LAPACK stack
(`ridge.ridge_solve_many`); each snapshot then takes its fit from the plan instead of solving it
(tests/test_backtest_fast_path.py pins the two to the last bit). If `Learner.learn` changes how it
sums, the penalty or the dew-point weighting, this module must change the same way.
"""

from __future__ import annotations

import math

import numpy as np

from frostwatch.forecast.dusk_regression import k_model_key, reduced_index, reduced_model, strata_mix
from frostwatch.forecast.features import nowcast_bin
from frostwatch.forecast.past_night import NightRecord
from frostwatch.forecast.ridge import ridge_solve_many
from frostwatch.forecast.settings import (
    NOWCAST_BINS,
    NOWCAST_MIN_SAMPLES,
    NOWCAST_RIDGE_LAMBDA,
    REDUCED_INPUTS,
    RIDGE_LAMBDA,
    SIMILAR_BY,
    SIMILAR_WIDTH_C,
    T0_STRATUM_C,
)


class SnapshotPlan:
    """The ridge fits of a learner's snapshots worked out ahead for a known run of records
    (`Learner.plan`): the dusk and drop regressions after each number of nights learned, and each
    hours-left bin's learned nowcast after each sample count a night leaves it with. The moment
    matrices are summed as `Learner.learn` sums them (from zero, one record or sample at a time,
    in order) and solved by `ridge_solve_many`, so each fit is the one the snapshot would solve."""

    __slots__ = ("records", "next", "dusk", "nc", "k_fits")

    def __init__(self, records: list[NightRecord], dusk: dict, nc: list[dict], k_fits: dict):
        self.records, self.next, self.dusk, self.nc, self.k_fits = records, 0, dusk, nc, k_fits

    def follows(self, rec: NightRecord) -> bool:
        """True (and one step on) when `rec` is the next record planned."""
        if self.next < len(self.records) and self.records[self.next] is rec:
            self.next += 1
            return True
        return False

    @classmethod
    def of(cls, records: list[NightRecord], calibration_nights: int) -> SnapshotPlan:
        kept = [r for r in records if not r.protected]
        dusk: dict[int, tuple] = {}
        nc: list[dict] = [{} for _ in range(NOWCAST_BINS)]
        k_fits: dict[int, dict] = {}
        if not kept:
            return cls(records, dusk, nc, k_fits)
        rows, drop_rows, samples, bins, ends = [], [], [], [], []
        for rec in kept:
            x = rec.features
            h = max(0.25, rec.hours_to_sunrise)
            rows.append((1.0, *x, (rec.observed_min_c - rec.t0_temp_c) / math.sqrt(h)))
            drop_rows.append((1.0, *x, rec.observed_min_c - rec.t0_temp_c))
            for f, drop in rec.nowcast_samples:
                samples.append((1.0, *f, drop))
                bins.append(nowcast_bin(f[1] ** 2))
            ends.append(len(samples))
        n_all = np.arange(1, len(kept) + 1)
        stack, outer = [], []
        for r in (rows, drop_rows):
            z = np.array(r)
            zz = np.concatenate([np.zeros((1, z.shape[1], z.shape[1])), z[:, :, None] * z[:, None, :]])
            stack.append(np.cumsum(zz, axis=0)[1:])  # after 1, 2, ... nights: 0 + zz1, + zz2, ...
            outer.append(zz[1:])
        dusk_zz = outer[0]  # each night's z z^T, as np.outer gives it
        lam = np.array([RIDGE_LAMBDA * max(1.0, calibration_nights / n) for n in n_all.tolist()])
        fits = ridge_solve_many(np.concatenate(stack), np.concatenate([lam, lam]))
        g = len(kept)
        ix = reduced_index()
        reduced = ridge_solve_many(stack[0][:, ix][:, :, ix], lam) if REDUCED_INPUTS is not None else [None] * g
        for n in n_all.tolist():
            dusk[n] = (fits[n - 1], fits[g + n - 1], reduced[n - 1])
        if samples:
            z = np.array(samples)
            zz = z[:, :, None] * z[:, None, :]
            b_of = np.array(bins)
            ends_a = np.array(ends)
            ms, keys = [], []
            for b in range(NOWCAST_BINS):
                mine = np.flatnonzero(b_of == b)
                if len(mine) < NOWCAST_MIN_SAMPLES:
                    continue
                cum = np.cumsum(np.concatenate([np.zeros((1, *zz.shape[1:])), zz[mine]]), axis=0)
                counts = np.unique(np.searchsorted(mine, ends_a, side="left"))  # the bin's count after each night
                counts = counts[counts >= NOWCAST_MIN_SAMPLES]
                ms.append(cum[counts])
                keys += [(b, c) for c in counts.tolist()]
            if keys:
                for (b, c), fit in zip(keys, ridge_solve_many(np.concatenate(ms), NOWCAST_RIDGE_LAMBDA), strict=True):
                    nc[b][c] = fit
        if SIMILAR_WIDTH_C is not None:
            # the dusk regression weighted toward each record's own dew point, on the strata as the
            # snapshot it is forecast with holds them (`Calibration._k_model`)
            strata: dict[int, np.ndarray] = {}
            ms, keys, lams = [], [], []
            n = 0
            for rec in records:
                x = rec.features
                key = k_model_key(x[SIMILAR_BY])
                if n and key not in k_fits.setdefault(n, {}):
                    k_fits[n][key] = None
                    ms.append(strata_mix(tuple((b * T0_STRATUM_C, m) for b, m in sorted(strata.items())), key))
                    keys.append((n, key))
                    lams.append(RIDGE_LAMBDA * max(1.0, calibration_nights / n))
                if rec.protected:
                    continue
                stratum = round(x[SIMILAR_BY] / T0_STRATUM_C)
                strata[stratum] = strata.get(stratum, 0.0) + dusk_zz[n]
                n += 1
            if keys:
                ms_a, lams_a = np.array(ms), np.array(lams)
                for (n, key), fit in zip(keys, ridge_solve_many(ms_a, lams_a), strict=True):
                    k_fits[n][key] = fit
                if REDUCED_INPUTS is not None:  # the reduced regression of the same nights and weights
                    for (n, key), fit in zip(keys, ridge_solve_many(ms_a[:, ix][:, :, ix], lams_a), strict=True):
                        k_fits[n][("reduced", key)] = reduced_model(fit)
        return cls(records, dusk, nc, k_fits)
