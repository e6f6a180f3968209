"""The coldest a clear night can make crop-height air by sunrise: a physical floor under a projection.

Pure numpy, no I/O, no clock. Temperatures in degC, time in hours, fluxes in W m-2. NaN outside
the formulas' range.

A projection below this floor asks for more cooling than radiation can give. The bound is loose on
purpose (each choice below gives more cooling than a real night can), so it never cuts a real
night; a projection that reaches it says that the readings behind it are not the air's (a sensor
in the sun's shadow line, a wet or failing sensor, a wrong unit).
"""

from __future__ import annotations

import math

import numpy as np

from frostwatch.constants import STEFAN_BOLTZMANN_W_M2_K4, ZERO_CELSIUS_K
from frostwatch.physics._broadcast import _out
from frostwatch.physics.longwave import net_longwave_w_m2
from frostwatch.physics.saturation import _sat_hpa_f, vapour_pressure_hpa_from_dew_point
from frostwatch.physics.sky_emissivity import AIR_TEMP_MAX_C, AIR_TEMP_MIN_C
from frostwatch.physics.sqrt_time_cooling import THERMAL_ADMITTANCE_J_M2_K_S05, surface_cooling_k_brunt_1941

# The lowest thermal admittance of the mineral soils in Oke (1987) Table 2.1: dry sandy soil and
# dry clay, 600 J m-2 K-1 s-1/2 (from memory, as the table in sqrt_time_cooling). The lower the
# admittance, the faster the surface cools; an orchard floor is mineral soil (peat and snow, lower
# still, are left out: not an orchard in bloom).
FLOOR_ADMITTANCE_J_M2_K_S05 = THERMAL_ADMITTANCE_J_M2_K_S05["dry_sandy_soil"]
# With no humidity reading the sky is taken as dry as a frost night's air gets: a dew point this far
# below the air (engineering choice; a drier sky lets more longwave out, so the floor is lower).
DRY_SKY_DEPRESSION_K = 30.0


def radiative_cooling_floor_c(air_temp_c, dew_point_c, hours_to_sunrise,
                              thermal_admittance_j_m2_k_s05=FLOOR_ADMITTANCE_J_M2_K_S05):
    """The lowest air temperature a clear, calm night can reach by sunrise, from the air now.

    Parameters
    ----------
    air_temp_c : float or array_like
        Crop-height air temperature now [degC].
    dew_point_c : float or array_like or None
        Dew point now [degC]; None or NaN: a dry sky (`DRY_SKY_DEPRESSION_K` below the air).
    hours_to_sunrise : float or array_like
        Hours from now to sunrise [h]; at least 0.
    thermal_admittance_j_m2_k_s05 : float or array_like
        Thermal admittance of the ground [J m-2 K-1 s-1/2]; default the lowest mineral soil's.

    Returns
    -------
    float or ndarray
        The floor [degC]: the air now less Brunt's surface fall over the hours left; NaN outside
        the range of the sky emissivity (-45..45 degC) or for negative hours.

    Notes
    -----
    ``T_floor = T_now - 2 Rn sqrt(t) / (sqrt(pi) mu)`` (Brunt 1941: a semi-infinite medium under a
    constant net loss Rn), with the largest loss the night can have:
    ``Rn = (1 - eps_c) sigma T_now^4`` (Stefan-Boltzmann), a black surface at the air's
    temperature under a clear sky of Brutsaert's (1975) emissivity eps_c at tonight's vapour
    pressure. Each choice gives more cooling than a real night: the surface is colder than the air
    at night and radiates less; cloud only adds to the sky's longwave; the loss falls as the surface
    cools; the air, the canopy and dew or frost (latent heat) supply part of it; the crop-height air
    cools less than the ground's surface (the inversion); and the fall still to come from a night
    already cooling, sqrt(t_sunrise) - sqrt(t_now), is less than sqrt(t_sunrise - t_now). The
    clear-sky formulas spread about +-20 W m-2 (reference sheet 2.2); Brutsaert's is among the
    driest (most cooling). Check: air 10 degC, dew point -4 degC, 10 h: loss 113 W m-2, fall
    41 K, floor -30.7 degC.

    References
    ----------
    Brunt, D. (1941). Physical and Dynamical Meteorology, 2nd ed., Cambridge University Press
    (from memory).
    Brutsaert, W. (1975). On a derivable formula for long-wave radiation from clear skies. Water
    Resources Research 11(5): 742-744.
    Oke, T.R. (1987). Boundary Layer Climates, 2nd ed., Table 2.1 (from memory).
    """
    air = np.asarray(air_temp_c, dtype=float)
    td = np.asarray(np.nan if dew_point_c is None else dew_point_c, dtype=float)
    td = np.where(np.isfinite(td), np.minimum(td, air), air - DRY_SKY_DEPRESSION_K)
    vp = vapour_pressure_hpa_from_dew_point(td)
    loss = -np.asarray(net_longwave_w_m2(air, vp, 0.0, surface_temp_c=air, surface_emissivity=1.0), dtype=float)
    hours = np.asarray(hours_to_sunrise, dtype=float)
    fall = np.asarray(surface_cooling_k_brunt_1941(loss, thermal_admittance_j_m2_k_s05, hours * 3600.0), dtype=float)
    return _out(air - fall)


def radiative_cooling_floor_f(air_temp_c: float, dew_point_c: float | None, hours_to_sunrise: float) -> float:
    """`radiative_cooling_floor_c` of one point on plain floats (the projection's hot path: a few
    microseconds instead of numpy's scalar calls), the same formulas and range; the default
    admittance. tests/physics/test_cooling_floor.py holds it to the vectorised function."""
    air = float(air_temp_c)
    if not (AIR_TEMP_MIN_C <= air <= AIR_TEMP_MAX_C) or not hours_to_sunrise >= 0.0:
        return math.nan
    td = math.nan if dew_point_c is None else float(dew_point_c)
    td = min(td, air) if math.isfinite(td) else air - DRY_SKY_DEPRESSION_K
    vp = _sat_hpa_f(td, False)
    if not vp > 0.0:
        return math.nan
    ta_k = air + ZERO_CELSIUS_K
    eps = 1.24 * (vp / ta_k) ** (1.0 / 7.0)
    if eps > 1.0:  # the sky's emissivity capped at 1 makes the vectorised function NaN: the same here
        return math.nan
    emission = STEFAN_BOLTZMANN_W_M2_K4 * ta_k**4
    loss = emission - eps * emission
    return air - 2.0 * loss * math.sqrt(hours_to_sunrise * 3600.0) / (math.sqrt(math.pi) * FLOOR_ADMITTANCE_J_M2_K_S05)
