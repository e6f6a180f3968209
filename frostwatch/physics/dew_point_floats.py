"""The dew point of one reading (`dew_frost_point.dew_point_c_from_rel_humidity` of two floats) on
plain floats, to the bit: no physics of its own.

The vectorised function turns one reading into 0-d arrays and numpy scalars and steps Newton's
method through a dozen numpy calls a step (about 50 us a reading); an evaluation solves the
newest reading of every block whose crop-height sensor reports humidity. Here each step is the
same expression on Python floats, in the same order, with what numpy does for one value: + - * /
round as numpy's float64 does; a power of a numpy scalar (what the 0-d steps give) is the C
library's pow, as a float's `**` is; the logarithms and the exponential go through numpy's own
ufuncs (np.log, np.exp), whose values can differ in the last bit from the math module's; a
division by zero gives what IEEE gives (an infinity or NaN, which the loop then treats as no
step), where Python would raise.

tests/test_dew_point_floats.py holds it to the vectorised function on random and odd readings.
"""

from __future__ import annotations

import math

import numpy as np

from frostwatch.constants import MAGNUS_E0_HPA, MAGNUS_WATER_B, MAGNUS_WATER_C_C, PA_PER_HPA, ZERO_CELSIUS_K
from frostwatch.physics.iced_canopy_floats import sat_water_hpa_f
from frostwatch.physics.saturation import (
    _HW_WATER_C8,
    _HW_WATER_C9,
    _HW_WATER_C10,
    _HW_WATER_C11,
    _HW_WATER_C12,
    _HW_WATER_C13,
    _NEWTON_ITERATIONS,
    _NEWTON_TOLERANCE_K,
    SAT_WATER_MAX_C,
    SAT_WATER_MIN_C,
)


def _div(a: float, b: float) -> float:
    """a / b as numpy's float64 divides (IEEE: a zero divisor gives an infinity or NaN)."""
    if b == 0.0:
        return math.nan if a == 0.0 or a != a else math.copysign(math.inf, a) * math.copysign(1.0, b)
    return a / b


def _log(x: float) -> float:
    """np.log of one float: NaN below 0 and -inf at 0, as numpy gives them (no warning)."""
    if x > 0.0 or x != x:
        return float(np.log(x))
    return -math.inf if x == 0.0 else math.nan


def _clip(x: float, lo: float, hi: float) -> float:
    """np.clip of one float (NaN stays NaN)."""
    return x if x != x else (lo if x < lo else hi if x > hi else x)


def dew_point_c_f(air_temp_c: float, rel_humidity_pct: float) -> float:
    """`float(dew_frost_point.dew_point_c_from_rel_humidity(air_temp_c, rel_humidity_pct))` of two
    floats [degC]."""
    rh = rel_humidity_pct
    ok = rh > 0.0 and rh <= 100.0
    e_hpa = (rh / 100.0 if ok else math.nan) * sat_water_hpa_f(air_temp_c)
    dew_c = _dew_point_c_f(e_hpa)
    if rh == 100.0:
        dew_c = air_temp_c
    return dew_c if ok and math.isfinite(e_hpa) else math.nan


def _dew_point_c_f(e_hpa: float) -> float:
    """`dew_frost_point._dew_point_c` and `saturation._invert_ln_curve` over water of one float."""
    ln_e_pa = _log((e_hpa if e_hpa > 0.0 else math.nan) * PA_PER_HPA)
    gamma = _log(_div(e_hpa, MAGNUS_E0_HPA))
    guess_c = _div(MAGNUS_WATER_C_C * gamma, MAGNUS_WATER_B - gamma)
    guess_c = guess_c if math.isfinite(guess_c) else 0.0
    lo_k, hi_k = SAT_WATER_MIN_C + ZERO_CELSIUS_K - 1.0, SAT_WATER_MAX_C + ZERO_CELSIUS_K + 1.0
    temp_k = _clip(guess_c, SAT_WATER_MIN_C, SAT_WATER_MAX_C) + ZERO_CELSIUS_K
    for _ in range(_NEWTON_ITERATIONS):
        ln_curve = (_div(_HW_WATER_C8, temp_k) + _HW_WATER_C9
                    + temp_k * (_HW_WATER_C10 + temp_k * (_HW_WATER_C11 + temp_k * _HW_WATER_C12))
                    + _HW_WATER_C13 * _log(temp_k))
        dln_curve = (_div(-_HW_WATER_C8, temp_k**2) + _HW_WATER_C10
                     + temp_k * (2.0 * _HW_WATER_C11 + 3.0 * _HW_WATER_C12 * temp_k) + _div(_HW_WATER_C13, temp_k))
        step = _div(ln_curve - ln_e_pa, dln_curve)
        step = step if math.isfinite(step) else 0.0
        temp_k = _clip(temp_k - step, lo_k, hi_k)
        if abs(step) < _NEWTON_TOLERANCE_K:
            break
    temp_c = temp_k - ZERO_CELSIUS_K
    inside = math.isfinite(ln_e_pa) and temp_c >= SAT_WATER_MIN_C - 1e-9 and temp_c <= SAT_WATER_MAX_C + 1e-9
    return _clip(temp_c, SAT_WATER_MIN_C, SAT_WATER_MAX_C) if inside else math.nan
