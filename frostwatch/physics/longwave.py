"""Night-time longwave fluxes: downwelling, upwelling and net longwave at the surface.

Pure, vectorised numpy: temperatures in degC, vapour pressure in hPa (kPa in the FAO-56
function, as FAO writes it), fluxes in W m-2; NaN outside a formula's range.

Sign convention: longwave fluxes are magnitudes; ``net_longwave_w_m2`` is positive toward the
surface, so a clear night gives a negative value. The FAO-56 function keeps the FAO sign (the
loss as a positive number).
"""

from __future__ import annotations

import numpy as np

from frostwatch.constants import SECONDS_PER_HOUR_S, STEFAN_BOLTZMANN_W_M2_K4, ZERO_CELSIUS_K
from frostwatch.physics.cloud_cover import all_sky_emissivity
from frostwatch.physics.sky_emissivity import (
    _air_ok,
    _frac_ok,
    _masked,
    _out,
    _vapour_ok,
    clear_sky_emissivity,
)

FAO56_SIGMA_MJ_M2_H_K4 = 2.043e-10  # [MJ m-2 h-1 K-4] Allen et al. 1998 (FAO-56), hourly; FAO-56 only
SURFACE_EMISSIVITY_DEFAULT_FRAC = 0.98  # [-] leaves, soil, ice 0.95-0.99 (from memory, common default)
FAO56_RS_RSO_MIN_FRAC = 0.35 / 1.35  # [-] below this the FAO-56 cloud factor 1.35 r - 0.35 < 0


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
