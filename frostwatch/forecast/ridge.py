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


def ridge_solve_many(ms: np.ndarray, lam: float | np.ndarray) -> list[tuple[np.ndarray, np.ndarray, float] | None]:
    """`ridge_solve` of each matrix of a stack (G, k + 2, k + 2), the same numbers bit for bit:
    the element-wise steps run over the stack at once, and the matrices whose inputs with spread
    are the same are solved together (numpy solves a stack one matrix at a time with LAPACK's
    gesv, as it solves one). `lam` is one penalty for all, or one per matrix (G,)."""
    ms = np.asarray(ms, dtype=float)
    g, size = ms.shape[0], ms.shape[1]
    k = size - 2
    out: list = [None] * g
    n = ms[:, 0, 0]
    ok = np.nonzero(n >= 2)[0]
    if not len(ok):
        return out
    lams = np.broadcast_to(np.asarray(lam, dtype=float), (g,))[ok][:, None, None]
    m = ms[ok]
    nn = n[ok]
    mean = m[:, 0, 1:] / nn[:, None]
    cov = m[:, 1:, 1:] / nn[:, None, None] - mean[:, :, None] * mean[:, None, :]
    mu, y_mean = mean[:, :k], mean[:, k]
    sxx, sxy = cov[:, :k, :k], cov[:, :k, k]
    sd = np.sqrt(np.maximum(np.diagonal(sxx, axis1=1, axis2=2), 0.0))
    use = sd > 1e-6
    coefs = np.zeros((len(ok), k))
    if use.all():  # every input has spread in every matrix (the usual case): one stack, no grouping
        d = sd
        a = nn[:, None, None] * (sxx / (d[:, :, None] * d[:, None, :])) + lams * np.eye(k)
        coefs = np.linalg.solve(a, (nn[:, None] * sxy / d)[:, :, None])[:, :, 0] / d
        groups: dict[bytes, list[int]] = {}
    else:
        groups = {}
        for r in range(len(ok)):
            if use[r].any():
                groups.setdefault(use[r].tobytes(), []).append(r)
    for rows in groups.values():
        cols = np.nonzero(use[rows[0]])[0]
        d = sd[np.ix_(rows, cols)]
        z = sxx[np.ix_(rows, cols, cols)] / (d[:, :, None] * d[:, None, :])
        nr = nn[rows]
        a = nr[:, None, None] * z + lams[rows] * np.eye(len(cols))
        b = nr[:, None] * sxy[np.ix_(rows, cols)] / d
        beta = np.linalg.solve(a, b[:, :, None])[:, :, 0]
        coefs[np.ix_(rows, cols)] = beta / d
    for r, i in enumerate(ok.tolist()):
        out[i] = (mu[r], coefs[r], float(y_mean[r]))
    return out


def lead_fit(sums: np.ndarray, mode: str, shrink: float) -> tuple[tuple[float, float], ...]:
    """(offset, ratio) per column of the nowcast's approach correction y ~ offset + ratio x from its
    sums (rows: weight, sum x, sum y, sum x^2, sum x y), by least squares shrunk toward no
    correction (offset 0, ratio 1) with penalty `shrink` (ridge regression toward a prior value,
    Hoerl & Kennard 1970; the same as least squares with extra rows sqrt(k) (1, 0) -> 0 and
    sqrt(k) (0, 1) -> sqrt(k)). mode "scale": y = r x, r = (sum x y + k) / (sum x^2 + k); "add":
    y = x + c, c = sum (y - x) / (weight + k); "affine": y = c + r x, both shrunk.

    References
    ----------
    Hoerl, A. E. and Kennard, R. W. (1970). Ridge regression: biased estimation for nonorthogonal
    problems. Technometrics 12(1), 55-67.
    """
    w, sx, sy, sxx, sxy = sums
    k = shrink
    if mode == "scale":
        off, ratio = np.zeros_like(w), (sxy + k) / (sxx + k)
    elif mode == "add":
        off, ratio = (sy - sx) / (w + k), np.ones_like(w)
    else:  # "affine": [[w + k, sx], [sx, sxx + k]] (c, r) = (sy, sxy + k)
        det = (w + k) * (sxx + k) - sx * sx
        off, ratio = (sy * (sxx + k) - sx * (sxy + k)) / det, ((w + k) * (sxy + k) - sx * sy) / det
    return tuple(zip(off.tolist(), ratio.tolist(), strict=True))
