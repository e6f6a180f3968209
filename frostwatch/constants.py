"""Physical constants and fixed unit factors, each once, with its source.

Every module that needs one of these imports it from here; a formula's own fitted coefficients
(Hyland-Wexler's, Brutsaert's, FAO-56's) stay beside the formula they belong to.
`tests/test_constants.py` checks each value against scipy.constants or metpy.constants.
"""

from __future__ import annotations

from typing import Final

# ---- SI and CODATA ------------------------------------------------------------------------------
ZERO_CELSIUS_K: Final = 273.15  # [K] definition of the Celsius scale (SI Brochure, 9th ed., 2019)
TRIPLE_POINT_WATER_C: Final = 0.01  # [degC] triple point of water, ITS-90
STEFAN_BOLTZMANN_W_M2_K4: Final = 5.670374419e-8  # [W m-2 K-4] CODATA 2018, exact since the 2019 SI
GRAVITY_M_S2: Final = 9.80665  # [m s-2] standard gravity (3rd CGPM, 1901)
SECONDS_PER_HOUR_S: Final = 3600.0  # [s h-1]
PA_PER_HPA: Final = 100.0  # [Pa hPa-1]
STANDARD_PRESSURE_HPA: Final = 1013.25  # [hPa] ISO 2533 / ICAO standard atmosphere at sea level

# ---- dry air and water (the values of MetPy's constants module, metpy.constants) ---------------
DRY_AIR_GAS_CONSTANT_J_KG_K: Final = 287.047  # [J kg-1 K-1] metpy.constants.Rd
DRY_AIR_SPECIFIC_HEAT_J_KG_K: Final = 1004.67  # [J kg-1 K-1] at constant pressure, metpy.constants.Cp_d
# Ratio of the molar masses of water and dry air [-], ASHRAE Handbook-Fundamentals (2017) ch. 1
# eq. 20 (0.621945; MetPy's epsilon is 0.621957 from newer molar masses).
MOLAR_MASS_RATIO_WATER_AIR: Final = 0.621945
# Latent heats at 0 degC [J kg-1]: fusion, vaporisation, and sublimation their sum
# (metpy.constants.Lf, Lv, Ls). Lv/Lf is about 7.5 (frost-physics.md 4.2).
LATENT_HEAT_FUSION_J_KG: Final = 333.7e3
LATENT_HEAT_VAPORISATION_J_KG: Final = 2.50084e6
LATENT_HEAT_SUBLIMATION_J_KG: Final = LATENT_HEAT_VAPORISATION_J_KG + LATENT_HEAT_FUSION_J_KG

# ---- Magnus saturation formula over water, WMO-No. 8 (CIMO Guide) Annex 4.B ----------------------
# e_s = E0 exp(B t / (C + t)) [hPa], -45..60 degC (frost-physics.md section 10). Every saturation
# value in frostwatch comes from Hyland & Wexler (1983) as ASHRAE uses it (`physics.saturation`);
# Magnus serves only as the first guess of the dew-point solver (`physics.dew_frost_point`), which
# Newton's method then takes to the Hyland-Wexler root.
MAGNUS_E0_HPA: Final = 6.112  # [hPa]
MAGNUS_WATER_B: Final = 17.62  # [-]
MAGNUS_WATER_C_C: Final = 243.12  # [degC]
