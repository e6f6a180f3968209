"""physics.dew_point_floats (issue 19 item 3: one reading's dew point on plain floats) gives the
vectorised `dew_point_c_from_rel_humidity`'s value to the bit: on frost nights' readings, at
saturation, at and beyond the curve's range (-100..200 degC), for humidity at and beyond 0 and
100 %, and for infinities, zeros of either sign and NaN; and the evaluation's cached lookup
(`forecast.sensors.dew_point_c_from_rel_humidity`) takes it for floats."""

from __future__ import annotations

import math
import struct

import numpy as np

from frostwatch.physics.dew_frost_point import dew_point_c_from_rel_humidity
from frostwatch.physics.dew_point_floats import dew_point_c_f


def _bits(x: float):
    return "nan" if math.isnan(x) else struct.pack("<d", x)


def test_one_readings_dew_point_on_floats_is_the_vectorised_one_to_the_bit():
    rng = np.random.default_rng(17)
    odd_air = [0.0, -0.0, -100.0, 200.0, -100.0000001, 200.0000001, -150.0, 250.0, math.inf, -math.inf, math.nan, 1e-300]
    odd_rh = [100.0, 0.0, -0.0, 1.0, 1e-9, 1e-300, 100.0000001, -5.0, 150.0, math.inf, math.nan, 99.99999999]
    cases = [(round(float(rng.uniform(-15.0, 25.0)), 2), round(float(rng.uniform(1.0, 100.0)), 1)) for _ in range(20000)]
    cases += [(float(rng.uniform(-100.0, 200.0)), float(10 ** rng.uniform(-6.0, 2.0))) for _ in range(20000)]
    cases += [(a, float(rng.uniform(1.0, 100.0))) for a in odd_air] + [(float(rng.uniform(-10.0, 10.0)), r) for r in odd_rh]
    cases += [(a, r) for a in odd_air for r in odd_rh]
    for air, rh in cases:
        assert _bits(dew_point_c_f(air, rh)) == _bits(float(dew_point_c_from_rel_humidity(air, rh))), (air, rh)


def test_the_evaluations_cached_dew_point_takes_the_float_path(monkeypatch):
    from frostwatch.forecast import sensors

    calls = []
    real = sensors.dew_point_c_f
    monkeypatch.setattr(sensors, "dew_point_c_f", lambda a, r: calls.append((a, r)) or real(a, r))
    sensors.dew_point_c_from_rel_humidity.cache_clear()
    assert sensors.dew_point_c_from_rel_humidity(3.21, 87.4) == float(dew_point_c_from_rel_humidity(3.21, 87.4))
    assert sensors.dew_point_c_from_rel_humidity(5.5, np.float64(80.0)) == float(dew_point_c_from_rel_humidity(5.5, 80.0))
    assert calls == [(3.21, 87.4)]  # a numpy value goes the vectorised way
