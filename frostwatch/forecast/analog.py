"""The analog ensemble for the nowcast's fall still to come (pure numpy, no I/O).

Past nights' half-hourly training points of one hours-left bin (features as known then, the fall
that came after) are the analogs; tonight's instant takes the k most similar in standardised
features and forecasts the inverse-distance weighted mean of their realised falls.

References
----------
Delle Monache, L., Eckel, F. A., Rife, D. L., Nagarajan, B. and Searight, K. (2013): Probabilistic
weather prediction with an analog ensemble. Mon. Wea. Rev. 141, 3498-3516 (eq. 1: the distance
as a weighted sum over predictors of the difference over each predictor's standard deviation;
the forecast from the k best analogs' observations).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np


@dataclass(frozen=True, eq=False)
class AnalogIndex:
    """One hours-left bin's analogs: their features divided by the scale, the scale (each
    feature's standard deviation over the analogs, 1 where it is 0) and their falls [degC]."""

    scaled: np.ndarray  # (n, features)
    scale: np.ndarray  # (features,)
    falls_c: np.ndarray  # (n,)

    def __len__(self) -> int:
        return len(self.falls_c)


def analog_index(samples) -> AnalogIndex | None:
    """The index of (features, fall) pairs; None for none."""
    if not samples:
        return None
    feats = np.array([f for f, _ in samples], dtype=float)
    falls = np.array([d for _, d in samples], dtype=float)
    scale = feats.std(axis=0)
    scale = np.where(scale > 1e-9, scale, 1.0)
    return AnalogIndex(feats / scale, scale, falls)


def analog_fall_c(index: AnalogIndex, features, k: int, weights=None) -> float:
    """The analog ensemble's fall still to come [degC, <= 0] for `features`.

    Parameters
    ----------
    index : the bin's analogs (`analog_index`)
    features : tonight's features at the instant, in the analogs' order
    k : analogs kept (all when fewer exist)
    weights : each feature's weight in the distance (Delle Monache et al. 2013, eq. 1); None: equal

    Notes
    -----
    d_j = sqrt(sum_i w_i ((x_i - a_ji) / sigma_i)^2); the k smallest d_j are kept and their falls
    averaged with weights 1 / max(d_j, 1e-3) (an exact analog does not take all the weight of
    the others beside it unless it is exact to 1e-3 standard deviations).
    """
    diff = index.scaled - np.asarray(features, dtype=float) / index.scale
    d2 = diff * diff
    d = np.sqrt(d2 @ np.asarray(weights, dtype=float) if weights is not None else d2.sum(axis=1))
    n = len(d)
    kk = min(int(k), n)
    pick = np.argpartition(d, kk - 1)[:kk] if kk < n else np.arange(n)
    w = 1.0 / np.maximum(d[pick], 1e-3)
    return min(0.0, float(np.dot(w, index.falls_c[pick]) / w.sum()))
