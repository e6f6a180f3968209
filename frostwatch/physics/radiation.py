"""Night-time longwave radiation: sky emissivity, cloud corrections, net longwave.

Pure, vectorised numpy: floats in give floats out, arrays in give arrays out.
Temperatures in degC at the interface (kelvin only inside a formula), vapour
pressure in hPa, fluxes in W m-2. Inputs outside a formula's documented range
give NaN; nothing is extrapolated silently.

Sign convention: longwave fluxes are magnitudes; ``net_longwave_w_m2`` is
positive toward the surface, so a clear night gives a negative value. The FAO-56
function keeps the FAO sign (the loss as a positive number).
"""

from __future__ import annotations

from collections.abc import Callable

import numpy as np

STEFAN_BOLTZMANN_W_M2_K4 = 5.670374419e-8  # [W m-2 K-4] CODATA 2018, exact since the 2019 SI
FAO56_SIGMA_MJ_M2_H_K4 = 2.043e-10  # [MJ m-2 h-1 K-4] Allen et al. 1998 (FAO-56), hourly; FAO-56 only
ZERO_CELSIUS_K = 273.15  # [K] definition of the Celsius scale
SURFACE_EMISSIVITY_DEFAULT_FRAC = 0.98  # [-] leaves, soil, ice 0.95-0.99 (from memory, common default)
SECONDS_PER_HOUR_S = 3600.0  # [s]

# Range over which the clear-sky formulas are applied (degC, hPa). The published fits
# were made on screen-level data well inside it (Flerchinger et al. 2009, Table 1 sites).
AIR_TEMP_MIN_C = -45.0  # [degC] lower limit accepted here (engineering choice)
AIR_TEMP_MAX_C = 45.0  # [degC] upper limit accepted here (engineering choice)
VAPOUR_PRESSURE_MAX_HPA = 100.0  # [hPa] above saturation at 45 degC (95.8 hPa): a units error
# Vapour pressure above this multiple of saturation (over water) at the air temperature is
# a sensor or units error (RH > 105 %); saturation from Magnus, WMO-No. 8 Annex 4.B.
SUPERSATURATION_MAX_FRAC = 1.05  # [-] engineering tolerance for hygrometer error
FAO56_RS_RSO_MIN_FRAC = 0.35 / 1.35  # [-] below this the FAO-56 cloud factor 1.35 r - 0.35 < 0


def _out(x):
    """Return a Python float for 0-d results, the array otherwise."""
    x = np.asarray(x, dtype=float)
    return float(x) if x.ndim == 0 else x


def _air_ok(air_temp_c):
    t = np.asarray(air_temp_c, dtype=float)
    return np.isfinite(t) & (t >= AIR_TEMP_MIN_C) & (t <= AIR_TEMP_MAX_C)


def _vapour_ok(vapour_pressure_hpa, air_temp_c):
    """e > 0 and not above saturation (with hygrometer tolerance) at the air temperature."""
    e = np.asarray(vapour_pressure_hpa, dtype=float)
    t = np.asarray(air_temp_c, dtype=float)
    with np.errstate(all="ignore"):
        es_hpa = 6.112 * np.exp(17.62 * t / (243.12 + t))  # Magnus over water, WMO-No. 8 Annex 4.B
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


# ------------------------------------------------------------------------------------------
# Cloud corrections
# ------------------------------------------------------------------------------------------


def all_sky_emissivity_jacobs_1978(clear_emissivity, cloud_frac):
    """All-sky emissivity after Jacobs (1978): ``eps_c (1 + 0.26 c)``.

    Parameters
    ----------
    clear_emissivity : float or array_like
        Clear-sky emissivity [-], 0..1.
    cloud_frac : float or array_like
        Cloud fraction [-], 0..1.

    Returns
    -------
    float or ndarray
        All-sky emissivity [-] (not capped; the dispatcher caps at 1), NaN
        outside the valid range.

    Notes
    -----
    Fitted on Baffin Island observations; Brutsaert (1982) gives the same form
    with 0.22.

    References
    ----------
    Jacobs, J.D. (1978). Radiation climate of Broughton Island. In: Energy
    budget studies in relation to fast-ice breakup processes in Davis Strait,
    Occasional Paper 26, INSTAAR, Univ. of Colorado, 105-120 (citation from memory).
    Flerchinger, G.N. et al. (2009). Water Resources Research 45, W03423, Table 2.
    """
    eps = np.asarray(clear_emissivity, dtype=float)
    c = np.asarray(cloud_frac, dtype=float)
    return _masked(eps * (1.0 + 0.26 * c), _frac_ok(eps) & _frac_ok(c))


def all_sky_emissivity_konzelmann_1994(clear_emissivity, cloud_frac):
    """All-sky emissivity after Konzelmann et al. (1994): ``eps_c (1 - c^4) + 0.952 c^4``.

    Parameters
    ----------
    clear_emissivity : float or array_like
        Clear-sky emissivity [-], 0..1.
    cloud_frac : float or array_like
        Cloud fraction [-], 0..1.

    Returns
    -------
    float or ndarray
        All-sky emissivity [-], NaN outside the valid range.

    Notes
    -----
    Little effect from scattered cloud (c^4); an overcast sky tends to 0.952.

    References
    ----------
    Konzelmann, T. et al. (1994). Parameterization of global and longwave
    incoming radiation for the Greenland Ice Sheet. Global and Planetary
    Change 9: 143-164.
    Flerchinger, G.N. et al. (2009). Water Resources Research 45, W03423, Table 2.
    """
    eps = np.asarray(clear_emissivity, dtype=float)
    c4 = np.asarray(cloud_frac, dtype=float) ** 4
    return _masked(eps * (1.0 - c4) + 0.952 * c4, _frac_ok(eps) & _frac_ok(cloud_frac))


def all_sky_emissivity_unsworth_monteith_1975(clear_emissivity, cloud_frac):
    """All-sky emissivity after Unsworth & Monteith (1975): ``(1 - 0.84 c) eps_c + 0.84 c``.

    Parameters
    ----------
    clear_emissivity : float or array_like
        Clear-sky emissivity [-], 0..1.
    cloud_frac : float or array_like
        Cloud fraction [-], 0..1.

    Returns
    -------
    float or ndarray
        All-sky emissivity [-], NaN outside the valid range.

    References
    ----------
    Unsworth, M.H. & Monteith, J.L. (1975). Long-wave radiation at the ground.
    Quarterly Journal of the Royal Meteorological Society 101: 13-24.
    Flerchinger, G.N. et al. (2009). Water Resources Research 45, W03423, Table 2.
    """
    eps = np.asarray(clear_emissivity, dtype=float)
    c = np.asarray(cloud_frac, dtype=float)
    return _masked((1.0 - 0.84 * c) * eps + 0.84 * c, _frac_ok(eps) & _frac_ok(c))


ALL_SKY_EMISSIVITY_MODELS: dict[str, Callable] = {
    "jacobs_1978": all_sky_emissivity_jacobs_1978,
    "konzelmann_1994": all_sky_emissivity_konzelmann_1994,
    "unsworth_monteith_1975": all_sky_emissivity_unsworth_monteith_1975,
}
"""Cloud corrections by name; each takes (clear_emissivity, cloud_frac)."""


def all_sky_emissivity(clear_emissivity, cloud_frac, model="jacobs_1978"):
    """All-sky emissivity by cloud-correction name, capped at 1.

    Parameters
    ----------
    clear_emissivity : float or array_like
        Clear-sky emissivity [-], 0..1.
    cloud_frac : float or array_like
        Cloud fraction [-], 0..1.
    model : str
        A key of ``ALL_SKY_EMISSIVITY_MODELS``; default ``"jacobs_1978"``.

    Returns
    -------
    float or ndarray
        All-sky emissivity [-], at most 1, NaN outside the valid range.

    Raises
    ------
    ValueError
        If ``model`` is not a known name.

    Notes
    -----
    A sky cannot emit more than a blackbody at screen temperature in this
    single-layer view, hence the cap ``min(eps, 1)`` (a humid sky with Jacobs'
    factor can exceed 1 otherwise).

    References
    ----------
    Flerchinger, G.N. et al. (2009). Water Resources Research 45, W03423, Table 2.
    """
    eps = _lookup(ALL_SKY_EMISSIVITY_MODELS, model, "cloud correction")(clear_emissivity, cloud_frac)
    return _out(np.minimum(eps, 1.0))


def cloud_frac_from_sky_temperature(
    sky_temp_c,
    air_temp_c,
    vapour_pressure_hpa,
    model="brutsaert_1975",
    cloud_emissivity_frac=1.0,
):
    """Effective cloud fraction from an infrared sky-thermometer reading.

    Parameters
    ----------
    sky_temp_c : float or array_like
        Effective sky brightness temperature from an upward-looking infrared
        sensor [degC].
    air_temp_c : float or array_like
        Screen-level air temperature [degC].
    vapour_pressure_hpa : float or array_like
        Screen-level actual vapour pressure [hPa].
    model : str
        Clear-sky emissivity model name; default ``"brutsaert_1975"``.
    cloud_emissivity_frac : float
        Emissivity of the cloud base [-]; default 1 (low water cloud is close
        to a blackbody).

    Returns
    -------
    float or ndarray
        Cloud fraction [-], clipped to 0..1, NaN for invalid input.

    Notes
    -----
    The sky is taken to emit ``sigma T_sky^4``, so the apparent emissivity is
    ``eps_a = (T_sky / Ta)^4`` (kelvin). The sky is then a mixture of clear
    sky and cloud base at screen temperature:
    ``eps_a = (1 - c) eps_clear + c eps_cloud``, hence
    ``c = (eps_a - eps_clear) / (eps_cloud - eps_clear)``, clipped to 0..1.
    Assumptions: the cloud base is near screen temperature (low cloud;
    high cold cloud reads as a smaller fraction), and the sensor reports a
    broadband-equivalent temperature. Window-band (8-14 um) sensors read
    colder than broadband on clear nights, so clear skies clip to 0, which is
    the cautious side for frost. The fraction is radiatively effective, not an
    observer's okta count; the linear mixing is the form of Unsworth &
    Monteith (1975) with their 0.84 replaced by the cloud emissivity.

    References
    ----------
    Unsworth, M.H. & Monteith, J.L. (1975). Quarterly Journal of the Royal
    Meteorological Society 101: 13-24.
    """
    ta_k = np.asarray(air_temp_c, dtype=float) + ZERO_CELSIUS_K
    sky_k = np.asarray(sky_temp_c, dtype=float) + ZERO_CELSIUS_K
    eps_cloud = np.asarray(cloud_emissivity_frac, dtype=float)
    eps_clear = np.asarray(clear_sky_emissivity(air_temp_c, vapour_pressure_hpa, model), dtype=float)
    with np.errstate(all="ignore"):
        eps_apparent = (sky_k / ta_k) ** 4
        frac = np.clip((eps_apparent - eps_clear) / (eps_cloud - eps_clear), 0.0, 1.0)
    ok = np.isfinite(sky_k) & (sky_k > 0.0) & np.isfinite(eps_clear) & (eps_cloud > eps_clear)
    ok &= eps_cloud <= 1.0
    return _masked(frac, ok)


# ------------------------------------------------------------------------------------------
# Fluxes
# ------------------------------------------------------------------------------------------


def downwelling_longwave_w_m2(air_temp_c, emissivity):
    """Downwelling longwave irradiance ``L_down = eps sigma Ta^4``.

    Parameters
    ----------
    air_temp_c : float or array_like
        Screen-level air temperature [degC].
    emissivity : float or array_like
        Sky emissivity [-], 0..1 (clear or all-sky).

    Returns
    -------
    float or ndarray
        L-down [W m-2], NaN outside the valid range.

    Notes
    -----
    Stefan-Boltzmann law with the effective emissivity of the atmosphere
    referred to screen temperature; a blackbody at 0 degC gives 315.7 W m-2.

    References
    ----------
    Brutsaert, W. (1982). Evaporation into the Atmosphere. Reidel, ch. 6.
    """
    ta_k = np.asarray(air_temp_c, dtype=float) + ZERO_CELSIUS_K
    eps = np.asarray(emissivity, dtype=float)
    return _masked(eps * STEFAN_BOLTZMANN_W_M2_K4 * ta_k**4, _air_ok(air_temp_c) & _frac_ok(eps))


def upwelling_longwave_w_m2(
    surface_temp_c, surface_emissivity=SURFACE_EMISSIVITY_DEFAULT_FRAC, downwelling_w_m2=0.0
):
    """Upwelling longwave from a grey surface: emitted plus reflected.

    Parameters
    ----------
    surface_temp_c : float or array_like
        Radiating surface (canopy, soil, ice) temperature [degC].
    surface_emissivity : float or array_like
        Surface emissivity [-], 0..1; default 0.98.
    downwelling_w_m2 : float or array_like
        L-down to be partly reflected [W m-2]; default 0 (emitted part only).

    Returns
    -------
    float or ndarray
        L-up [W m-2], NaN outside the valid range.

    Notes
    -----
    ``L_up = eps_s sigma Ts^4 + (1 - eps_s) L_down`` (Kirchhoff's law for a grey
    surface). Surface temperatures accepted over -45..45 degC.

    References
    ----------
    Oke, T.R. (1987). Boundary Layer Climates, 2nd ed., Routledge, ch. 1.
    """
    ts_k = np.asarray(surface_temp_c, dtype=float) + ZERO_CELSIUS_K
    eps = np.asarray(surface_emissivity, dtype=float)
    down = np.asarray(downwelling_w_m2, dtype=float)
    up = eps * STEFAN_BOLTZMANN_W_M2_K4 * ts_k**4 + (1.0 - eps) * down
    ok = _air_ok(surface_temp_c) & _frac_ok(eps) & np.isfinite(down) & (down >= 0.0)
    return _masked(up, ok)


def net_longwave_w_m2(
    air_temp_c,
    vapour_pressure_hpa,
    cloud_frac=0.0,
    surface_temp_c=None,
    surface_emissivity=SURFACE_EMISSIVITY_DEFAULT_FRAC,
    model="brutsaert_1975",
    cloud_model="jacobs_1978",
):
    """Net longwave at the surface, positive toward the surface (negative on clear nights).

    Parameters
    ----------
    air_temp_c : float or array_like
        Screen-level air temperature [degC].
    vapour_pressure_hpa : float or array_like
        Screen-level actual vapour pressure [hPa].
    cloud_frac : float or array_like
        Cloud fraction [-], 0..1; default 0 (clear).
    surface_temp_c : float or array_like, optional
        Radiating surface temperature [degC]; default the air temperature.
    surface_emissivity : float or array_like
        Surface emissivity [-]; default 0.98.
    model : str
        Clear-sky emissivity model; default ``"brutsaert_1975"``.
    cloud_model : str
        Cloud correction; default ``"jacobs_1978"``.

    Returns
    -------
    float or ndarray
        Net longwave [W m-2], NaN outside the valid range.

    Notes
    -----
    ``Ln = L_down - L_up = eps_s (eps_a sigma Ta^4 - sigma Ts^4)``, with eps_a the
    all-sky emissivity (capped at 1) and the reflected part ``(1 - eps_s) L_down``
    included in L-up. Clear, calm frost nights give about -50 to -110 W m-2
    (reference sheet 2.5: -89 W m-2 at Ta/Td = 0/-5 degC, surface 2 K below air).

    References
    ----------
    Brutsaert, W. (1975). Water Resources Research 11(5): 742-744.
    Oke, T.R. (1987). Boundary Layer Climates, 2nd ed., ch. 1.
    """
    if surface_temp_c is None:
        surface_temp_c = air_temp_c
    eps_clear = clear_sky_emissivity(air_temp_c, vapour_pressure_hpa, model)
    eps_all = all_sky_emissivity(eps_clear, cloud_frac, cloud_model)
    down = downwelling_longwave_w_m2(air_temp_c, eps_all)
    up = upwelling_longwave_w_m2(surface_temp_c, surface_emissivity, down)
    return _out(np.asarray(down, dtype=float) - np.asarray(up, dtype=float))


def net_longwave_fao56_hourly_w_m2(air_temp_c, vapour_pressure_kpa, rs_rso_ratio):
    """FAO-56 hourly net outgoing longwave (eq. 39, hourly form), as a positive loss.

    Parameters
    ----------
    air_temp_c : float or array_like
        Mean hourly air temperature [degC].
    vapour_pressure_kpa : float or array_like
        Actual vapour pressure [kPa] (note: kPa, as in FAO-56).
    rs_rso_ratio : float or array_like
        Relative shortwave radiation Rs/Rso [-]; at night, the value 2-3 h
        before sunset. Values above 1 are limited to 1 (FAO-56).

    Returns
    -------
    float or ndarray
        Net outgoing longwave Rnl [W m-2], positive for a loss (FAO sign), NaN
        outside the valid range.

    Notes
    -----
    ``Rnl = sigma_h Thr^4 (0.34 - 0.14 sqrt(ea)) (1.35 Rs/Rso - 0.35)`` in
    MJ m-2 h-1 with ``sigma_h = 2.043e-10`` MJ m-2 h-1 K-4, converted with
    1e6 / 3600. Rs/Rso below 0.35/1.35 (where the cloud factor turns negative)
    gives NaN. Check: 0 degC, ea 0.422 kPa, Rs/Rso 1 gives 78.7 W m-2.

    References
    ----------
    Allen, R.G., Pereira, L.S., Raes, D. & Smith, M. (1998). Crop
    evapotranspiration. FAO Irrigation and Drainage Paper 56, eq. 39 and the
    hourly procedure of chapter 3.
    """
    t_k = np.asarray(air_temp_c, dtype=float) + ZERO_CELSIUS_K
    ea = np.asarray(vapour_pressure_kpa, dtype=float)
    ratio = np.asarray(rs_rso_ratio, dtype=float)
    ok = _air_ok(air_temp_c) & _vapour_ok(ea * 10.0, air_temp_c)
    ok &= np.isfinite(ratio) & (ratio >= FAO56_RS_RSO_MIN_FRAC)
    ratio = np.minimum(ratio, 1.0)
    with np.errstate(all="ignore"):
        rnl_mj_m2_h = FAO56_SIGMA_MJ_M2_H_K4 * t_k**4 * (0.34 - 0.14 * np.sqrt(ea)) * (1.35 * ratio - 0.35)
    return _masked(rnl_mj_m2_h * 1.0e6 / SECONDS_PER_HOUR_S, ok)
