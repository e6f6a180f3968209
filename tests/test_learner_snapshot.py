"""The calibration snapshot taken at every night of a backtest (`forecast.learner.Learner`) is
computed in batches (the per-hour ridge solves and skill weights as stacks, the band's quantiles
from residuals kept sorted): it must give the same numbers, bit for bit, as the one-at-a-time
computations it replaced (`ridge_solve`, `_Skill.weights`, `np.quantile`)."""

from __future__ import annotations

import datetime as dt
import math

import numpy as np
import pytest
from forecast_site import make_cfg
from test_backtest import synthetic_log

from frostwatch.forecast import learner as lm
from frostwatch.forecast.calibration import (
    NOWCAST_BIN_H,
    NOWCAST_BINS,
    NOWCAST_MIN_SAMPLES,
    PRIOR_BAND_C,
)
from frostwatch.forecast.ridge import ridge_solve, ridge_solve_many
from frostwatch.pipeline import Evaluator


def _band_one_at_a_time(residuals, spread_c):
    r = np.asarray(list(residuals), dtype=float)
    n = len(r)
    if n < lm.BAND_MIN_RESIDUALS:
        return None  # the early band is computed as before (not batched)
    lo, hi = np.quantile(r, lm.BAND_QUANTILES)
    return float(lo), float(hi), n


def test_snapshot_equals_one_solve_at_a_time(tmp_path):
    cfg = make_cfg(tmp_path)
    series = synthetic_log(cfg, n=40)
    ev = Evaluator(cfg)
    first = dt.date(2027, 3, 20)
    checked_models = checked_bands = checked_weights = 0
    for k in range(40):
        ev.learn_night(ev.night(first + dt.timedelta(days=k)), series)
        learner = ev.learners["b"]
        cal = learner.calibration()
        for b in range(NOWCAST_BINS):
            m = learner.nc_m[b]
            want = ridge_solve(m, lm.NOWCAST_RIDGE_LAMBDA) if m[0, 0] >= NOWCAST_MIN_SAMPLES else None
            got = cal.nc_models[b]
            assert (want is None) == (got is None)
            if want is not None:
                checked_models += 1
                assert np.array_equal(want[0], got[0]) and np.array_equal(want[1], got[1]) and want[2] == got[2]
            avail = learner.nowcast_methods(got is not None)
            w = learner.nc_skill[b]._weights(avail)  # worked out again, alone (not the weights kept)
            assert cal.nc_weights[b] == (tuple(w.items()) if w else None)
            checked_weights += w is not None
            if b == 0:  # the approach blend's weights, stacked with the others
                w = learner.approach_skill._weights(lm.APPROACH_METHODS)
                assert cal.nc_approach == (tuple(w.items()) if w else ())
            band = _band_one_at_a_time(learner.nc_residuals[b], PRIOR_BAND_C * math.sqrt(min(1.0, (b + 0.5) * NOWCAST_BIN_H / 6.0)))
            if band is not None:
                checked_bands += 1
                assert cal.nc_bands[b] == band
    assert checked_models > 100 and checked_bands > 100 and checked_weights > 100


def test_ridge_on_a_stack_is_ridge_one_at_a_time():
    rng = np.random.default_rng(1)
    for _ in range(60):
        k = int(rng.integers(1, 7))
        ms = []
        for _ in range(int(rng.integers(1, 15))):
            n = int(rng.integers(0, 60))
            x = rng.normal(size=(n, k)) * rng.uniform(0.1, 5, k)
            if n and rng.random() < 0.3:
                x[:, rng.integers(k)] = 1.5  # an input with no spread gets no slope
            z = np.column_stack([np.ones(n), x, x @ rng.normal(size=k) + rng.normal(size=n)])
            ms.append(z.T @ z)
        for m, got in zip(ms, ridge_solve_many(np.array(ms), 1.3), strict=True):
            want = ridge_solve(m, 1.3)
            assert (want is None) == (got is None)
            if want is not None:
                assert np.array_equal(want[0], got[0]) and np.array_equal(want[1], got[1]) and want[2] == got[2]


@pytest.mark.parametrize("n", [20, 21, 57, 299, 300])
def test_quantile_of_sorted_residuals_is_numpys(n):
    rng = np.random.default_rng(n)
    window = lm._Window(300)
    for x in rng.normal(0, 1.5, n + 250):  # past the window's length: old residuals leave
        window.append(x)
        if len(window) >= 20:
            r = np.asarray(list(window))
            assert sorted(r.tolist()) == window.sorted
            for q in (0.1, 0.5, 0.9):
                assert lm._quantile_sorted(window.sorted, q) == float(np.quantile(r, q))


def _moments_with_numpy(history, methods):
    """A skill's moments as numpy would keep them: m2 <- (1 - a) m2 + a e e^T over the methods
    with a finite error, from the prior's spread on the diagonal."""
    from frostwatch.forecast.skill import SKILL_HALF_LIFE

    a = 1.0 - 0.5 ** (1.0 / SKILL_HALF_LIFE)
    m2 = np.diag(np.full(len(methods), PRIOR_BAND_C**2))
    for errors in history:
        idx = [i for i, m in enumerate(methods) if errors.get(m) is not None and math.isfinite(errors[m])]
        if idx:
            e = np.array([errors[methods[i]] for i in idx])
            m2[np.ix_(idx, idx)] = (1 - a) * m2[np.ix_(idx, idx)] + a * np.outer(e, e)
    return m2


def test_skill_moments_are_numpys_and_its_weights_follow_each_error():
    """The moments, kept as one flat list of Python floats, are numpy's to the last bit, with
    every method scored and with some missing or not finite; the weights kept since the last
    error are the weights worked out afresh, and stacked (`_weights_many`) the same again."""
    from frostwatch.forecast.skill import _Skill, _weights_many

    rng = np.random.default_rng(3)
    methods = lm.NOWCAST_METHODS
    skill, history = _Skill(methods), []
    for k in range(60):
        errors = {m: float(x) for m, x in zip(methods, rng.normal(0, 1.2, len(methods)), strict=True)}
        if k % 4 == 1:
            errors.pop(methods[int(rng.integers(len(methods)))])
        if k % 7 == 3:
            errors[methods[int(rng.integers(len(methods)))]] = float("nan")
        skill.add(errors)
        history.append(errors)
        want = _moments_with_numpy(history, methods)
        assert np.array(skill.m2).reshape(len(methods), -1).tobytes() == want.tobytes()
        for avail in (methods, methods[1:], methods[:2]):
            kept = skill.weights(avail)
            assert kept == skill._weights(avail) == _weights_many([(skill, avail)])[0]
    assert skill.weights(methods) is not None


def test_stacked_weights_of_skills_of_different_sizes_at_the_same_positions_are_each_its_own():
    """A dusk skill with only its first two methods scored (no evening curve, no prior: the
    "other" regime of a site without readings before dusk) and the approach blend's two-method
    skill share positions (0, 1) but not their moments' layout: stacked in one call, each gets
    its own weights (before, the second was read with the first's row length: IndexError)."""
    from frostwatch.forecast.calibration import APPROACH_METHODS, DUSK_METHODS
    from frostwatch.forecast.skill import _Skill, _weights_many

    rng = np.random.default_rng(5)
    dusk, approach = _Skill(DUSK_METHODS), _Skill(APPROACH_METHODS)
    for _ in range(12):
        dusk.add({m: float(x) for m, x in zip(DUSK_METHODS[:2], rng.normal(0, 1.5, 2), strict=True)})
        approach.add({m: float(x) for m, x in zip(APPROACH_METHODS, rng.normal(0, 0.6, 2), strict=True)})
    items = [(dusk, DUSK_METHODS[:2]), (approach, APPROACH_METHODS)]
    want = [dusk._weights(DUSK_METHODS[:2]), approach._weights(APPROACH_METHODS)]
    assert want[0] != want[1]
    assert _weights_many(items) == want


def test_a_stack_solved_without_numpys_wrapper_is_numpys():
    from frostwatch.forecast.skill import _solve_stack

    rng = np.random.default_rng(4)
    a = rng.normal(size=(9, 4, 4)) + 3 * np.eye(4)
    b = np.ones((9, 4, 1))
    assert _solve_stack(a, b).tobytes() == np.linalg.solve(a, b).tobytes()
    a[4] = 0.0  # singular: numpy's error, as np.linalg.solve raises it
    with pytest.raises(np.linalg.LinAlgError):
        _solve_stack(a, b)
