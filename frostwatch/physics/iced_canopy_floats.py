"""The iced plant's heat budget (`sprinklers.iced_canopy_heat_loss`) of one night on plain floats,
to the bit: no physics of its own.

An evaluation asks for the budget once per sprinkler block, each time with one set of floats; the
vectorised path turns every step into 0-d arrays and numpy scalars (about 80 us a block). Here
each step is the same expression on Python floats, in the same order, with what numpy does for
one value: + - * / round as numpy's float64 does; a power of a numpy scalar (what `0-d array +
float` gives) is the C library's pow, as a float's `**` is; exp and log of the saturation curve
go through numpy's own ufuncs (np.exp, np.log), whose values can differ in the last bit from the
math module's. Ranges and NaN follow the vectorised masks (`sky_emissivity._air_ok`,
`_vapour_ok`, `_frac_ok`, `saturation._sat_water_hpa`).

tests/test_iced_canopy_floats.py holds it to the vectorised path on random and odd inputs.
"""

from __future__ import annotations

import math

import numpy as np

from frostwatch.constants import (
    DRY_AIR_GAS_CONSTANT_J_KG_K,
    DRY_AIR_SPECIFIC_HEAT_J_KG_K,
    PA_PER_HPA,
    STEFAN_BOLTZMANN_W_M2_K4,
    ZERO_CELSIUS_K,
)
from frostwatch.physics.exchange import PSYCHROMETER_COEFF_ICE_PER_K, VON_KARMAN
from frostwatch.physics.saturation import (
    _HW_WATER_C8,
    _HW_WATER_C9,
    _HW_WATER_C10,
    _HW_WATER_C11,
    _HW_WATER_C12,
    _HW_WATER_C13,
    SAT_WATER_MAX_C,
    SAT_WATER_MIN_C,
    saturation_vapour_pressure_ice_hpa,
)
from frostwatch.physics.sky_emissivity import (
    AIR_TEMP_MAX_C,
    AIR_TEMP_MIN_C,
    SUPERSATURATION_MAX_FRAC,
    VAPOUR_PRESSURE_MAX_HPA,
)

_ICE_AT_0C_HPA = float(saturation_vapour_pressure_ice_hpa(0.0))  # the iced surface's, as the exchange works it out


def sat_water_hpa_f(temp_c: float) -> float:
    """`saturation._sat_water_hpa` of one float [hPa]."""
    if not SAT_WATER_MIN_C <= temp_c <= SAT_WATER_MAX_C:
        return math.nan
    tk = temp_c + ZERO_CELSIUS_K
    ln = (_HW_WATER_C8 / tk + _HW_WATER_C9 + tk * (_HW_WATER_C10 + tk * (_HW_WATER_C11 + tk * _HW_WATER_C12))
          + _HW_WATER_C13 * float(np.log(tk)))
    return float(np.exp(ln)) / PA_PER_HPA


def _air_ok(t: float) -> bool:
    return math.isfinite(t) and AIR_TEMP_MIN_C <= t <= AIR_TEMP_MAX_C


def _frac_ok(c: float) -> bool:
    return math.isfinite(c) and 0.0 <= c <= 1.0


def net_longwave_iced_w_m2(air_temp_c: float, vapour_pressure_hpa: float, cloud_frac: float) -> float:
    """`longwave.net_longwave_w_m2(air, e, cloud_frac, surface_temp_c=0.0, surface_emissivity=1.0)`
    (Brutsaert 1975 sky, Jacobs 1978 clouds) of floats [W m-2]."""
    e = vapour_pressure_hpa
    es = sat_water_hpa_f(air_temp_c)
    ta_k = air_temp_c + ZERO_CELSIUS_K
    # sky_emissivity_brutsaert_1975, masked by _air_ok and _vapour_ok (NaN compares False)
    if _air_ok(air_temp_c) and math.isfinite(e) and 0.0 < e <= VAPOUR_PRESSURE_MAX_HPA and e <= SUPERSATURATION_MAX_FRAC * es:
        eps_clear = 1.24 * (e / ta_k) ** (1.0 / 7.0)
    else:
        eps_clear = math.nan
    # cloud_cover.all_sky_emissivity_jacobs_1978, then the cap at 1 (np.minimum keeps NaN)
    eps_all = eps_clear * (1.0 + 0.26 * cloud_frac) if _frac_ok(eps_clear) and _frac_ok(cloud_frac) else math.nan
    eps_all = eps_all if math.isnan(eps_all) else min(eps_all, 1.0)
    # downwelling_longwave_w_m2 and upwelling_longwave_w_m2 of a black body at 0 degC
    down = eps_all * STEFAN_BOLTZMANN_W_M2_K4 * ta_k**4 if _air_ok(air_temp_c) and _frac_ok(eps_all) else math.nan
    surface_k = 0.0 + ZERO_CELSIUS_K
    up = 1.0 * STEFAN_BOLTZMANN_W_M2_K4 * surface_k**4 + (1.0 - 1.0) * down
    if not (math.isfinite(down) and down >= 0.0):
        up = math.nan
    return down - up


def aerodynamic_resistance_s_m_f(wind_speed_m_s: float, wind_height_m: float = 2.0, crop_height_m: float = 0.12) -> float:
    """`exchange.aerodynamic_resistance_s_m` of one float wind [s m-1] (the same expression)."""
    d = 2.0 / 3.0 * crop_height_m
    z_om = 0.123 * crop_height_m
    z_oh = 0.1 * z_om
    if wind_height_m - d <= z_om or not wind_speed_m_s > 0.0:
        return math.nan
    return math.log((wind_height_m - d) / z_om) * math.log((wind_height_m - d) / z_oh) / (VON_KARMAN**2 * wind_speed_m_s)


def iced_surface_exchange_w_m2_f(air_temp_c: float, vapour_pressure_hpa: float, resistance_s_m: float,
                                 pressure_hpa: float) -> tuple[float, float]:
    """`exchange.iced_surface_exchange_w_m2(..., surface_temp_c=0.0)` of floats [W m-2]."""
    values = (air_temp_c, vapour_pressure_hpa, resistance_s_m, pressure_hpa)
    if not all(map(math.isfinite, values)) or resistance_s_m <= 0 or pressure_hpa <= 0:
        return math.nan, math.nan
    t_k = air_temp_c + ZERO_CELSIUS_K
    p_pa = pressure_hpa * PA_PER_HPA
    rho = p_pa / (DRY_AIR_GAS_CONSTANT_J_KG_K * t_k) if t_k > 0.0 and p_pa > 0.0 else math.nan
    rho_cp = rho * DRY_AIR_SPECIFIC_HEAT_J_KG_K
    sensible = rho_cp * (0.0 - air_temp_c) / resistance_s_m
    gamma_hpa_k = PSYCHROMETER_COEFF_ICE_PER_K * pressure_hpa
    latent = rho_cp * (_ICE_AT_0C_HPA - vapour_pressure_hpa) / (gamma_hpa_k * resistance_s_m)
    return sensible, latent


def iced_canopy_heat_loss_f(air_temp_c: float, dew_point_c: float, wind_used_m_s: float, pressure_hpa: float,
                            cloud_frac: float) -> tuple[float, float, float]:
    """(radiation, sensible, latent) [W m-2] of `sprinklers.iced_canopy_heat_loss` of floats without
    NaN (its vectorised path's values), the wind already raised to the calm-air floor."""
    e_hpa = sat_water_hpa_f(min(dew_point_c, air_temp_c))
    radiation = -net_longwave_iced_w_m2(air_temp_c, e_hpa, cloud_frac)
    sensible, latent = iced_surface_exchange_w_m2_f(air_temp_c, e_hpa, aerodynamic_resistance_s_m_f(wind_used_m_s),
                                                    pressure_hpa)
    return radiation, sensible, latent
