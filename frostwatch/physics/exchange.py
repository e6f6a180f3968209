"""Turbulent exchange of heat and water vapour between a wet or iced surface and the air.

Pure: no I/O, no clock. SI units, temperatures in degC, pressures in hPa. Used by the sprinkler
heat budget (`frostwatch.physics.sprinklers`): an iced plant held at 0 degC loses heat by
convection to colder air and by evaporation (sublimation) to drier air, through the same
aerodynamic resistance.

References
----------
.. [1] Allen, R.G., Pereira, L.S., Raes, D. & Smith, M. (1998). Crop evapotranspiration.
   FAO Irrigation and Drainage Paper 56 ("FAO-56"), ch. 3, eq. 4 (aerodynamic resistance) and
   its worked reference-surface case, r_a = 208 / u2 s m-1.
.. [2] WMO (2018). Guide to Instruments and Methods of Observation (WMO-No. 8), Annex 4.B:
   psychrometer coefficient of a ventilated ice bulb, A = 5.75e-4 K-1
   (frost-physics.md 10, verified).
.. [3] Monteith, J.L. & Unsworth, M.H. (2013). Principles of Environmental Physics, 4th ed.,
   ch. 13: sensible and latent heat through one resistance, the psychrometric form.
"""

from __future__ import annotations

import math
from typing import Final

import numpy as np

from frostwatch.constants import (
    DRY_AIR_GAS_CONSTANT_J_KG_K,
    DRY_AIR_SPECIFIC_HEAT_J_KG_K,
    PA_PER_HPA,
    ZERO_CELSIUS_K,
)
from frostwatch.physics.saturation import saturation_vapour_pressure_ice_hpa

__all__ = [
    "VON_KARMAN",
    "PSYCHROMETER_COEFF_ICE_PER_K",
    "aerodynamic_resistance_s_m",
    "air_density_kg_m3",
    "iced_surface_exchange_w_m2",
]

# von Karman's constant, 0.41 as FAO-56 eq. 4 uses it.
VON_KARMAN: Final = 0.41
# Psychrometer coefficient of a ventilated ice bulb [K-1], WMO-No. 8 Annex 4.B: e = ei(Ti) -
# A p (T - Ti). Theory gives cp / (eps Ls) = 1004.67 / (0.622 * 2.8345e6) = 5.70e-4 K-1.
PSYCHROMETER_COEFF_ICE_PER_K: Final = 5.75e-4


def aerodynamic_resistance_s_m(
    wind_speed_m_s, wind_height_m: float = 2.0, crop_height_m: float = 0.12
):
    """Aerodynamic resistance to heat and vapour transfer over a crop, FAO-56 eq. 4.

    Parameters
    ----------
    wind_speed_m_s : float or array_like
        Wind speed at ``wind_height_m`` [m s-1]; must be > 0.
    wind_height_m : float, optional
        Height of the wind (and humidity) measurement [m]; default 2.
    crop_height_m : float, optional
        Crop height [m]; default 0.12, FAO-56's reference grass.

    Returns
    -------
    float or ndarray
        r_a [s m-1]; NaN for a wind at or below 0 or a measurement height at or below the
        displacement height plus the roughness length.

    Notes
    -----
    ``r_a = ln((z_m - d) / z_om) ln((z_h - d) / z_oh) / (k^2 u_z)`` with d = 2/3 h,
    z_om = 0.123 h, z_oh = 0.1 z_om and k = 0.41 (neutral stability). For the reference grass
    at 2 m this is 208 / u2 (FAO-56 ch. 3, worked case). Stable night air transfers less than
    this; the neutral value is the published one.

    References
    ----------
    .. [1] Allen et al. (1998), FAO-56 ch. 3, eq. 4.
    """
    u = np.asarray(wind_speed_m_s, dtype=float)
    d = 2.0 / 3.0 * crop_height_m
    z_om = 0.123 * crop_height_m
    z_oh = 0.1 * z_om
    if wind_height_m - d <= z_om:
        out = np.full(u.shape, math.nan)
    else:
        with np.errstate(divide="ignore", invalid="ignore"):
            out = math.log((wind_height_m - d) / z_om) * math.log((wind_height_m - d) / z_oh) / (VON_KARMAN**2 * u)
        out = np.where(u > 0.0, out, math.nan)
    return float(out) if out.ndim == 0 else out


def air_density_kg_m3(air_temp_c, pressure_hpa):
    """Density of (dry) air from the ideal-gas law [kg m-3]: rho = p / (R_d T).

    Water vapour changes it by well under 1 % on frost nights. NaN for a temperature at or
    below absolute zero or a pressure at or below 0.
    """
    t_k = np.asarray(air_temp_c, dtype=float) + ZERO_CELSIUS_K
    p_pa = np.asarray(pressure_hpa, dtype=float) * PA_PER_HPA
    with np.errstate(divide="ignore", invalid="ignore"):
        rho = np.where((t_k > 0.0) & (p_pa > 0.0), p_pa / (DRY_AIR_GAS_CONSTANT_J_KG_K * t_k), math.nan)
    return float(rho) if rho.ndim == 0 else rho


def iced_surface_exchange_w_m2(
    air_temp_c, vapour_pressure_hpa, resistance_s_m, pressure_hpa, surface_temp_c=0.0
) -> tuple[float, float]:
    """Sensible and latent heat lost by an iced surface to the air, each positive upward [W m-2].

    Parameters
    ----------
    air_temp_c : float
        Air temperature [degC].
    vapour_pressure_hpa : float
        Actual vapour pressure of the air [hPa].
    resistance_s_m : float
        Aerodynamic resistance [s m-1] (`aerodynamic_resistance_s_m`).
    pressure_hpa : float
        Station pressure [hPa].
    surface_temp_c : float, optional
        Temperature of the iced surface [degC]; default 0 (an ice-water film).

    Returns
    -------
    (float, float)
        (sensible, latent) [W m-2]; each may be negative (the air warms the surface, or
        vapour deposits on it). NaN for an invalid input.

    Notes
    -----
    ``H = rho cp (Ts - Ta) / r_a`` and ``lambda E = rho cp (ei(Ts) - ea) / (gamma r_a)`` with
    ``gamma = A p`` the ice-bulb psychrometer coefficient times the pressure (WMO-No. 8: the
    same equation that defines the ice-bulb temperature, so both terms cancel for a surface at
    the ice-bulb temperature). One resistance carries both (Monteith & Unsworth).

    References
    ----------
    .. [1] WMO-No. 8, Annex 4.B (A = 5.75e-4 K-1 for an ice bulb).
    .. [2] Monteith & Unsworth (2013), ch. 13.
    """
    values = (air_temp_c, vapour_pressure_hpa, resistance_s_m, pressure_hpa, surface_temp_c)
    if not all(math.isfinite(float(v)) for v in values) or resistance_s_m <= 0 or pressure_hpa <= 0:
        return math.nan, math.nan
    rho_cp = float(air_density_kg_m3(air_temp_c, pressure_hpa)) * DRY_AIR_SPECIFIC_HEAT_J_KG_K
    sensible = rho_cp * (surface_temp_c - air_temp_c) / resistance_s_m
    gamma_hpa_k = PSYCHROMETER_COEFF_ICE_PER_K * pressure_hpa
    e_surface = float(saturation_vapour_pressure_ice_hpa(surface_temp_c))
    latent = rho_cp * (e_surface - vapour_pressure_hpa) / (gamma_hpa_k * resistance_s_m)
    return sensible, latent
