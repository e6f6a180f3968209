"""Wet-bulb (ice-bulb below 0 degC) temperature and its inverse, ASHRAE psychrometrics.

Pure numpy, floats or arrays in, floats or arrays out; NaN outside a formula's range. The wet
bulb is ASHRAE's thermodynamic one: over a water bulb at Tw >= 0 degC, over an ice bulb below
0 degC (the quantity that matters for sprinkler start and stop). The humidity ratio lives here
too: it is what the psychrometric balance is written in.
"""

from __future__ import annotations

import functools
import math

import numpy as np

from frostwatch.constants import MOLAR_MASS_RATIO_WATER_AIR, STANDARD_PRESSURE_HPA
from frostwatch.physics._broadcast import _inputs, _result
from frostwatch.physics.dew_frost_point import DEW_POINT_EXCESS_TOLERANCE_K, dew_point_c_from_rel_humidity
from frostwatch.physics.saturation import _sat_hpa_f, _sat_ice_hpa, _sat_water_hpa

_BISECTION_ITERATIONS = 16  # fixed count (same answer scalar or array); Illinois reaches 1e-9 K in ~10


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


@functools.lru_cache(maxsize=256)
def _target_side(wet_bulb_c: float, pressure_hpa: float) -> tuple[float, float, float, bool]:
    """(Ws, the latent and denominator coefficients, valid) of `air_temp_c_for_wet_bulb` for one
    target wet bulb at one pressure: the same elementwise expressions, on a one-element array."""
    tw, p = np.array([wet_bulb_c]), np.array([pressure_hpa])
    ice = tw < 0.0
    ws = np.where(ice, _humidity_ratio(_sat_ice_hpa(tw), p), _humidity_ratio(_sat_water_hpa(tw), p))
    k_latent = np.where(ice, 2830.0 - 0.24 * tw, 2501.0 - 2.326 * tw)
    k_denominator = np.where(ice, 2830.0 - 2.1 * tw, 2501.0 - 4.186 * tw)
    ok = np.isfinite(tw) & np.isfinite(p) & (p > 0.0)
    return float(ws[0]), float(k_latent[0]), float(k_denominator[0]), bool(ok[0])


def air_temp_c_for_wet_bulb_rows(wet_bulb_c, dew_point_c: np.ndarray, pressure_hpa: float) -> np.ndarray:
    """`air_temp_c_for_wet_bulb` with one target wet bulb per row of `dew_point_c`.

    Parameters
    ----------
    wet_bulb_c : sequence of float
        Target wet bulb of each row [degC] (a few thresholds).
    dew_point_c : ndarray, shape (rows, n)
        Dew point over liquid water [degC].
    pressure_hpa : float
        Station pressure [hPa].

    Returns
    -------
    ndarray, shape (rows, n)
        The values of ``air_temp_c_for_wet_bulb(wet_bulb_c[:, None], dew_point_c, pressure_hpa)``
        (ASHRAE Handbook-Fundamentals (2017), ch. 1, eqs. 33 and 35; see there): what depends
        on the target alone (its saturation humidity ratio and the two coefficients) is worked
        out once per target and pressure, by the same elementwise expressions.
    """
    td = np.array(dew_point_c, dtype=float)
    tw = np.array(wet_bulb_c, dtype=float).reshape(-1, 1)
    sides = [_target_side(float(x), float(pressure_hpa)) for x in tw[:, 0].tolist()]
    ws, k_latent, k_denominator = (np.array([s[k] for s in sides]).reshape(-1, 1) for k in range(3))
    ok = np.array([s[3] for s in sides]).reshape(-1, 1) & np.isfinite(td) & (td <= tw)
    w = _humidity_ratio(_sat_water_hpa(td), float(pressure_hpa))
    with np.errstate(invalid="ignore"):
        air_temp_c = (k_latent * ws + 1.006 * tw - w * k_denominator) / (1.006 + 1.86 * w)
        air_temp_c = np.maximum(air_temp_c, tw)
    ok &= np.isfinite(air_temp_c)
    return np.where(ok, air_temp_c, np.nan)
