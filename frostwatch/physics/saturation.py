"""Saturation vapour pressure over water and over ice (Hyland & Wexler 1983, as in ASHRAE).

Pure numpy. Every public function accepts floats or arrays (broadcast together) and returns a
``float`` for scalar input, an ``ndarray`` otherwise. Input outside a formula's range gives NaN.
The over-water curve is also used below 0 degC, for supercooled water: the dew point and the
relative humidity are over liquid water (WMO convention), see `frostwatch.physics.dew_frost_point`.
"""

from __future__ import annotations

import math

import numpy as np

from frostwatch.constants import PA_PER_HPA, TRIPLE_POINT_WATER_C, ZERO_CELSIUS_K
from frostwatch.physics._broadcast import _inputs, _result

# Hyland & Wexler (1983), ASHRAE Handbook-Fundamentals (2017) ch. 1 eq. 5: ln(pws [Pa]) over
# ice, T in K, valid -100..0.01 degC.
_HW_ICE_C1 = -5.6745359e3
_HW_ICE_C2 = 6.3925247
_HW_ICE_C3 = -9.677843e-3
_HW_ICE_C4 = 6.2215701e-7
_HW_ICE_C5 = 2.0747825e-9
_HW_ICE_C6 = -9.484024e-13
_HW_ICE_C7 = 4.1635019
# Hyland & Wexler (1983), ASHRAE Handbook-Fundamentals (2017) ch. 1 eq. 6: ln(pws [Pa]) over
# liquid water, T in K, valid 0..200 degC (used down to -100 degC for supercooled water).
_HW_WATER_C8 = -5.8002206e3
_HW_WATER_C9 = 1.3914993
_HW_WATER_C10 = -4.8640239e-2
_HW_WATER_C11 = 4.1764768e-5
_HW_WATER_C12 = -1.4452093e-8
_HW_WATER_C13 = 6.5459673


SAT_WATER_MIN_C = -100.0  # [degC] lower end of the over-water formula as used here
SAT_WATER_MAX_C = 200.0  # [degC] upper end, ASHRAE ch. 1
SAT_ICE_MIN_C = -100.0  # [degC] lower end of the over-ice formula, ASHRAE ch. 1
SAT_ICE_MAX_C = TRIPLE_POINT_WATER_C  # [degC] upper end of the over-ice formula

_NEWTON_ITERATIONS = 50
_NEWTON_TOLERANCE_K = 1e-9


def _ln_sat_water_pa(temp_k: np.ndarray) -> np.ndarray:
    return (
        _HW_WATER_C8 / temp_k
        + _HW_WATER_C9
        + temp_k * (_HW_WATER_C10 + temp_k * (_HW_WATER_C11 + temp_k * _HW_WATER_C12))
        + _HW_WATER_C13 * np.log(temp_k)
    )


def _dln_sat_water_dt(temp_k: np.ndarray) -> np.ndarray:
    return (
        -_HW_WATER_C8 / temp_k**2
        + _HW_WATER_C10
        + temp_k * (2.0 * _HW_WATER_C11 + 3.0 * _HW_WATER_C12 * temp_k)
        + _HW_WATER_C13 / temp_k
    )


def _ln_sat_ice_pa(temp_k: np.ndarray) -> np.ndarray:
    return (
        _HW_ICE_C1 / temp_k
        + _HW_ICE_C2
        + temp_k
        * (_HW_ICE_C3 + temp_k * (_HW_ICE_C4 + temp_k * (_HW_ICE_C5 + temp_k * _HW_ICE_C6)))
        + _HW_ICE_C7 * np.log(temp_k)
    )


def _dln_sat_ice_dt(temp_k: np.ndarray) -> np.ndarray:
    return (
        -_HW_ICE_C1 / temp_k**2
        + _HW_ICE_C3
        + temp_k * (2.0 * _HW_ICE_C4 + temp_k * (3.0 * _HW_ICE_C5 + 4.0 * _HW_ICE_C6 * temp_k))
        + _HW_ICE_C7 / temp_k
    )


def _sat_water_hpa(temp_c: np.ndarray) -> np.ndarray:
    ok = (temp_c >= SAT_WATER_MIN_C) & (temp_c <= SAT_WATER_MAX_C)
    with np.errstate(invalid="ignore", divide="ignore"):
        e = np.exp(_ln_sat_water_pa(np.where(ok, temp_c, 0.0) + ZERO_CELSIUS_K)) / PA_PER_HPA
    return np.where(ok, e, np.nan)


def _sat_ice_hpa(temp_c: np.ndarray) -> np.ndarray:
    ok = (temp_c >= SAT_ICE_MIN_C) & (temp_c <= SAT_ICE_MAX_C)
    with np.errstate(invalid="ignore", divide="ignore"):
        e = np.exp(_ln_sat_ice_pa(np.where(ok, temp_c, 0.0) + ZERO_CELSIUS_K)) / PA_PER_HPA
    return np.where(ok, e, np.nan)


def _invert_ln_curve(ln_target_pa, first_guess_c, ln_curve, dln_curve, lo_c, hi_c):
    """Newton iteration on ln e(T) = ln_target; NaN where the root leaves [lo_c, hi_c]."""
    # the arrays' own clip and all: np.clip and np.all's values without their wrappers (this loop
    # runs for every dew point an evaluation solves)
    temp_k = np.asarray(first_guess_c).clip(lo_c, hi_c) + ZERO_CELSIUS_K
    for _ in range(_NEWTON_ITERATIONS):
        step = (ln_curve(temp_k) - ln_target_pa) / dln_curve(temp_k)
        step = np.where(np.isfinite(step), step, 0.0)
        temp_k = (temp_k - step).clip(lo_c + ZERO_CELSIUS_K - 1.0, hi_c + ZERO_CELSIUS_K + 1.0)
        if (np.abs(step) < _NEWTON_TOLERANCE_K).all():
            break
    temp_c = temp_k - ZERO_CELSIUS_K
    ok = np.isfinite(ln_target_pa) & (temp_c >= lo_c - 1e-9) & (temp_c <= hi_c + 1e-9)
    return np.where(ok, np.clip(temp_c, lo_c, hi_c), np.nan)


def saturation_vapour_pressure_water_hpa(temp_c):
    """Saturation vapour pressure over plane liquid water, Hyland & Wexler (1983).

    Parameters
    ----------
    temp_c : float or array_like
        Temperature [degC].

    Returns
    -------
    float or ndarray
        Saturation vapour pressure over liquid water [hPa]; NaN outside -100..200 degC.

    Notes
    -----
    ln(pws [Pa]) = C8/T + C9 + C10 T + C11 T^2 + C12 T^3 + C13 ln T, with T in K.
    Published for 0..200 degC. Below 0 degC it is used as the curve over supercooled water,
    down to -100 degC: that is what the liquid-water dew point and relative-humidity
    conventions (WMO) need. Over ice, use :func:`saturation_vapour_pressure_ice_hpa`.

    References
    ----------
    Hyland, R. W. and Wexler, A. (1983), ASHRAE Transactions 89(2A): 500-519.
    ASHRAE Handbook-Fundamentals (2017), ch. 1, eq. 6.
    """
    (temp_c,), scalar = _inputs(temp_c)
    return _result(_sat_water_hpa(temp_c), scalar)


def saturation_vapour_pressure_ice_hpa(temp_c):
    """Saturation vapour pressure over plane ice, Hyland & Wexler (1983).

    Parameters
    ----------
    temp_c : float or array_like
        Temperature [degC].

    Returns
    -------
    float or ndarray
        Saturation vapour pressure over ice [hPa]; NaN outside -100..0.01 degC.

    Notes
    -----
    ln(pws [Pa]) = C1/T + C2 + C3 T + C4 T^2 + C5 T^3 + C6 T^4 + C7 ln T, with T in K,
    valid from -100 degC to the triple point, 0.01 degC.

    References
    ----------
    Hyland, R. W. and Wexler, A. (1983), ASHRAE Transactions 89(2A): 500-519.
    ASHRAE Handbook-Fundamentals (2017), ch. 1, eq. 5.
    """
    (temp_c,), scalar = _inputs(temp_c)
    return _result(_sat_ice_hpa(temp_c), scalar)


def vapour_pressure_hpa_from_dew_point(dew_point_c):
    """Vapour pressure of moist air from its dew point over liquid water.

    Parameters
    ----------
    dew_point_c : float or array_like
        Dew point over liquid water [degC], the hygrometer convention (WMO).

    Returns
    -------
    float or ndarray
        Vapour pressure [hPa]; NaN outside -100..200 degC.

    Notes
    -----
    e = ew(Td), with ew the Hyland-Wexler curve over (supercooled) water. The enhancement
    factor of moist air (about 1.004 at 1000 hPa) is left out, as in ASHRAE ch. 1.

    References
    ----------
    WMO (2018), Guide to Instruments and Methods of Observation (WMO-No. 8), Annex 4.B.
    ASHRAE Handbook-Fundamentals (2017), ch. 1, eq. 6 and the definition of dew point.
    """
    (dew_point_c,), scalar = _inputs(dew_point_c)
    return _result(_sat_water_hpa(dew_point_c), scalar)


# ---- the same curves for one point, on plain floats (the scalar wet-bulb solver's hot path) ----


def _sat_hpa_f(temp_c: float, over_ice: bool) -> float:
    tk = temp_c + ZERO_CELSIUS_K
    if over_ice:
        if not SAT_ICE_MIN_C <= temp_c <= SAT_ICE_MAX_C:
            return math.nan
        ln = (_HW_ICE_C1 / tk + _HW_ICE_C2
              + tk * (_HW_ICE_C3 + tk * (_HW_ICE_C4 + tk * (_HW_ICE_C5 + tk * _HW_ICE_C6)))
              + _HW_ICE_C7 * math.log(tk))
    else:
        if not SAT_WATER_MIN_C <= temp_c <= SAT_WATER_MAX_C:
            return math.nan
        ln = (_HW_WATER_C8 / tk + _HW_WATER_C9
              + tk * (_HW_WATER_C10 + tk * (_HW_WATER_C11 + tk * _HW_WATER_C12))
              + _HW_WATER_C13 * math.log(tk))
    return math.exp(ln) / PA_PER_HPA
