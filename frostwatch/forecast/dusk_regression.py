"""The dusk regression's parts that sit outside the `Calibration` snapshot: the cooling coefficient K
weighted toward nights similar in one input at t0 (the dew point as shipped, `SIMILAR_BY`; per
half degree of it, from the strata's moment matrices, Gaussian of width `SIMILAR_WIDTH_C`), and
the reduced regression on T0 and Td0 alone (`REDUCED_INPUTS`) from the same moment matrices. Used by `Calibration`, the
`Learner` and its `SnapshotPlan`. Pure; no I/O.
"""

from __future__ import annotations

import math

from frostwatch.forecast.settings import FEATURES, REDUCED_INPUTS, SIMILAR_WIDTH_C


def k_model_key(similar_c: float) -> float:
    """The dusk regression's weighting is worked out per half degree of the similarity input."""
    return round(similar_c * 2) / 2


def strata_mix(strata: tuple, key: float):
    """The moment matrix of the dusk regression weighted toward nights similar to `key`
    (Gaussian, `SIMILAR_WIDTH_C`) from the strata's matrices ((value, matrix), ...)."""
    return sum((math.exp(-0.5 * ((c - key) / SIMILAR_WIDTH_C) ** 2) + 1e-3) * mm for c, mm in strata)


def reduced_index() -> list[int]:
    """Rows and columns of the dusk regression's moment matrix (z = [1, FEATURES..., K]) that the
    reduced regression (`REDUCED_INPUTS`) keeps."""
    return [0, *(1 + j for j in REDUCED_INPUTS or ()), len(FEATURES) + 1]


def reduced_model(fit: tuple | None) -> tuple | None:
    """`ridge_solve` of the reduced moment matrix as the full regression's (means, slopes, mean K),
    one of each per input of FEATURES: the inputs left out get mean 0 and slope 0 (so the forecast
    is the same sum over every input)."""
    if fit is None:
        return None
    means, coefs = [0.0] * len(FEATURES), [0.0] * len(FEATURES)
    for j, m, c in zip(REDUCED_INPUTS or (), fit[0].tolist(), fit[1].tolist(), strict=True):
        means[j], coefs[j] = m, c
    return tuple(means), tuple(coefs), fit[2]
