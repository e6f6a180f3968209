"""Clear-sky atmospheric emissivity: the published models, by name, and their valid range.

Pure, vectorised numpy: floats in give floats out, arrays in give arrays out. Temperatures in
degC at the interface (kelvin only inside a formula), vapour pressure in hPa. Inputs outside a
formula's documented range give NaN; nothing is extrapolated silently. The range checks here
are shared by `frostwatch.physics.cloud_cover` and `frostwatch.physics.longwave`.
"""

from __future__ import annotations

from collections.abc import Callable

import numpy as np

from frostwatch.constants import (
    STEFAN_BOLTZMANN_W_M2_K4,
    ZERO_CELSIUS_K,
)
from frostwatch.physics import saturation
from frostwatch.physics._broadcast import _out

# Range over which the clear-sky formulas are applied (degC, hPa). The published fits
# were made on screen-level data well inside it (Flerchinger et al. 2009, Table 1 sites).
AIR_TEMP_MIN_C = -45.0  # [degC] lower limit accepted here (engineering choice)
AIR_TEMP_MAX_C = 45.0  # [degC] upper limit accepted here (engineering choice)
VAPOUR_PRESSURE_MAX_HPA = 100.0  # [hPa] above saturation at 45 degC (95.8 hPa): a units error
# Vapour pressure above this multiple of saturation (over water) at the air temperature is
# a sensor or units error (RH > 105 %); saturation over water from Hyland & Wexler 1983
# (ASHRAE ch. 1, `frostwatch.physics.saturation`).
SUPERSATURATION_MAX_FRAC = 1.05  # [-] engineering tolerance for hygrometer error


def _air_ok(air_temp_c):
    t = np.asarray(air_temp_c, dtype=float)
    return np.isfinite(t) & (t >= AIR_TEMP_MIN_C) & (t <= AIR_TEMP_MAX_C)


def _vapour_ok(vapour_pressure_hpa, air_temp_c):
    """e > 0 and not above saturation (with hygrometer tolerance) at the air temperature."""
    e = np.asarray(vapour_pressure_hpa, dtype=float)
    t = np.asarray(air_temp_c, dtype=float)
    with np.errstate(all="ignore"):
        es_hpa = saturation.saturation_vapour_pressure_water_hpa(t)
    return (
        np.isfinite(e) & (e > 0.0) & (e <= VAPOUR_PRESSURE_MAX_HPA) & (e <= SUPERSATURATION_MAX_FRAC * es_hpa)
    )


def _frac_ok(frac):
    c = np.asarray(frac, dtype=float)
    return np.isfinite(c) & (c >= 0.0) & (c <= 1.0)


def _masked(value, ok):
    """NaN wherever ``ok`` is False (the formula's range), ``value`` elsewhere."""
    with np.errstate(all="ignore"):
        return _out(np.where(ok, value, np.nan))


# ------------------------------------------------------------------------------------------
# Clear-sky emissivity
# ------------------------------------------------------------------------------------------


def sky_emissivity_brutsaert_1975(air_temp_c, vapour_pressure_hpa):
    """Clear-sky atmospheric emissivity after Brutsaert (1975).

    Parameters
    ----------
    air_temp_c : float or array_like
        Screen-level air temperature [degC].
    vapour_pressure_hpa : float or array_like
        Screen-level actual vapour pressure [hPa].

    Returns
    -------
    float or ndarray
        Clear-sky emissivity [-], NaN outside the valid range.

    Notes
    -----
    ``eps = 1.24 (e / Ta)^(1/7)`` with e in hPa and Ta in K (equivalently
    ``1.723 (e[kPa] / Ta)^(1/7)``). Derived for a standard-atmosphere profile;
    applied here for -45..45 degC and e above 0 and at most 105 % of saturation
    over water at Ta (a higher value is a sensor or units error). frostwatch's default
    model: among the lowest (most cooling) of the common formulas.

    References
    ----------
    Brutsaert, W. (1975). On a derivable formula for long-wave radiation from
    clear skies. Water Resources Research 11(5): 742-744 (pages from memory).
    Flerchinger, G.N. et al. (2009). Water Resources Research 45, W03423, Table 1.
    """
    ta_k = np.asarray(air_temp_c, dtype=float) + ZERO_CELSIUS_K
    e = np.asarray(vapour_pressure_hpa, dtype=float)
    with np.errstate(all="ignore"):
        eps = 1.24 * (e / ta_k) ** (1.0 / 7.0)
    return _masked(eps, _air_ok(air_temp_c) & _vapour_ok(e, air_temp_c))


def sky_emissivity_brunt_1932(air_temp_c, vapour_pressure_hpa):
    """Clear-sky atmospheric emissivity after Brunt (1932).

    Parameters
    ----------
    air_temp_c : float or array_like
        Screen-level air temperature [degC]; only checked for range.
    vapour_pressure_hpa : float or array_like
        Screen-level actual vapour pressure [hPa].

    Returns
    -------
    float or ndarray
        Clear-sky emissivity [-], NaN outside the valid range.

    Notes
    -----
    ``eps = 0.52 + 0.065 sqrt(e)``, e in hPa (= 0.52 + 0.205 sqrt(e[kPa])).
    Brunt's coefficients vary from site to site (a about 0.44-0.61, b about
    0.05-0.08; from memory); these are the tabulated ones. Range as for
    Brutsaert (1975).

    References
    ----------
    Brunt, D. (1932). Notes on radiation in the atmosphere. Quarterly Journal of
    the Royal Meteorological Society 58: 389-420.
    Flerchinger, G.N. et al. (2009). Water Resources Research 45, W03423, Table 1.
    """
    e = np.asarray(vapour_pressure_hpa, dtype=float)
    with np.errstate(all="ignore"):
        eps = 0.52 + 0.065 * np.sqrt(e)
    return _masked(
        eps + 0.0 * np.asarray(air_temp_c, dtype=float), _air_ok(air_temp_c) & _vapour_ok(e, air_temp_c)
    )


def sky_emissivity_swinbank_1963(air_temp_c):
    """Clear-sky atmospheric emissivity after Swinbank (1963), temperature only.

    Parameters
    ----------
    air_temp_c : float or array_like
        Screen-level air temperature [degC].

    Returns
    -------
    float or ndarray
        Clear-sky emissivity [-], NaN outside -45..45 degC.

    Notes
    -----
    ``eps = 9.2e-6 Ta^2`` (Ta in K). Swinbank's flux form ``L = 5.31e-13 Ta^6``
    implies a coefficient 9.36e-6, about 1.8 % higher; the emissivity form is
    the one tabulated by Flerchinger et al. (2009) and used for the check values.
    No humidity term, so it cannot see a dry air mass.

    References
    ----------
    Swinbank, W.C. (1963). Long-wave radiation from clear skies. Quarterly
    Journal of the Royal Meteorological Society 89: 339-348.
    Flerchinger, G.N. et al. (2009). Water Resources Research 45, W03423, Table 1.
    """
    ta_k = np.asarray(air_temp_c, dtype=float) + ZERO_CELSIUS_K
    return _masked(9.2e-6 * ta_k**2, _air_ok(air_temp_c))


def sky_emissivity_idso_1981(air_temp_c, vapour_pressure_hpa):
    """Clear-sky atmospheric emissivity after Idso (1981).

    Parameters
    ----------
    air_temp_c : float or array_like
        Screen-level air temperature [degC].
    vapour_pressure_hpa : float or array_like
        Screen-level actual vapour pressure [hPa].

    Returns
    -------
    float or ndarray
        Clear-sky emissivity [-], NaN outside the valid range.

    Notes
    -----
    ``eps = 0.70 + 5.95e-5 e exp(1500 / Ta)``, e in hPa, Ta in K. Among the
    highest (least cooling) of the common formulas.

    References
    ----------
    Idso, S.B. (1981). A set of equations for full spectrum and 8- to 14-um and
    10.5- to 12.5-um thermal radiation from cloudless skies. Water Resources
    Research 17(2): 295-304.
    Flerchinger, G.N. et al. (2009). Water Resources Research 45, W03423, Table 1.
    """
    ta_k = np.asarray(air_temp_c, dtype=float) + ZERO_CELSIUS_K
    e = np.asarray(vapour_pressure_hpa, dtype=float)
    with np.errstate(all="ignore"):
        eps = 0.70 + 5.95e-5 * e * np.exp(1500.0 / ta_k)
    return _masked(eps, _air_ok(air_temp_c) & _vapour_ok(e, air_temp_c))


def _precipitable_water_prata_cm(air_temp_c, vapour_pressure_hpa):
    """Precipitable water ``w = 46.5 e / Ta`` [cm] (Prata 1996)."""
    ta_k = np.asarray(air_temp_c, dtype=float) + ZERO_CELSIUS_K
    return 46.5 * np.asarray(vapour_pressure_hpa, dtype=float) / ta_k


def sky_emissivity_prata_1996(air_temp_c, vapour_pressure_hpa):
    """Clear-sky atmospheric emissivity after Prata (1996).

    Parameters
    ----------
    air_temp_c : float or array_like
        Screen-level air temperature [degC].
    vapour_pressure_hpa : float or array_like
        Screen-level actual vapour pressure [hPa].

    Returns
    -------
    float or ndarray
        Clear-sky emissivity [-], NaN outside the valid range.

    Notes
    -----
    ``eps = 1 - (1 + w) exp(-(1.2 + 3 w)^0.5)`` with the precipitable water
    ``w = 46.5 e / Ta`` [cm] (e in hPa, Ta in K). The exponent is 0.5; a
    published code that uses 5 is wrong (see the reference sheet, section 2.2).

    References
    ----------
    Prata, A.J. (1996). A new long-wave formula for estimating downward
    clear-sky radiation at the surface. Quarterly Journal of the Royal
    Meteorological Society 122: 1127-1151 (pages from memory).
    """
    w_cm = _precipitable_water_prata_cm(air_temp_c, vapour_pressure_hpa)
    with np.errstate(all="ignore"):
        eps = 1.0 - (1.0 + w_cm) * np.exp(-np.sqrt(1.2 + 3.0 * w_cm))
    return _masked(eps, _air_ok(air_temp_c) & _vapour_ok(vapour_pressure_hpa, air_temp_c))


def sky_emissivity_dilley_obrien_1998(air_temp_c, vapour_pressure_hpa):
    """Clear-sky emissivity implied by the Dilley & O'Brien (1998) flux formula.

    Parameters
    ----------
    air_temp_c : float or array_like
        Screen-level air temperature [degC].
    vapour_pressure_hpa : float or array_like
        Screen-level actual vapour pressure [hPa].

    Returns
    -------
    float or ndarray
        Clear-sky emissivity [-], NaN outside the valid range.

    Notes
    -----
    ``L = 59.38 + 113.7 (Ta / 273.16)^6 + 96.96 sqrt(w / 2.5)`` [W m-2], with
    the precipitable water w [cm] taken from Prata's ``46.5 e / Ta``; the
    emissivity is ``L / (sigma Ta^4)``.

    References
    ----------
    Dilley, A.C. & O'Brien, D.M. (1998). Estimating downward clear sky
    long-wave irradiance at the surface from screen temperature and
    precipitable water. Quarterly Journal of the Royal Meteorological Society
    124: 1391-1401.
    Flerchinger, G.N. et al. (2009). Water Resources Research 45, W03423, Table 1.
    """
    ta_k = np.asarray(air_temp_c, dtype=float) + ZERO_CELSIUS_K
    w_cm = _precipitable_water_prata_cm(air_temp_c, vapour_pressure_hpa)
    with np.errstate(all="ignore"):
        down_w_m2 = 59.38 + 113.7 * (ta_k / 273.16) ** 6 + 96.96 * np.sqrt(w_cm / 2.5)
        eps = down_w_m2 / (STEFAN_BOLTZMANN_W_M2_K4 * ta_k**4)
    return _masked(eps, _air_ok(air_temp_c) & _vapour_ok(vapour_pressure_hpa, air_temp_c))


CLEAR_SKY_EMISSIVITY_MODELS: dict[str, Callable] = {
    "brutsaert_1975": sky_emissivity_brutsaert_1975,
    "brunt_1932": sky_emissivity_brunt_1932,
    "idso_1981": sky_emissivity_idso_1981,
    "prata_1996": sky_emissivity_prata_1996,
    "swinbank_1963": lambda air_temp_c, vapour_pressure_hpa: sky_emissivity_swinbank_1963(air_temp_c),
    "dilley_obrien_1998": sky_emissivity_dilley_obrien_1998,
}
"""Clear-sky emissivity models by name; each takes (air_temp_c, vapour_pressure_hpa)."""


def _lookup(models: dict, model: str, what: str):
    try:
        return models[model]
    except KeyError:
        known = ", ".join(sorted(models))
        raise ValueError(f"unknown {what} model {model!r}; expected one of: {known}") from None


def clear_sky_emissivity(air_temp_c, vapour_pressure_hpa, model="brutsaert_1975"):
    """Clear-sky atmospheric emissivity by model name.

    Parameters
    ----------
    air_temp_c : float or array_like
        Screen-level air temperature [degC].
    vapour_pressure_hpa : float or array_like
        Screen-level actual vapour pressure [hPa] (ignored by ``swinbank_1963``).
    model : str
        A key of ``CLEAR_SKY_EMISSIVITY_MODELS``; default ``"brutsaert_1975"``.

    Returns
    -------
    float or ndarray
        Clear-sky emissivity [-], NaN outside the model's range.

    Raises
    ------
    ValueError
        If ``model`` is not a known name.

    Notes
    -----
    The formulas differ by about +-20 W m-2 in L-down (reference sheet, 2.2).

    References
    ----------
    Flerchinger, G.N. et al. (2009). Comparison of algorithms for incoming
    atmospheric long-wave radiation. Water Resources Research 45, W03423.
    """
    return _lookup(CLEAR_SKY_EMISSIVITY_MODELS, model, "clear-sky emissivity")(
        air_temp_c, vapour_pressure_hpa
    )

