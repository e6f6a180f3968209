"""physics.iced_canopy_floats (issue 19 item 3: an evaluation's heat budget of the iced plant on
plain floats) gives the vectorised path's values to the bit: `sprinklers.iced_canopy_heat_loss`
of floats against `_iced_canopy_heat_loss_arrays` (the physics functions on 0-d arrays) on random
nights, on values at and beyond every range the masks draw (air -45..45 degC, vapour pressure up
to 105 % of saturation and 100 hPa, cloud 0..1, calm wind, no pressure) and on infinities; the
application rate built on it likewise."""

from __future__ import annotations

import math
import struct

import numpy as np

from frostwatch.physics import sprinklers
from frostwatch.physics.sprinklers import _iced_canopy_heat_loss_arrays, iced_canopy_heat_loss


def _bits(loss) -> tuple:
    return tuple(struct.pack("<d", float(getattr(loss, k))) if not math.isnan(getattr(loss, k)) else "nan"
                 for k in ("radiation_w_m2", "sensible_w_m2", "latent_w_m2", "wind_used_m_s"))


def _cases(rng, n: int):
    odd = [0.0, -0.0, 45.0, -45.0, 45.000000001, -45.000000001, 1e-300, -1e-300, math.inf, -math.inf, 200.0, -100.0,
           -273.15, 1.0, 0.5, 1.05, 100.0]
    for _ in range(n):
        air = float(rng.uniform(-60.0, 60.0))
        td = float(air - rng.exponential(4.0)) if rng.random() < 0.8 else float(rng.uniform(-120.0, 60.0))
        wind = float(rng.choice([rng.uniform(0.0, 12.0), 0.0, 0.3, -1.0]))
        p = float(rng.choice([1013.25, rng.uniform(500.0, 1100.0), 0.0, -5.0]))
        cloud = float(rng.choice([0.0, rng.uniform(0.0, 1.0), 1.0, rng.uniform(-0.5, 1.5)]))
        args = [air, td, wind, p, cloud]
        if rng.random() < 0.2:
            args[int(rng.integers(0, 5))] = float(rng.choice(odd))
        yield args


def test_the_heat_budget_on_floats_is_the_vectorised_one_to_the_bit():
    rng = np.random.default_rng(41)
    fast = 0
    for args in _cases(rng, 20000):
        if any(math.isnan(v) for v in args):
            continue
        got = iced_canopy_heat_loss(*args)
        assert _bits(got) == _bits(_iced_canopy_heat_loss_arrays(*args)), args
        fast += 1
    assert fast > 19000


def test_the_rate_tonight_of_an_evaluations_floats_takes_the_float_path_and_the_same_values(monkeypatch):
    """rate_tonight_mm_h as sprinkling calls it (floats, default cloud and pressure): the float path
    is the one taken, and its figures are those of the vectorised path."""
    calls = []
    real = sprinklers.iced_canopy_heat_loss_f
    monkeypatch.setattr(sprinklers, "iced_canopy_heat_loss_f", lambda *a: calls.append(a) or real(*a))
    rng = np.random.default_rng(5)
    for _ in range(500):
        pmin, td, wind = round(float(rng.uniform(-6, 4)), 2), round(float(rng.uniform(-12, 2)), 2), round(float(rng.uniform(0, 6)), 2)
        got = sprinklers.rate_tonight_mm_h(pmin, td, wind)
        loss = _iced_canopy_heat_loss_arrays(pmin, td, wind, sprinklers.STANDARD_PRESSURE_HPA, 0.0)
        want = sprinklers.rate_for_heat_loss_mm_h(loss.total_w_m2)
        assert struct.pack("<d", got.required_mm_h) == struct.pack("<d", want)
        assert _bits(sprinklers.iced_canopy_heat_loss(pmin, td, wind)) == _bits(loss)
    assert len(calls) == 1000
