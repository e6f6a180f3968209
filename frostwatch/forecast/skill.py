"""The recent skill of competing methods and the 80 % band, as the calibration's learner keeps them
(`forecast.learner.Learner`): each method's exponentially weighted error moments and the blend
weights they give (`_Skill`, `_weights_many` for many at once), the last residuals kept in arrival
and sorted order (`_Window`) and the band's quantiles from them (`_band_from`). Pure; no I/O.
"""

from __future__ import annotations

import math
from bisect import bisect_left, insort
from collections import deque
from itertools import chain

import numpy as np

from frostwatch.forecast.settings import (
    BAND_FROM_QUANTILES,
    BAND_MIN_RESIDUALS,
    BAND_QUANTILES,
    BAND_Z,
    PRIOR_BAND_C,
    SKILL_FLOOR_C2,
    SKILL_HALF_LIFE,
    SKILL_MIN_SCORED,
    SKILL_SHRINK,
)


class _Skill:
    """Recent skill of competing methods: exponentially weighted second moments of their errors
    (squares and cross products), and the combination that minimises the expected squared error
    of the blend (Bates & Granger 1969: w ~ S^-1 1, weights summing to one; here kept in [0, 1]
    and the error covariance shrunk halfway to its diagonal, so that two methods that err
    together do not get opposite weights)."""

    __slots__ = ("methods", "m2", "scored", "found")

    def __init__(self, methods: tuple[str, ...]):
        self.methods = methods
        # the moments as one row-major list of Python floats (k x k): a night adds a few errors to
        # each of many skills, each a handful of products, cheaper in Python than in numpy's calls
        # (the same arithmetic)
        k = len(methods)
        self.m2 = [PRIOR_BAND_C**2 if i == j else 0.0 for i in range(k) for j in range(k)]
        self.scored = dict.fromkeys(methods, 0)
        # the weights worked out since the last `add`, by available methods: a snapshot asks again
        # for skills no night has changed (the approach blend's, the other dusk regime's)
        self.found: dict[tuple[str, ...], dict[str, float] | None] = {}

    @property
    def mse(self) -> dict[str, float]:
        k = len(self.methods)
        return {m: self.m2[i * k + i] for i, m in enumerate(self.methods)}

    def add(self, errors: dict[str, float]) -> None:
        """Decay the moments and add the errors' products, among the methods with a finite error:
        m2 <- (1 - a) m2 + a e e^T, element by element, as numpy would do it."""
        a = 1.0 - 0.5 ** (1.0 / SKILL_HALF_LIFE)
        b = 1 - a
        methods = self.methods
        vals = [errors.get(m) for m in methods]
        if None not in vals and all(map(math.isfinite, vals)):  # every method scored (the usual case)
            e = [float(x) for x in vals]
            self.m2 = [b * r + a * p for r, p in zip(self.m2, [x * y for x in e for y in e], strict=True)]
            self.found = {}
            scored = self.scored
            for m in methods:
                scored[m] += 1
            return
        idx = [i for i, x in enumerate(vals) if x is not None and math.isfinite(x)]
        if not idx:
            return
        self.found = {}
        e = [float(vals[i]) for i in idx]
        m2, k = self.m2, len(methods)
        for p, i in enumerate(idx):
            ep = e[p]
            for q, j in enumerate(idx):
                m2[i * k + j] = b * m2[i * k + j] + a * (ep * e[q])
        for i in idx:
            self.scored[methods[i]] += 1

    def weights(self, available: tuple[str, ...]) -> dict[str, float] | None:
        """Blend weights among the available methods; None until each has been scored."""
        if available in self.found:
            return self.found[available]
        w = self.found[available] = self._weights(available)
        return w

    def _weights(self, available: tuple[str, ...]) -> dict[str, float] | None:
        if any(self.scored[m] < SKILL_MIN_SCORED for m in available):
            return None
        idx = [self.methods.index(m) for m in available]
        k = len(self.methods)
        s = np.array(self.m2).reshape(k, k)[np.ix_(idx, idx)]
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
        srt = residuals.sorted
        lo, hi = [_quantile_sorted(srt, q) for q in BAND_QUANTILES]
    else:
        lo, hi = np.quantile(np.asarray(list(residuals), dtype=float), BAND_QUANTILES)
    return float(lo), float(hi), n


try:  # numpy's own gufunc under np.linalg.solve, without the wrapper's checks (float64 stacks only)
    from numpy.linalg import _umath_linalg

    _SOLVE = _umath_linalg.solve
except (ImportError, AttributeError):  # pragma: no cover - another numpy's layout
    _SOLVE = None


def _solve_stack(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """`np.linalg.solve(a, b)` of float64 stacks (..., k, k) and (..., k, 1), the same numbers
    (LAPACK's gesv, matrix by matrix) without the wrapper's cost; LinAlgError for a singular
    matrix, as numpy raises it (its invalid-value signal)."""
    if _SOLVE is None:
        return np.linalg.solve(a, b)
    try:
        with np.errstate(invalid="raise", over="ignore", divide="ignore", under="ignore"):
            return _SOLVE(a, b, signature="dd->d")
    except FloatingPointError:
        raise np.linalg.LinAlgError("Singular matrix") from None


_INDEX_OF: dict[tuple[tuple[str, ...], tuple[str, ...]], tuple[int, ...]] = {}  # (methods, available): positions
_FLOOR_EYE: dict[tuple[int, float], np.ndarray] = {}  # (size, floor): floor x identity


def _weights_many(items: list[tuple[_Skill, tuple[str, ...]]]) -> list[dict[str, float] | None]:
    """`_Skill.weights` of each (skill, available methods), the same numbers: the small solves
    of records with the same available methods go to LAPACK as one stack."""
    out: list = [None] * len(items)
    # grouped by the skill's number of methods and the positions available: the same positions of
    # a smaller skill (the approach blend's two) index other moments
    groups: dict[tuple[int, tuple[int, ...]], list[int]] = {}
    for i, (skill, avail) in enumerate(items):
        if avail in skill.found:  # worked out since its last change
            out[i] = skill.found[avail]
            continue
        if not avail:
            out[i] = skill.found[avail] = {}  # as `_Skill.weights` of no method
            continue
        if min(map(skill.scored.__getitem__, avail)) < SKILL_MIN_SCORED:
            skill.found[avail] = None
            continue
        key = (skill.methods, avail)
        idx = _INDEX_OF.get(key)
        if idx is None:
            idx = _INDEX_OF[key] = tuple(skill.methods.index(m) for m in avail)
        groups.setdefault((len(skill.methods), idx), []).append(i)
    for (size, idx), members in groups.items():
        k = len(idx)
        if idx == tuple(range(size)):
            rows = chain.from_iterable(items[i][0].m2 for i in members)
        else:
            rows = (m2[i * size + j] for m2 in (items[x][0].m2 for x in members) for i in idx for j in idx)
        s = np.fromiter(rows, dtype=float, count=len(members) * k * k).reshape(len(members), k, k)
        r = np.arange(k)
        if SKILL_SHRINK == 0.0:
            # (1 - 0) s + 0 diag(s) + floor I is s + floor I, bit for bit: the moments' diagonal is
            # finite and >= 0 (decayed sums of finite squares), and +0 added once or twice is the same
            floor = _FLOOR_EYE.get((k, SKILL_FLOOR_C2))
            if floor is None:
                floor = _FLOOR_EYE[(k, SKILL_FLOOR_C2)] = SKILL_FLOOR_C2 * np.eye(k)
            s = s + floor
        else:
            diag = np.zeros_like(s)
            diag[:, r, r] = s[:, r, r]
            s = (1 - SKILL_SHRINK) * s + SKILL_SHRINK * diag + SKILL_FLOOR_C2 * np.eye(k)
        try:
            w_all = _solve_stack(s, np.ones((len(members), k, 1)))[:, :, 0]
        except np.linalg.LinAlgError:
            for i in members:
                out[i] = items[i][0].weights(items[i][1])
            continue
        total = w_all.sum(axis=1)  # rows of 2 to 4 numbers: summed in order, as one row alone
        positive = total > 0
        if positive.all():  # the usual case: np.where below picks its first branch everywhere
            w_all = np.maximum(w_all / total[:, None], 0.0)
        else:
            positive = positive[:, None]
            w_all = np.where(positive, np.maximum(w_all / np.where(positive, total[:, None], 1.0), 0.0), 1.0 / s[:, r, r])  # np.clip(x, 0.0, None) is np.maximum(x, 0.0)
        w_all = (w_all / w_all.sum(axis=1)[:, None]).tolist()
        for j, i in enumerate(members):
            out[i] = items[i][0].found[items[i][1]] = dict(zip(items[i][1], w_all[j], strict=True))
    return out
