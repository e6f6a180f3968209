"""Heaters: the heat requirement by hand (Stefan-Boltzmann, Brutsaert) and the retained share
(Evans, 10-15 %)."""

import math

import pytest

from frostwatch.physics.heaters import (
    RETAINED_FRAC,
    heat_requirement_w_m2,
    heater_need,
    retained_frac_for_inversion,
)

SIGMA = 5.670374419e-8  # CODATA 2018


def test_heat_requirement_by_hand():
    # block held at -0.2 C, vapour pressure 4.0 hPa, clear sky: Brutsaert (1975) eps =
    # 1.24 (4.0 / 272.95)^(1/7) = 0.6336; net loss = sigma T^4 (1 - eps) (the surface as a black
    # body at the air temperature: an upper bound, no tabulated emissivity)
    t = -0.2 + 273.15
    eps = 1.24 * (4.0 / t) ** (1 / 7)
    expected = SIGMA * t**4 * (1.0 - eps)
    assert heat_requirement_w_m2(-0.2, 4.0) == pytest.approx(expected, rel=2e-3)
    assert 90.0 < expected < 115.0  # frost-physics.md 2.5: clear frost nights lose 50-110 W/m2
    assert heat_requirement_w_m2(-0.2, 4.0, cloud_frac=1.0) < expected


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
