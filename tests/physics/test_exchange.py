"""Turbulent exchange of an iced surface: FAO-56's aerodynamic resistance, MetPy's constants and
density, and the WMO ice-bulb coefficient checked against psychrolib's ice bulb."""

import math

import psychrolib
import pytest

from frostwatch.physics.exchange import (
    PSYCHROMETER_COEFF_ICE_PER_K,
    aerodynamic_resistance_s_m,
    air_density_kg_m3,
    iced_surface_exchange_w_m2,
)
from frostwatch.physics.humidity import vapour_pressure_hpa_from_dew_point

psychrolib.SetUnitSystem(psychrolib.SI)


def test_aerodynamic_resistance_s_m_vs_fao56_reference_surface():
    # FAO-56 ch. 3 eq. 4 worked for the reference grass (h = 0.12 m, wind and humidity at 2 m):
    # d = 0.08 m, zom = 0.01476 m, zoh = 0.001476 m,
    # r_a = ln(1.92/0.01476) ln(1.92/0.001476) / (0.41^2 u2) = 4.868 * 7.171 / 0.1681 / u2 = 208/u2
    assert aerodynamic_resistance_s_m(1.0) == pytest.approx(208.0, abs=0.5)
    assert aerodynamic_resistance_s_m(2.0) == pytest.approx(104.0, abs=0.3)
    assert math.isnan(aerodynamic_resistance_s_m(0.0))
    assert math.isnan(aerodynamic_resistance_s_m(1.0, wind_height_m=2.0, crop_height_m=3.0))  # inside


def test_air_density_kg_m3_vs_metpy_density():
    # metpy.calc.density of dry air; the gas constant itself is checked in tests/test_constants.py
    from metpy.calc import density
    from metpy.units import units

    for t, p in ((-5.0, 1013.25), (0.0, 950.0), (3.0, 880.0)):
        ref = density(p * units.hPa, t * units.degC, 0 * units("g/kg")).m_as("kg/m^3")
        assert air_density_kg_m3(t, p) == pytest.approx(ref, rel=1e-4)


def test_ice_bulb_coefficient_vs_theory():
    # WMO-No. 8's 5.75e-4 K-1 against cp / (eps Ls) from MetPy's constants: within 1.5 %
    from metpy import constants

    theory = constants.Cp_d.m_as("J/kg/K") / (constants.epsilon.m * constants.Ls.m_as("J/kg"))
    assert PSYCHROMETER_COEFF_ICE_PER_K == pytest.approx(theory, rel=0.015)


def _ice_bulb_psychrolib_c(t, td, p_hpa):
    # psychrolib (ASHRAE 2017) treats a sub-zero dew point as a frost point, so give it the
    # humidity ratio from the vapour pressure over water instead
    e_pa = vapour_pressure_hpa_from_dew_point(td) * 100.0
    w = psychrolib.GetHumRatioFromVapPres(e_pa, p_hpa * 100.0)
    return psychrolib.GetTWetBulbFromHumRatio(t, w, p_hpa * 100.0)


@pytest.mark.parametrize(("t", "td"), [(-1.0, -6.0), (-3.0, -8.0), (-5.0, -12.0), (2.0, -7.0)])
def test_exchange_vanishes_at_psychrolib_ice_bulb(t, td):
    # A surface at the ice-bulb temperature neither gains nor loses heat to the air: sensible
    # gain and sublimation loss cancel (that is what the ice bulb is). psychrolib's ASHRAE ice bulb
    # against this module's WMO coefficient: the residual is within 3 % of either term.
    p = 1013.25
    ti = _ice_bulb_psychrolib_c(t, td, p)
    e = float(vapour_pressure_hpa_from_dew_point(td))
    h, le = iced_surface_exchange_w_m2(t, e, 100.0, p, surface_temp_c=ti)
    assert abs(h + le) <= 0.03 * abs(h)


def test_exchange_signs_and_bad_input():
    h, le = iced_surface_exchange_w_m2(-4.0, 3.0, 100.0, 1013.25)
    assert h > 0 and le > 0  # a 0 C surface in colder, drier air loses both ways
    h, le = iced_surface_exchange_w_m2(2.0, 6.5, 100.0, 1013.25)
    assert h < 0 and le < 0  # warmer, moister air warms it and deposits vapour
    assert all(math.isnan(x) for x in iced_surface_exchange_w_m2(-4.0, 3.0, 0.0, 1013.25))
    assert all(math.isnan(x) for x in iced_surface_exchange_w_m2(math.nan, 3.0, 100.0, 1013.25))
