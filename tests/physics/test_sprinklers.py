"""Over-plant sprinkler physics against frost-physics.md 4.2 and 10, and psychrolib."""

import itertools
import math

import numpy as np
import psychrolib
import pytest

from frostwatch.physics.sprinklers import (
    capacity_adequate,
    evaporation_break_even_frac,
    fallback_stop_air_temp_c,
    heat_released_w_m2_per_mm_h,
    net_heat_w_m2,
    peak_flow_l_s,
    rate_shortfall_mm_h,
    sprinkler_start_air_temp_c,
    sprinkler_stop_ok,
    water_volume_m3,
)

psychrolib.SetUnitSystem(psychrolib.SI)

MPH_TO_M_S = 0.44704
IN_TO_MM = 25.4


def test_heat_released_w_m2_per_mm_h_vs_frost_physics_4_2():
    # frost-physics.md 4.2 [computed]: 92.8 W m-2 per mm h-1 from Lf = 0.334 MJ/kg;
    # tolerance 0.15 because 333.7 kJ/kg gives 92.69 (the sheet rounds Lf to 0.334).
    assert heat_released_w_m2_per_mm_h() == pytest.approx(92.8, abs=0.15)


def test_evaporation_break_even_frac_vs_frost_physics_4_2():
    # frost-physics.md 4.2 [computed]: net heat Lf (1 - 8.49 x), break-even x = 11.8 %.
    assert evaporation_break_even_frac() == pytest.approx(0.118, abs=0.0005)
    assert net_heat_w_m2(1.0, evaporation_break_even_frac()) == pytest.approx(
        0.0, abs=1e-9
    )
    assert net_heat_w_m2(1.0, 0.0) == pytest.approx(heat_released_w_m2_per_mm_h())
    assert net_heat_w_m2(3.0, 0.05) == pytest.approx(
        3.0 * 92.69 * (1 - 8.494 * 0.05), rel=1e-3
    )
    assert net_heat_w_m2(3.0, 0.2) < 0  # above break-even sprinkling cools
    with pytest.raises(ValueError):
        net_heat_w_m2(3.0, 1.5)


# frost-physics.md section 10, "Section 4.2's start-temperature table, rechecked" (psychrolib,
# ASHRAE 2017, dew point over water, ice bulb below 0 C, 101.325 kPa). The Tc = 0 column is
# left out (it sits on the ice/water switch); "-" cells (Td above Tc) are checked as NaN.
RECHECKED_START_C = {
    -16: {-1: 5.7, -2: 3.9, -3: 2.2, -4: 0.5},
    -14: {-1: 5.2, -2: 3.4, -3: 1.7, -4: -0.0},
    -12: {-1: 4.5, -2: 2.7, -3: 1.0, -4: -0.7},
    -10: {-1: 3.8, -2: 2.0, -3: 0.3, -4: -1.4},
    -8: {-1: 2.9, -2: 1.2, -3: -0.6, -4: -2.2},
    -6: {-1: 2.0, -2: 0.2, -3: -1.5, -4: -3.2},
    -4: {-1: 0.9, -2: -0.9, -3: -2.6, -4: -4.0},
    -2: {-1: -0.4, -2: -2.0, -3: None, -4: None},
    0: {-1: None, -2: None, -3: None, -4: None},
}
START_CASES = [
    (td, tc, ta) for td, row in RECHECKED_START_C.items() for tc, ta in row.items()
]


@pytest.mark.parametrize(("dew_point_c", "critical_c", "expected_c"), START_CASES)
def test_sprinkler_start_air_temp_c_vs_frost_physics_10_rechecked_table(
    dew_point_c, critical_c, expected_c
):
    # Tolerance 0.1 C: the table is printed to 0.1 C.
    got = sprinkler_start_air_temp_c(dew_point_c, critical_c)
    if expected_c is None:
        assert math.isnan(got)  # wet bulb can never fall below the dew point
    else:
        assert got == pytest.approx(expected_c, abs=0.1)


def _sat_vapour_pressure_over_water_pa(temp_c):
    # ASHRAE Handbook-Fundamentals 2017 ch. 1 eq. 6 (over liquid water), the formula psychrolib
    # itself uses above 0.01 C; needed because psychrolib treats a sub-zero dew point as a
    # frost point.
    t = temp_c + 273.15
    return math.exp(
        -5.8002206e3 / t
        + 1.3914993
        - 4.8640239e-2 * t
        + 4.1764768e-5 * t**2
        - 1.4452093e-8 * t**3
        + 6.5459673 * math.log(t)
    )


# Targets within about 0.4 C of 0 C are left out: there both codes may take either the ice or
# the water branch (section 10). Dew points above the target have no answer (NaN, tested above).
PSYCHROLIB_CASES = [
    (td, tc, p)
    for td in (-16.0, -11.0, -7.5, -4.0, -2.5)
    for tc in (-4.0, -2.2, -1.1, -0.6, 0.6)
    for p in (1013.25, 899.0)
    if td <= tc
]


@pytest.mark.parametrize(
    ("dew_point_c", "critical_c", "pressure_hpa"), PSYCHROLIB_CASES
)
def test_sprinkler_start_air_temp_c_vs_psychrolib(
    dew_point_c, critical_c, pressure_hpa
):
    # psychrolib (ASHRAE 2017) wet bulb at the returned air temperature equals the target;
    # tolerance 0.05 C (psychrolib's iterative solver).
    air_temp_c = sprinkler_start_air_temp_c(
        dew_point_c, critical_c, pressure_hpa=pressure_hpa
    )
    pressure_pa = pressure_hpa * 100.0
    humidity_ratio = psychrolib.GetHumRatioFromVapPres(
        _sat_vapour_pressure_over_water_pa(dew_point_c), pressure_pa
    )
    wet_bulb_c = psychrolib.GetTWetBulbFromHumRatio(
        air_temp_c, humidity_ratio, pressure_pa
    )
    assert wet_bulb_c == pytest.approx(critical_c, abs=0.05)
    assert air_temp_c >= critical_c >= dew_point_c  # wet bulb between dew point and air


def test_sprinkler_start_air_temp_c_drier_air_starts_warmer():
    for critical_c in (-3.9, -2.2, -1.0):
        starts = [
            sprinkler_start_air_temp_c(td, critical_c)
            for td in np.arange(-20.0, -4.0, 0.5)
        ]
        # rising dew point -> lower start
        assert all(a > b for a, b in itertools.pairwise(starts))


def test_sprinkler_start_air_temp_c_margin_and_altitude():
    base = sprinkler_start_air_temp_c(-10.0, -2.2)
    assert sprinkler_start_air_temp_c(-10.0, -2.2, margin_c=1.0) > base
    # frost-physics.md 10: at 1000 m (about 899 hPa) Ta - Tw grows by about 11 %.
    high = sprinkler_start_air_temp_c(-10.0, -2.2, pressure_hpa=899.0)
    assert (high + 2.2) / (base + 2.2) == pytest.approx(1.11, abs=0.03)
    assert math.isnan(sprinkler_start_air_temp_c(math.nan, -2.2))


def test_rate_shortfall_and_capacity():
    assert rate_shortfall_mm_h(4.0, 3.2) == pytest.approx(0.8)
    assert rate_shortfall_mm_h(2.0, 3.2) == 0.0
    assert rate_shortfall_mm_h(math.inf, 3.2) == math.inf
    assert math.isnan(rate_shortfall_mm_h(math.nan, 3.2))
    assert capacity_adequate(3.0, 3.2)
    assert not capacity_adequate(3.5, 3.2)
    assert not capacity_adequate(math.inf, 3.2)
    assert not capacity_adequate(math.nan, 3.2)


def test_water_volume_m3_and_peak_flow_l_s():
    # 1 mm over 1 ha = 10 m3 (definition).
    assert water_volume_m3(1.0, 1.0, 1.0) == pytest.approx(10.0)
    assert water_volume_m3(3.5, 4.0, 8.0) == pytest.approx(1120.0)
    assert peak_flow_l_s(1.0, 1.0) == pytest.approx(10_000 / 3600)
    assert peak_flow_l_s(3.6, 5.0) == pytest.approx(50.0)


def test_sprinkler_stop_ok_vs_uf_ifas_circ_348_and_fao_fp_p168():
    # UF/IFAS Circ. 348 and FAO-FP p.168: after sunrise, wet bulb above critical and rising.
    assert sprinkler_stop_ok(True, -1.0, -2.2, 0.8)
    assert not sprinkler_stop_ok(False, 1.0, -2.2, 0.8)  # before sunrise
    assert not sprinkler_stop_ok(True, -2.5, -2.2, 0.8)  # wet bulb below critical
    assert not sprinkler_stop_ok(True, -2.2, -2.2, 0.8)  # at critical is not above
    assert not sprinkler_stop_ok(True, -1.0, -2.2, -0.3)  # falling
    assert not sprinkler_stop_ok(True, -1.0, -2.2, 0.0)  # steady
    assert not sprinkler_stop_ok(True, -1.5, -2.2, 0.8, margin_c=1.0)
    assert not sprinkler_stop_ok(True, math.nan, -2.2, 0.8)
    assert not sprinkler_stop_ok(True, -1.0, -2.2, math.nan)
    # a real rise, not sensor steps: +0.1 or +0.2 degC per hour over 30 min is within the 0.1 degC
    # resolution of the readings (MIN_RISE_C_PER_H = 0.3, an engineering choice)
    assert not sprinkler_stop_ok(True, -1.0, -2.2, 0.1)
    assert not sprinkler_stop_ok(True, -1.0, -2.2, 0.2)
    assert sprinkler_stop_ok(True, -1.0, -2.2, 0.3)
    assert not sprinkler_stop_ok(True, -1.0, -2.2, 0.3, min_rise_c_per_h=0.5)


def test_fallback_stop_air_temp_c_by_hand():
    # No unsprinkled reference station: wait for the in-block air to pass max(0 C, the air
    # temperature at which the night's driest air has its wet bulb at T10) plus 1 K.
    # Td -10, T10 -2: frost-physics.md 10 rechecked table gives 2.0 C -> 3.0 C.
    assert fallback_stop_air_temp_c(-10.0, -2.0) == pytest.approx(3.0, abs=0.1)
    # Td -5.4 (the unsprinkled hill of the demo), T10 -2.2: the table method gives about -0.4 C,
    # below 0 C, so 0 + 1 K.
    assert fallback_stop_air_temp_c(-5.4, -2.2) == pytest.approx(1.0)
    assert fallback_stop_air_temp_c(-10.0, -2.0, margin_c=2.0) == pytest.approx(4.0, abs=0.1)
    # no dew point measured at all: the UF/IFAS Circ. 348 "0 C wet bulb is safe" air temperature
    # for a very dry -15 C dew point (frost-physics.md 10 rechecked table, Tc = 0 column: Td -16 ->
    # 7.5, Td -14 -> 6.5; that column moves by up to 0.4 C on the ice/water switch) plus the margin
    assert 6.5 + 1.0 - 0.4 < fallback_stop_air_temp_c(math.nan, -2.2) < 7.5 + 1.0 + 0.4
    assert math.isnan(fallback_stop_air_temp_c(-5.0, math.nan))
