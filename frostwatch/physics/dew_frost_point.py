"""Dew point, frost point and relative humidity, over liquid water by convention.

Pure numpy, floats or arrays in, floats or arrays out; NaN outside a formula's range.

Conventions
-----------
* A dew point is always over liquid water (the hygrometer and WMO convention), also below
  0 degC; the frost point is the separate, over-ice quantity.
* Relative humidity is relative to liquid water (WMO convention), also below 0 degC.
"""

from __future__ import annotations

import numpy as np

from frostwatch.constants import MAGNUS_E0_HPA, MAGNUS_WATER_B, MAGNUS_WATER_C_C, PA_PER_HPA
from frostwatch.physics._broadcast import _inputs, _result
from frostwatch.physics.saturation import (
    SAT_ICE_MAX_C,
    SAT_ICE_MIN_C,
    SAT_WATER_MAX_C,
    SAT_WATER_MIN_C,
    _dln_sat_ice_dt,
    _dln_sat_water_dt,
    _invert_ln_curve,
    _ln_sat_ice_pa,
    _ln_sat_water_pa,
    _sat_water_hpa,
)

# [K] a dew point this far above the air temperature is read as saturation (sensor noise);
# beyond it the pair is impossible and gives NaN. frostwatch engineering choice.
DEW_POINT_EXCESS_TOLERANCE_K = 0.05


def _dew_point_c(vapour_pressure_hpa: np.ndarray) -> np.ndarray:
    with np.errstate(invalid="ignore", divide="ignore"):
        ln_e_pa = np.log(
            np.where(vapour_pressure_hpa > 0.0, vapour_pressure_hpa, np.nan) * PA_PER_HPA
        )
        # First guess: Magnus over water (WMO-No. 8, frostwatch.constants).
        gamma = np.log(vapour_pressure_hpa / MAGNUS_E0_HPA)
        guess_c = MAGNUS_WATER_C_C * gamma / (MAGNUS_WATER_B - gamma)
    guess_c = np.where(np.isfinite(guess_c), guess_c, 0.0)
    return _invert_ln_curve(
        ln_e_pa,
        guess_c,
        _ln_sat_water_pa,
        _dln_sat_water_dt,
        SAT_WATER_MIN_C,
        SAT_WATER_MAX_C,
    )


def dew_point_c_from_vapour_pressure(vapour_pressure_hpa):
    """Dew point over liquid water from vapour pressure (inverse Hyland-Wexler).

    Parameters
    ----------
    vapour_pressure_hpa : float or array_like
        Vapour pressure [hPa].

    Returns
    -------
    float or ndarray
        Dew point over liquid water [degC], to better than 1e-6 K; NaN where e <= 0 or the
        dew point would fall outside -100..200 degC.

    Notes
    -----
    Solves ln ew(Td) = ln e by Newton's method (ln ew is nearly linear in 1/T, so a few
    steps from a Magnus first guess converge to machine precision).

    References
    ----------
    Hyland, R. W. and Wexler, A. (1983), ASHRAE Transactions 89(2A): 500-519.
    ASHRAE Handbook-Fundamentals (2017), ch. 1, eq. 6.
    """
    (vapour_pressure_hpa,), scalar = _inputs(vapour_pressure_hpa)
    return _result(_dew_point_c(vapour_pressure_hpa), scalar)


def dew_point_c_from_rel_humidity(air_temp_c, rel_humidity_pct):
    """Dew point over liquid water from air temperature and relative humidity.

    Parameters
    ----------
    air_temp_c : float or array_like
        Air temperature [degC].
    rel_humidity_pct : float or array_like
        Relative humidity with respect to liquid water [%], 0 < RH <= 100, also below 0 degC
        (WMO convention, what most hygrometers report).

    Returns
    -------
    float or ndarray
        Dew point over liquid water [degC]; NaN where RH <= 0, RH > 100 or the air
        temperature is outside -100..200 degC.

    Notes
    -----
    e = RH/100 * ew(T), then Td = ew^-1(e). Sensor over-reads (100-103 % in fog) are a data
    quality matter: clip or flag them at ingest; here they give NaN.

    References
    ----------
    WMO (2018), WMO-No. 8, Annex 4.B (definitions of relative humidity and dew point).
    Hyland, R. W. and Wexler, A. (1983); ASHRAE Handbook-Fundamentals (2017), ch. 1, eq. 6.
    """
    (air_temp_c, rel_humidity_pct), scalar = _inputs(air_temp_c, rel_humidity_pct)
    ok = (rel_humidity_pct > 0.0) & (rel_humidity_pct <= 100.0)
    e_hpa = np.where(ok, rel_humidity_pct / 100.0, np.nan) * _sat_water_hpa(air_temp_c)
    dew_point_c = _dew_point_c(e_hpa)
    # At RH = 100 the answer is the air temperature itself, not a Newton approximation of it.
    dew_point_c = np.where(rel_humidity_pct == 100.0, air_temp_c, dew_point_c)
    return _result(np.where(ok & np.isfinite(e_hpa), dew_point_c, np.nan), scalar)


def rel_humidity_pct_from_dew_point(air_temp_c, dew_point_c):
    """Relative humidity with respect to liquid water from air temperature and dew point.

    Parameters
    ----------
    air_temp_c : float or array_like
        Air temperature [degC].
    dew_point_c : float or array_like
        Dew point over liquid water [degC].

    Returns
    -------
    float or ndarray
        Relative humidity over liquid water [%]. A dew point up to 0.05 K above the air
        temperature reads as 100 %; further above it, NaN (impossible pair).

    Notes
    -----
    RH = 100 ew(Td) / ew(T), both over (supercooled) liquid water (WMO convention).

    References
    ----------
    WMO (2018), WMO-No. 8, Annex 4.B.
    Hyland, R. W. and Wexler, A. (1983); ASHRAE Handbook-Fundamentals (2017), ch. 1, eq. 6.
    """
    (air_temp_c, dew_point_c), scalar = _inputs(air_temp_c, dew_point_c)
    ok = dew_point_c <= air_temp_c + DEW_POINT_EXCESS_TOLERANCE_K
    dew_point_c = np.minimum(dew_point_c, air_temp_c)
    rh = 100.0 * _sat_water_hpa(dew_point_c) / _sat_water_hpa(air_temp_c)
    return _result(np.where(ok, rh, np.nan), scalar)


def frost_point_c_from_dew_point(dew_point_c):
    """Frost point from the dew point over liquid water.

    Parameters
    ----------
    dew_point_c : float or array_like
        Dew point over liquid water [degC].

    Returns
    -------
    float or ndarray
        Frost point [degC]: the temperature Tf where ei(Tf) = ew(Td); equal to Td at
        Td >= 0 degC. NaN outside -100..200 degC.

    Notes
    -----
    Solved by Newton's method on ln ei. Below 0 degC the frost point is warmer than the dew
    point (about 0.89 Td for -20 < Td < 0 degC).

    References
    ----------
    Hyland, R. W. and Wexler, A. (1983); ASHRAE Handbook-Fundamentals (2017), ch. 1, eqs. 5, 6.
    WMO (2018), WMO-No. 8, Annex 4.B (definition of frost-point temperature).
    """
    (dew_point_c,), scalar = _inputs(dew_point_c)
    ln_e_pa = np.log(_sat_water_hpa(dew_point_c) * PA_PER_HPA)
    frost_point_c = _invert_ln_curve(
        ln_e_pa,
        0.89 * dew_point_c,
        _ln_sat_ice_pa,
        _dln_sat_ice_dt,
        SAT_ICE_MIN_C,
        SAT_ICE_MAX_C,
    )
    frost_point_c = np.where(dew_point_c >= 0.0, dew_point_c, frost_point_c)
    ok = (dew_point_c >= SAT_WATER_MIN_C) & (dew_point_c <= SAT_WATER_MAX_C)
    return _result(np.where(ok, frost_point_c, np.nan), scalar)
