"""Psychrometrics for frost nights: saturation, dew and frost point, wet and ice bulb.

Pure numpy. Every function accepts floats or arrays (broadcast together) and returns a
``float`` for scalar input, an ``ndarray`` otherwise. Input outside a formula's range gives NaN.

Conventions
-----------
* A dew point is always over liquid water (the hygrometer and WMO convention), also below
  0 degC; the frost point is the separate, over-ice quantity.
* Relative humidity is relative to liquid water (WMO convention), also below 0 degC.
* The wet bulb is ASHRAE's thermodynamic one: over a water bulb at Tw >= 0 degC, over an ice
  bulb below 0 degC (the quantity that matters for sprinkler start and stop).
"""

from __future__ import annotations

import math

import numpy as np

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

ZERO_CELSIUS_K = 273.15  # [K] ITS-90 ice point
TRIPLE_POINT_C = 0.01  # [degC] triple point of water, ITS-90
PA_PER_HPA = 100.0  # [Pa hPa-1]
STANDARD_PRESSURE_HPA = 1013.25  # [hPa] ISO 2533 / ICAO standard atmosphere at sea level
MOLAR_MASS_RATIO_WATER_AIR = 0.621945  # [-] ASHRAE Handbook-Fundamentals (2017) ch. 1 eq. 20

SAT_WATER_MIN_C = -100.0  # [degC] lower end of the over-water formula as used here
SAT_WATER_MAX_C = 200.0  # [degC] upper end, ASHRAE ch. 1
SAT_ICE_MIN_C = -100.0  # [degC] lower end of the over-ice formula, ASHRAE ch. 1
SAT_ICE_MAX_C = TRIPLE_POINT_C  # [degC] upper end of the over-ice formula
# [K] a dew point this far above the air temperature is read as saturation (sensor noise);
# beyond it the pair is impossible and gives NaN. frostwatch engineering choice.
DEW_POINT_EXCESS_TOLERANCE_K = 0.05
ELEVATION_MIN_M = -500.0  # [m] below the lowest dry land (Dead Sea shore, about -430 m)
ELEVATION_MAX_M = 11000.0  # [m] standard tropopause; the formula's lapse rate ends there

_NEWTON_ITERATIONS = 50
_NEWTON_TOLERANCE_K = 1e-9
_BISECTION_ITERATIONS = 16  # fixed count (same answer scalar or array); Illinois reaches 1e-9 K in ~10


def _result(value: np.ndarray, scalar: bool) -> float | np.ndarray:
    """Return a Python float for scalar input, the array otherwise."""
    return float(value) if scalar else value


def _inputs(*values) -> tuple[list[np.ndarray], bool]:
    """Broadcast inputs to float arrays and tell whether all were scalar."""
    scalar = all(np.ndim(v) == 0 for v in values)
    arrays = np.broadcast_arrays(*(np.asarray(v, dtype=float) for v in values))
    return [np.array(a, dtype=float) for a in arrays], scalar


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
    temp_k = np.clip(first_guess_c, lo_c, hi_c) + ZERO_CELSIUS_K
    for _ in range(_NEWTON_ITERATIONS):
        step = (ln_curve(temp_k) - ln_target_pa) / dln_curve(temp_k)
        step = np.where(np.isfinite(step), step, 0.0)
        temp_k = np.clip(temp_k - step, lo_c + ZERO_CELSIUS_K - 1.0, hi_c + ZERO_CELSIUS_K + 1.0)
        if np.all(np.abs(step) < _NEWTON_TOLERANCE_K):
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


def _dew_point_c(vapour_pressure_hpa: np.ndarray) -> np.ndarray:
    with np.errstate(invalid="ignore", divide="ignore"):
        ln_e_pa = np.log(
            np.where(vapour_pressure_hpa > 0.0, vapour_pressure_hpa, np.nan) * PA_PER_HPA
        )
        # First guess: Magnus over water (WMO-No. 8, 6.112, 17.62, 243.12).
        gamma = np.log(vapour_pressure_hpa / 6.112)
        guess_c = 243.12 * gamma / (17.62 - gamma)
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


def _humidity_ratio(e_hpa: np.ndarray, pressure_hpa: np.ndarray) -> np.ndarray:
    ok = (e_hpa >= 0.0) & (e_hpa < pressure_hpa)
    # the denominator is made safe where it is not used, instead of an errstate context on a hot path
    w = MOLAR_MASS_RATIO_WATER_AIR * e_hpa / np.where(ok, pressure_hpa - e_hpa, 1.0)
    return np.where(ok, w, np.nan)


def humidity_ratio_from_vapour_pressure(vapour_pressure_hpa, pressure_hpa):
    """Humidity ratio (mixing ratio) of moist air from vapour pressure and pressure.

    Parameters
    ----------
    vapour_pressure_hpa : float or array_like
        Vapour pressure [hPa].
    pressure_hpa : float or array_like
        Total (station) pressure [hPa].

    Returns
    -------
    float or ndarray
        Humidity ratio [kg kg-1] (water per dry air); NaN where e < 0 or e >= p.

    Notes
    -----
    W = 0.621945 e / (p - e), ideal-gas mixture.

    References
    ----------
    ASHRAE Handbook-Fundamentals (2017), ch. 1, eq. 20.
    """
    (e_hpa, pressure_hpa), scalar = _inputs(vapour_pressure_hpa, pressure_hpa)
    return _result(_humidity_ratio(e_hpa, pressure_hpa), scalar)


def _psychrometric_w_water(air_temp_c, bulb_c, pressure_hpa):
    """ASHRAE ch. 1 eq. 33 (water bulb): W of the air whose wet bulb is bulb_c."""
    ws = _humidity_ratio(_sat_water_hpa(bulb_c), pressure_hpa)
    return ((2501.0 - 2.326 * bulb_c) * ws - 1.006 * (air_temp_c - bulb_c)) / (
        2501.0 + 1.86 * air_temp_c - 4.186 * bulb_c
    )


def _psychrometric_w_ice(air_temp_c, bulb_c, pressure_hpa):
    """ASHRAE ch. 1 eq. 35 (ice bulb): W of the air whose ice bulb is bulb_c."""
    ws = _humidity_ratio(_sat_ice_hpa(bulb_c), pressure_hpa)
    return ((2830.0 - 0.24 * bulb_c) * ws - 1.006 * (air_temp_c - bulb_c)) / (
        2830.0 + 1.86 * air_temp_c - 2.1 * bulb_c
    )


def _bisect(func, lo, hi):
    """Vectorised root of an increasing func on [lo, hi] (Illinois false position).

    Safeguarded regula falsi (Dowell & Jarratt 1971): superlinear, never leaves the bracket; a
    bracket without a sign change returns its nearer end, as bisection would.
    """
    f_lo, f_hi = func(lo), func(hi)
    side = np.zeros(np.shape(lo), dtype=int)
    x = 0.5 * (lo + hi)
    for _ in range(_BISECTION_ITERATIONS):
        denom = f_hi - f_lo
        safe = np.abs(denom) > 1e-300
        x = np.where(safe, hi - f_hi * (hi - lo) / np.where(safe, denom, 1.0), 0.5 * (lo + hi))
        x = np.clip(x, np.minimum(lo, hi), np.maximum(lo, hi))
        fx = func(x)
        above = fx > 0.0
        # Illinois step: when the same end is replaced twice running, halve the other end's value
        f_lo = np.where(above & (side == -1), 0.5 * f_lo, f_lo)
        f_hi = np.where(~above & (side == 1), 0.5 * f_hi, f_hi)
        hi, f_hi = np.where(above, x, hi), np.where(above, fx, f_hi)
        lo, f_lo = np.where(above, lo, x), np.where(above, f_lo, fx)
        side = np.where(above, -1, 1)
    return x


def _wet_bulb_c(air_temp_c, dew_point_c, pressure_hpa):
    ok = (
        np.isfinite(air_temp_c)
        & np.isfinite(dew_point_c)
        & np.isfinite(pressure_hpa)
        & (pressure_hpa > 0.0)
        & (dew_point_c <= air_temp_c + DEW_POINT_EXCESS_TOLERANCE_K)
    )
    air_temp_c = np.where(ok, air_temp_c, 10.0)
    pressure_hpa = np.where(ok, pressure_hpa, STANDARD_PRESSURE_HPA)
    dew_point_c = np.minimum(np.where(ok, dew_point_c, 0.0), air_temp_c)
    w = _humidity_ratio(_sat_water_hpa(dew_point_c), pressure_hpa)
    ok &= np.isfinite(w)
    w = np.where(ok, w, 0.0)
    lo, hi = dew_point_c, air_temp_c

    # Ice-bulb branch (eq. 35) on [Td, min(T, 0)).
    ice_hi = np.minimum(hi, -1e-12)
    with np.errstate(invalid="ignore"):
        ice_reaches = _psychrometric_w_ice(air_temp_c, ice_hi, pressure_hpa) >= w
    ice_root = _bisect(
        lambda tw: _psychrometric_w_ice(air_temp_c, tw, pressure_hpa) - w,
        np.minimum(lo, ice_hi),
        ice_hi,
    )
    # Water-bulb branch (eq. 33) on [max(Td, 0), T].
    water_lo = np.maximum(lo, 0.0)
    water_root = _bisect(
        lambda tw: _psychrometric_w_water(air_temp_c, tw, pressure_hpa) - w,
        np.minimum(water_lo, hi),
        hi,
    )
    has_ice = (lo < 0.0) & ice_reaches
    # Air at or below 0 degC that is supersaturated with respect to ice: eq. 35 has its root
    # above the air temperature; the bulb is capped at the air temperature (as psychrolib).
    saturated_over_ice = (hi <= 0.0) & ~ice_reaches
    wet_bulb_c = np.where(has_ice, ice_root, np.where(saturated_over_ice, hi, water_root))
    return np.where(ok, wet_bulb_c, np.nan)


# ---- the same wet-bulb solution for one point, on plain floats --------------------------------
# An evaluation asks for one wet bulb per sprinkler block every two minutes; numpy's per-call
# overhead made that ~1 ms. These mirror the array code above exactly (same equations, same
# Illinois iteration count), so scalar and array answers agree to rounding.


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


def _ratio_f(e_hpa: float, pressure_hpa: float) -> float:
    return MOLAR_MASS_RATIO_WATER_AIR * e_hpa / (pressure_hpa - e_hpa) if 0.0 <= e_hpa < pressure_hpa else math.nan


def _psy_w_f(t: float, tw: float, p: float, over_ice: bool) -> float:
    ws = _ratio_f(_sat_hpa_f(tw, over_ice), p)
    if over_ice:
        return ((2830.0 - 0.24 * tw) * ws - 1.006 * (t - tw)) / (2830.0 + 1.86 * t - 2.1 * tw)
    return ((2501.0 - 2.326 * tw) * ws - 1.006 * (t - tw)) / (2501.0 + 1.86 * t - 4.186 * tw)


def _illinois_f(func, lo: float, hi: float) -> float:
    f_lo, f_hi = func(lo), func(hi)
    side = 0
    x = 0.5 * (lo + hi)
    for _ in range(_BISECTION_ITERATIONS):
        denom = f_hi - f_lo
        x = hi - f_hi * (hi - lo) / denom if abs(denom) > 1e-300 else 0.5 * (lo + hi)
        x = min(max(x, min(lo, hi)), max(lo, hi))
        fx = func(x)
        if fx > 0.0:
            if side == -1:
                f_lo *= 0.5
            hi, f_hi, side = x, fx, -1
        else:
            if side == 1:
                f_hi *= 0.5
            lo, f_lo, side = x, fx, 1
    return x


def _wet_bulb_c_scalar(t: float, td: float, p: float) -> float:
    if not (math.isfinite(t) and math.isfinite(td) and math.isfinite(p) and p > 0.0
            and td <= t + DEW_POINT_EXCESS_TOLERANCE_K):
        return math.nan
    td = min(td, t)
    w = _ratio_f(_sat_hpa_f(td, False), p)
    if not math.isfinite(w):
        return math.nan
    ice_hi = min(t, -1e-12)
    ice_reaches = _psy_w_f(t, ice_hi, p, True) >= w
    if td < 0.0 and ice_reaches:
        return _illinois_f(lambda tw: _psy_w_f(t, tw, p, True) - w, min(td, ice_hi), ice_hi)
    if t <= 0.0 and not ice_reaches:
        return t
    return _illinois_f(lambda tw: _psy_w_f(t, tw, p, False) - w, min(max(td, 0.0), t), t)


def wet_bulb_c_from_dew_point(air_temp_c, dew_point_c, pressure_hpa=STANDARD_PRESSURE_HPA):
    """ASHRAE thermodynamic wet-bulb (ice-bulb below 0 degC) temperature from the dew point.

    Parameters
    ----------
    air_temp_c : float or array_like
        Air (dry-bulb) temperature [degC].
    dew_point_c : float or array_like
        Dew point over liquid water [degC].
    pressure_hpa : float or array_like, optional
        Station pressure [hPa], default 1013.25.

    Returns
    -------
    float or ndarray
        Wet-bulb temperature [degC], to better than 1e-6 K (Illinois false position): over a water bulb where
        it is >= 0 degC, over an ice bulb below. NaN where the dew point is more than 0.05 K
        above the air temperature or an input is not finite.

    Notes
    -----
    W = 0.621945 ew(Td) / (p - ew(Td)) is set equal to the psychrometric balance

    * Tw >= 0 (eq. 33):
      W = [(2501 - 2.326 Tw) Ws(Tw) - 1.006 (T - Tw)] / (2501 + 1.86 T - 4.186 Tw)
    * Tw < 0 (eq. 35):
      W = [(2830 - 0.24 Tw) Ws,ice(Tw) - 1.006 (T - Tw)] / (2830 + 1.86 T - 2.1 Tw)

    and solved for Tw in [Td, T]. The two equations do not join at 0 degC: for a narrow band
    of humidity both have a root, a few tenths of a kelvin apart; the lower, ice-bulb root is
    returned (the conservative one for sprinkler start). In air at or below 0 degC that is
    supersaturated with respect to ice, eq. 35's root lies above the air temperature; the
    result is capped at the air temperature, as in psychrolib (also conservative).
    Valid for -100 <= Td <= T <= 200 degC.

    References
    ----------
    ASHRAE Handbook-Fundamentals (2017), ch. 1, eqs. 33 and 35 (eq. 20 for W).
    Hyland, R. W. and Wexler, A. (1983), ASHRAE Transactions 89(2A): 500-519.
    """
    if all(isinstance(v, (int, float)) and not isinstance(v, bool) for v in (air_temp_c, dew_point_c, pressure_hpa)):
        return _wet_bulb_c_scalar(float(air_temp_c), float(dew_point_c), float(pressure_hpa))
    (t, td, p), scalar = _inputs(air_temp_c, dew_point_c, pressure_hpa)
    return _result(_wet_bulb_c(t, td, p), scalar)


def wet_bulb_c_from_rel_humidity(air_temp_c, rel_humidity_pct, pressure_hpa=STANDARD_PRESSURE_HPA):
    """ASHRAE wet-bulb (ice-bulb below 0 degC) temperature from relative humidity.

    Parameters
    ----------
    air_temp_c : float or array_like
        Air temperature [degC].
    rel_humidity_pct : float or array_like
        Relative humidity with respect to liquid water [%] (WMO convention), 0 < RH <= 100.
    pressure_hpa : float or array_like, optional
        Station pressure [hPa], default 1013.25.

    Returns
    -------
    float or ndarray
        Wet-bulb temperature [degC]; NaN where an input is out of range.

    Notes
    -----
    Td from :func:`dew_point_c_from_rel_humidity`, then :func:`wet_bulb_c_from_dew_point`.

    References
    ----------
    ASHRAE Handbook-Fundamentals (2017), ch. 1, eqs. 33 and 35; WMO-No. 8, Annex 4.B.
    """
    (t, rh, p), scalar = _inputs(air_temp_c, rel_humidity_pct, pressure_hpa)
    (td,), _ = _inputs(dew_point_c_from_rel_humidity(t, rh))
    return _result(_wet_bulb_c(t, td, p), scalar)


def air_temp_c_for_wet_bulb(wet_bulb_c, dew_point_c, pressure_hpa=STANDARD_PRESSURE_HPA):
    """Air temperature at which the ASHRAE wet (ice) bulb equals wet_bulb_c, given the dew point.

    This is the sprinkler start/stop air temperature for a critical bud temperature.

    Parameters
    ----------
    wet_bulb_c : float or array_like
        Target wet-bulb (ice-bulb below 0 degC) temperature [degC], e.g. the critical
        temperature of the buds.
    dew_point_c : float or array_like
        Dew point over liquid water [degC].
    pressure_hpa : float or array_like, optional
        Station pressure [hPa], default 1013.25.

    Returns
    -------
    float or ndarray
        Air temperature [degC]; NaN where the dew point is above wet_bulb_c (a wet bulb is
        never below the dew point) or an input is not finite.

    Notes
    -----
    Given Tw, ASHRAE eqs. 33 and 35 are linear-fractional in T, so the inverse is exact:

    * Tw >= 0: T = [(2501 - 2.326 Tw) Ws + 1.006 Tw - W (2501 - 4.186 Tw)] / (1.006 + 1.86 W)
    * Tw < 0:  T = [(2830 - 0.24 Tw) Ws,ice + 1.006 Tw - W (2830 - 2.1 Tw)] / (1.006 + 1.86 W)

    with W from the dew point. Where this falls below Tw (air supersaturated with respect to
    ice, Tw at or above the frost point) the answer is Tw itself, matching the capping in
    :func:`wet_bulb_c_from_dew_point`. Within about 0.3 K of Tw = 0 the forward function may
    pick the other branch (see its Notes), so the round trip holds only away from 0 degC.

    References
    ----------
    ASHRAE Handbook-Fundamentals (2017), ch. 1, eqs. 33 and 35.
    FAO (2005), Frost Protection: fundamentals, practice and economics, vol. 1, Table 7.5
    (the start/stop method).
    """
    (tw, td, p), scalar = _inputs(wet_bulb_c, dew_point_c, pressure_hpa)
    ok = np.isfinite(tw) & np.isfinite(td) & np.isfinite(p) & (p > 0.0) & (td <= tw)
    w = _humidity_ratio(_sat_water_hpa(td), p)
    ice = tw < 0.0
    ws = np.where(
        ice,
        _humidity_ratio(_sat_ice_hpa(tw), p),
        _humidity_ratio(_sat_water_hpa(tw), p),
    )
    k_latent = np.where(ice, 2830.0 - 0.24 * tw, 2501.0 - 2.326 * tw)
    k_denominator = np.where(ice, 2830.0 - 2.1 * tw, 2501.0 - 4.186 * tw)
    with np.errstate(invalid="ignore"):
        air_temp_c = (k_latent * ws + 1.006 * tw - w * k_denominator) / (1.006 + 1.86 * w)
        air_temp_c = np.maximum(air_temp_c, tw)
    ok &= np.isfinite(air_temp_c)
    return _result(np.where(ok, air_temp_c, np.nan), scalar)


def pressure_hpa_from_elevation(elevation_m):
    """Standard-atmosphere station pressure from elevation, FAO-56 eq. 7.

    Parameters
    ----------
    elevation_m : float or array_like
        Elevation above mean sea level [m].

    Returns
    -------
    float or ndarray
        Atmospheric pressure [hPa]; NaN outside -500..11000 m.

    Notes
    -----
    P = 101.3 ((293 - 0.0065 z) / 293)^5.26 kPa: a standard atmosphere at 20 degC with a
    lapse rate of 6.5 K km-1, so it holds up to the tropopause. Weather changes the real
    pressure by a few percent; use a measured pressure where there is one.

    References
    ----------
    Allen, R. G., Pereira, L. S., Raes, D. and Smith, M. (1998), FAO Irrigation and Drainage
    Paper 56, ch. 3, eq. 7.
    """
    (z,), scalar = _inputs(elevation_m)
    ok = (z >= ELEVATION_MIN_M) & (z <= ELEVATION_MAX_M)
    z = np.where(ok, z, 0.0)
    p_hpa = 10.0 * 101.3 * ((293.0 - 0.0065 * z) / 293.0) ** 5.26
    return _result(np.where(ok, p_hpa, np.nan), scalar)
