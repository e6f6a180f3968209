"""The dusk regression on fewer inputs (issue 15): fitted beside the full one from the same moment
matrices, scored walk-forward against it on every night learned, and used in its place only when its
absolute error is lower by more than one standard error (`calibration.REDUCED_INPUTS`,
`Learner.reduced_speaks`)."""

from __future__ import annotations

import datetime as dt
import math

import numpy as np
import pytest

from frostwatch import forecast
from frostwatch.forecast import calibration, learner
from frostwatch.forecast.ridge import ridge_solve


def _night(d: int, t0: float, td: float, cloud: float, wind: float, wtrend: float, ptrend: float, k: float,
           hours: float = 10.0) -> forecast.NightRecord:
    day = dt.date(2027, 1, 1) + dt.timedelta(days=d)
    return forecast.NightRecord(day, "b-low", t0, td, hours, t0 + k * math.sqrt(hours),
                                dt.datetime.combine(day, dt.time(12), tzinfo=dt.UTC), wind, cloud, t0 - 3.0, False,
                                t0_wind_m_s=wind, t0_cloud_frac=cloud, t0_wind_trend_m_s=wtrend,
                                t0_pressure_trend_hpa=ptrend)


def test_reduced_fit_is_least_squares_on_its_own_inputs():
    """The reduced regression taken from the full moment matrix's rows and columns of T0, Td0 is
    the least-squares fit of K on those two inputs alone (numpy's lstsq as the reference; a tiny
    ridge penalty), with slope 0 on every input left out."""
    rng = np.random.default_rng(3)
    x = rng.normal(size=(40, len(calibration.FEATURES))) * [5.0, 4.0, 0.3, 2.0, 1.0, 1.0] + [10.0, 4.0, 0.5, 2.0, 0.0, 0.0]
    k = -1.2 + 0.03 * x[:, 0] - 0.05 * x[:, 1] + 0.4 * x[:, 2] + rng.normal(scale=0.1, size=40)
    z = np.column_stack([np.ones(40), x, k])
    ix = calibration.reduced_index()
    assert ix == [0, 1, 2, len(calibration.FEATURES) + 1]
    means, coefs, k_mean = calibration.reduced_model(ridge_solve((z.T @ z)[np.ix_(ix, ix)], 1e-9))
    a = np.column_stack([np.ones(40), x[:, 0], x[:, 1]])
    ref = np.linalg.lstsq(a, k, rcond=None)[0]
    assert coefs[0] == pytest.approx(ref[1], rel=1e-6) and coefs[1] == pytest.approx(ref[2], rel=1e-6)
    assert coefs[2:] == (0.0, 0.0, 0.0, 0.0) and means[2:] == (0.0, 0.0, 0.0, 0.0)
    q = x[7]
    assert k_mean + sum(c * (xi - m) for c, xi, m in zip(coefs, q, means, strict=True)) == pytest.approx(
        ref[0] + ref[1] * q[0] + ref[2] * q[1], abs=1e-9)


def test_the_reduced_regression_speaks_only_beyond_one_standard_error():
    """Worked by hand: ten nights whose full-minus-reduced absolute errors are 0.3, 0.1, 0.2, 0.4,
    0.0, 0.2, 0.3, 0.1, 0.2, 0.2 degC have mean 0.2 and standard error sqrt((0.052 - 0.04) / 10)
    = 0.0346: the reduced one speaks (0.2 > 0.0346). Nine of them are too few; a mean of 0.02 with
    the same spread is within noise."""
    d = [0.3, 0.1, 0.2, 0.4, 0.0, 0.2, 0.3, 0.1, 0.2, 0.2]
    lrn = learner.Learner(10)
    lrn.reduced_gain = [sum(d), sum(x * x for x in d), len(d)]
    assert lrn.reduced_speaks()
    lrn.reduced_gain = [sum(d[:9]), sum(x * x for x in d[:9]), 9]
    assert not lrn.reduced_speaks()
    e = [x - 0.18 for x in d]  # mean 0.02, the same spread
    lrn.reduced_gain = [sum(e), sum(x * x for x in e), len(e)]
    assert not lrn.reduced_speaks()


def _site(noise_inputs: bool, n: int = 300, seed: int = 11) -> list[forecast.NightRecord]:
    """A made-up site whose cooling coefficient follows T0 and Td0 (and, unless `noise_inputs`,
    the cloud at dusk); its other dusk inputs vary at random."""
    rng = np.random.default_rng(seed)
    recs = []
    for d in range(n):
        t0, td = rng.uniform(2, 14), rng.uniform(-6, 8)
        cloud, wind, wtrend, ptrend = rng.uniform(0, 1), rng.uniform(0, 6), rng.normal(0, 1.5), rng.normal(0, 1.5)
        k = -0.9 - 0.02 * (t0 - 8.0) + 0.04 * (td - 1.0) + rng.normal(scale=0.3)
        if not noise_inputs:
            k += 0.9 * (cloud - 0.5)
        recs.append(_night(d, t0, td, cloud, wind, wtrend, ptrend, k, hours=rng.uniform(7, 12)))
    return recs


def _learn(recs):
    lrn = learner.Learner(10)
    for r in recs:
        lrn.learn(r)
    return lrn


def test_a_site_whose_cloud_and_wind_carry_nothing_keeps_temperature_and_dew_point():
    """Where the minimum follows T0 and Td0 alone, the full regression's other inputs only add
    noise to its fit: walk-forward, the reduced one errs less, by more than one standard error on
    most such made-up sites (twelve random ones of 300 nights here; measured 10 of 12), and takes
    over; where cloud carries the cooling, the full one keeps speaking."""
    switched = 0
    for seed in range(12):
        noisy = _learn(_site(noise_inputs=True, seed=seed))
        cal = noisy.calibration()
        assert noisy.reduced_gain[2] == 300 - calibration.MIN_REGRESSION_NIGHTS
        switched += cal.use_reduced
        if cal.use_reduced:
            assert noisy.reduced_gain[0] > 0 and cal.k_reduced is not None
            assert cal.coefs[2:] == (0.0, 0.0, 0.0, 0.0)  # the regression that speaks has no slope on them
            x = forecast.feature_vector(6.0, 0.0, 0.9, 5.0, 2.0, -2.0)
            assert cal.regression_c(x, 9.0) == cal.regression_c(x, 9.0, reduced=True) != cal.regression_c(x, 9.0, reduced=False)
        if seed < 4:
            cloudy = _learn(_site(noise_inputs=False, seed=seed))
            assert cloudy.reduced_gain[0] < 0 and not cloudy.calibration().use_reduced
    assert switched >= 8


def test_no_reduced_regression_when_switched_off(forecast_setting):
    forecast_setting("REDUCED_INPUTS", None)
    cal = _learn(_site(noise_inputs=True, n=40)).calibration()
    assert cal.k_reduced is None and not cal.use_reduced
