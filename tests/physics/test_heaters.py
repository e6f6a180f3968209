"""Heaters: the heat requirement against reference sheet 2.1/2.2 (Stefan-Boltzmann, Brutsaert) and the retained share
(Evans, 10-15 %)."""

import math

import pytest

from frostwatch.physics.heaters import (
    RETAINED_FRAC,
    heat_requirement_w_m2,
    heater_need,
    retained_frac_for_inversion,
)

# Reference sheet 2.1 (a black body at the air temperature, CODATA sigma) and the sheet 2.2 check
# table (Brutsaert 1975 L-down, formulas of Flerchinger et al. 2009): (Ta degC, e hPa, up, down).
SHEET_2_1_2_2 = [(0.0, 4.22, 315.7, 216.0), (5.0, 4.90, 339.4, 236.0), (10.0, 6.11, 364.5, 261.0)]


@pytest.mark.parametrize(("air_temp_c", "vp_hpa", "up_w_m2", "down_w_m2"), SHEET_2_1_2_2)
def test_heat_requirement_vs_reference_sheet_2_1_and_2_2(air_temp_c, vp_hpa, up_w_m2, down_w_m2):
    # The block's net longwave loss with the surface a black body at the air temperature (an upper
    # bound, no tabulated emissivity) under a clear Brutsaert sky: up - down. Tolerance 1.5 W m-2,
    # the table's whole W m-2.
    assert heat_requirement_w_m2(air_temp_c, vp_hpa) == pytest.approx(up_w_m2 - down_w_m2, abs=1.5)


def test_heat_requirement_in_the_frost_night_range_and_cloud_cuts_it():
    clear = heat_requirement_w_m2(-0.2, 4.0)
    assert 90.0 < clear < 115.0  # frost-physics.md 2.5: clear frost nights lose 50-110 W/m2
    assert heat_requirement_w_m2(-0.2, 4.0, cloud_frac=1.0) < clear


def test_retained_share_by_inversion_vs_evans():
    assert RETAINED_FRAC == (0.10, 0.15)  # Evans, Good Fruit Grower: 10-15 % stays
    assert retained_frac_for_inversion(4.0) == 0.15
    assert retained_frac_for_inversion(2.0) == 0.10
    assert retained_frac_for_inversion(1.0) is None  # weak: the plume rises away (FAO-FP p. 147)
    assert retained_frac_for_inversion(None) is None


def test_heater_need_by_hand():
    # requirement R W/m2 / 0.15 * 10 kW/ha per W/m2; 40 kW heaters -> ceil(output / 40) per ha
    need = heater_need(-0.2, 4.0, 4.0, heater_kw=40.0, installed_per_ha=100)
    r = heat_requirement_w_m2(-0.2, 4.0)
    assert need.output_kw_per_ha == pytest.approx(r / 0.15 * 10.0)
    assert need.heaters_per_ha == math.ceil(r / 0.15 * 10.0 / 40.0)
    assert need.installed_kw_per_ha == 4000.0
    assert need.enough is (4000.0 >= need.output_kw_per_ha)
    weak = heater_need(-0.2, 4.0, 0.5, heater_kw=40.0)
    assert weak.retained_frac is None and weak.output_kw_per_ha is None and weak.heaters_per_ha is None
