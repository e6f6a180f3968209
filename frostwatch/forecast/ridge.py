"""Ridge regression from an augmented moment matrix (sum of z z^T over rows, z = [1, x, y]): the
calibration's regressions are kept as these matrices, so a night is added by one outer product
and a fit needs no pass over the history (Hoerl & Kennard 1970, on standardised inputs).
"""

from __future__ import annotations

import numpy as np


def ridge_solve(m: np.ndarray, lam: float) -> tuple[np.ndarray, np.ndarray, float] | None:
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
