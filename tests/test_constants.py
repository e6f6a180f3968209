"""frostwatch.constants against outside references: scipy.constants (CODATA 2018, the SI) and
metpy.constants, and the Magnus coefficients (the dew-point solver's first guess) against the check values of frost-physics.md."""

import math

import pytest
import scipy.constants as si
from metpy import constants as metpy_constants

from frostwatch import constants


def test_si_constants_vs_scipy_constants_codata_2018():
    # scipy.constants carries CODATA 2018; the kelvin offset and standard gravity are exact
    # definitions, sigma is exact since the 2019 SI (to its printed digits: rel 1e-9).
    assert constants.ZERO_CELSIUS_K == si.zero_Celsius
    assert constants.GRAVITY_M_S2 == si.g
    assert constants.STEFAN_BOLTZMANN_W_M2_K4 == pytest.approx(si.Stefan_Boltzmann, rel=1e-9)
    assert constants.SECONDS_PER_HOUR_S == si.hour
    assert constants.PA_PER_HPA == si.hecto
    assert constants.STANDARD_PRESSURE_HPA * constants.PA_PER_HPA == si.atm  # ISO 2533 = 1 atm


def test_air_and_water_constants_vs_metpy_constants():
    # metpy.constants (Rd, Cp_d, Lf, Lv, Ls); tolerance 1e-5, MetPy derives Rd and Cp_d from
    # molar masses to more digits than frostwatch keeps.
    assert constants.DRY_AIR_GAS_CONSTANT_J_KG_K == pytest.approx(metpy_constants.Rd.m_as("J/kg/K"), rel=1e-5)
    assert constants.DRY_AIR_SPECIFIC_HEAT_J_KG_K == pytest.approx(metpy_constants.Cp_d.m_as("J/kg/K"), rel=1e-5)
    assert constants.LATENT_HEAT_FUSION_J_KG == pytest.approx(metpy_constants.Lf.m_as("J/kg"), rel=1e-9)
    assert constants.LATENT_HEAT_VAPORISATION_J_KG == pytest.approx(metpy_constants.Lv.m_as("J/kg"), rel=1e-9)
    assert constants.LATENT_HEAT_SUBLIMATION_J_KG == pytest.approx(metpy_constants.Ls.m_as("J/kg"), rel=1e-9)
    # ASHRAE's 0.621945 against MetPy's epsilon (0.621957, newer molar masses): 2e-5 apart
    assert constants.MOLAR_MASS_RATIO_WATER_AIR == pytest.approx(metpy_constants.epsilon.m, rel=5e-5)


def test_latent_heats_vs_frost_physics_4_2():
    # frost-physics.md 4.2: Lf 0.334, Lv(0 C) 2.501, Ls 2.834 MJ/kg; Lv/Lf about 7.5.
    assert constants.LATENT_HEAT_FUSION_J_KG == pytest.approx(0.334e6, abs=0.5e3)
    assert constants.LATENT_HEAT_VAPORISATION_J_KG == pytest.approx(2.501e6, abs=1e3)
    assert constants.LATENT_HEAT_SUBLIMATION_J_KG == pytest.approx(2.834e6, abs=1e3)
    ratio = constants.LATENT_HEAT_VAPORISATION_J_KG / constants.LATENT_HEAT_FUSION_J_KG
    assert ratio == pytest.approx(7.5, abs=0.05)


def _magnus_hpa(t_c, b, c):
    return constants.MAGNUS_E0_HPA * math.exp(b * t_c / (c + t_c))


@pytest.mark.parametrize(("temp_c", "water_pa"), [(-10.0, 286.56), (-3.0, 490.19), (0.0, 611.21), (5.0, 872.49)])
def test_magnus_coefficients_vs_hyland_wexler_check_values(temp_c, water_pa):
    # frost-physics.md 6.1 check values (Hyland & Wexler over water, Pa). The WMO Magnus fit agrees
    # within 0.2 % over -10..5 C (at most 0.17 % measured; a tolerance set here, not quoted from
    # WMO); a wrong coefficient (say 17.27 for 17.62, the Tetens value) misses by more.
    water = _magnus_hpa(temp_c, constants.MAGNUS_WATER_B, constants.MAGNUS_WATER_C_C) * 100.0
    assert water == pytest.approx(water_pa, rel=2e-3)
