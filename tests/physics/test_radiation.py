"""Tests for frostwatch.physics.sky_emissivity, cloud_cover and longwave against published formulas and check values.

"Reference sheet" is shared/reference/frost-physics.md; each check names the section.
"""

import math

import numpy as np
import pytest
import scipy.constants

from frostwatch.physics import cloud_cover, longwave, sky_emissivity

# Magnus over water, WMO-No. 8 (CIMO Guide) Annex 4.B (reference sheet, section 10);
# used only to turn the dew points of reference sheet 2.5 into vapour pressures.


def _vp_hpa(dew_point_c):
    return 6.112 * math.exp(17.62 * dew_point_c / (243.12 + dew_point_c))


# Reference sheet 2.2 check table [computed from Flerchinger et al. 2009, Table 1 formulas]:
# (Ta degC, e hPa) -> {model: (emissivity, L-down W m-2)}.
CHECK_TABLE_2_2 = [
    (
        0.0,
        4.22,
        {
            "brunt_1932": (0.654, 206),
            "brutsaert_1975": (0.683, 216),
            "swinbank_1963": (0.686, 217),
            "idso_1981": (0.761, 240),
            "prata_1996": (0.725, 229),
            "dilley_obrien_1998": (0.713, 225),
        },
    ),
    (
        5.0,
        4.90,
        {
            "brunt_1932": (0.664, 225),
            "brutsaert_1975": (0.696, 236),
            "swinbank_1963": (0.712, 242),
            "idso_1981": (0.764, 259),
            "prata_1996": (0.731, 248),
            "dilley_obrien_1998": (0.712, 242),
        },
    ),
    (
        10.0,
        6.11,
        {
            "brunt_1932": (0.681, 248),
            "brutsaert_1975": (0.717, 261),
            "swinbank_1963": (0.738, 269),
            "idso_1981": (0.773, 282),
            "prata_1996": (0.743, 271),
            "dilley_obrien_1998": (0.718, 262),
        },
    ),
]
CASES_2_2 = [(ta, e, m, eps, down) for ta, e, row in CHECK_TABLE_2_2 for m, (eps, down) in row.items()]


@pytest.mark.parametrize(("air_temp_c", "vp_hpa", "model", "eps_ref", "down_ref_w_m2"), CASES_2_2)
def test_clear_sky_emissivity_vs_flerchinger_2009_check_table(
    air_temp_c, vp_hpa, model, eps_ref, down_ref_w_m2
):
    # Reference sheet 2.2 check table; tolerance 0.002 in emissivity and 1 W m-2 in L-down,
    # the rounding of the printed cells plus a little.
    eps = sky_emissivity.clear_sky_emissivity(air_temp_c, vp_hpa, model=model)
    assert eps == pytest.approx(eps_ref, abs=0.002)
    assert longwave.downwelling_longwave_w_m2(air_temp_c, eps) == pytest.approx(down_ref_w_m2, abs=1.0)


def test_named_emissivity_functions_match_the_dispatcher():
    for name, fn in sky_emissivity.CLEAR_SKY_EMISSIVITY_MODELS.items():
        assert sky_emissivity.clear_sky_emissivity(3.0, 5.0, model=name) == fn(3.0, 5.0)
    assert sky_emissivity.sky_emissivity_brutsaert_1975(3.0, 5.0) == sky_emissivity.clear_sky_emissivity(3.0, 5.0)
    assert sky_emissivity.sky_emissivity_swinbank_1963(3.0) == sky_emissivity.clear_sky_emissivity(3.0, 99.0, "swinbank_1963")


@pytest.mark.parametrize("model", sorted(set(sky_emissivity.CLEAR_SKY_EMISSIVITY_MODELS) - {"swinbank_1963"}))
def test_clear_sky_emissivity_rises_with_vapour_pressure(model):
    # Physical invariant: more water vapour, a more emissive sky (the projection relies on it).
    e = np.linspace(0.5, 8.7, 200)  # up to saturation at 5 degC (8.72 hPa)
    eps = sky_emissivity.clear_sky_emissivity(5.0, e, model=model)
    assert np.all(np.diff(eps) > 0.0)
    assert np.all((eps > 0.5) & (eps < 1.0))


@pytest.mark.parametrize(("air_temp_c", "down_ref_w_m2"), [(0.0, 315.7), (5.0, 339.4), (10.0, 364.5)])
def test_downwelling_longwave_w_m2_blackbody_vs_stefan_boltzmann(air_temp_c, down_ref_w_m2):
    # Reference sheet 2.1 [computed with CODATA 2018 sigma]; tolerance 0.05 W m-2 (printed rounding).
    assert longwave.downwelling_longwave_w_m2(air_temp_c, 1.0) == pytest.approx(down_ref_w_m2, abs=0.05)


def test_fao56_hourly_sigma_vs_scipy_stefan_boltzmann_and_fao56_daily_value():
    # FAO-56's hourly sigma is the Stefan-Boltzmann constant (scipy.constants, CODATA 2018) in
    # MJ m-2 h-1 K-4, rounded to four figures by FAO (tolerance 0.1 %), and the daily value FAO-56
    # prints, 4.903e-9 MJ m-2 d-1 K-4 (Allen et al. 1998, ch. 3), over 24 hours. The constant
    # itself is checked in tests/test_constants.py.
    sigma_mj_m2_h_k4 = scipy.constants.Stefan_Boltzmann * scipy.constants.hour / 1e6
    assert longwave.FAO56_SIGMA_MJ_M2_H_K4 == pytest.approx(sigma_mj_m2_h_k4, rel=1e-3)
    assert longwave.FAO56_SIGMA_MJ_M2_H_K4 == pytest.approx(4.903e-9 / 24.0, rel=1e-3)


@pytest.mark.parametrize(
    ("air_temp_c", "vp_kpa", "ratio", "rnl_ref_w_m2"),
    [(0.0, 0.422, 1.0, 78.7), (0.0, 0.422, 0.8, 57.4), (5.0, 0.490, 1.0, 82.2)],
)
def test_net_longwave_fao56_hourly_w_m2_vs_allen_1998_eq39(air_temp_c, vp_kpa, ratio, rnl_ref_w_m2):
    # FAO-56 eq. 39, hourly form; check values of reference sheet 2.4 [computed]. Tolerance
    # 0.1 W m-2 (one printed decimal). 5 / -3 degC uses e = 4.90 hPa from the 2.2 table.
    assert longwave.net_longwave_fao56_hourly_w_m2(air_temp_c, vp_kpa, ratio) == pytest.approx(
        rnl_ref_w_m2, abs=0.1
    )


def test_net_longwave_fao56_hourly_w_m2_limits_ratio_and_masks_negative_cloud_factor():
    # FAO-56: Rs/Rso is limited to <= 1.0; below 0.35/1.35 the cloud factor would be negative.
    assert longwave.net_longwave_fao56_hourly_w_m2(0.0, 0.422, 1.3) == longwave.net_longwave_fao56_hourly_w_m2(
        0.0, 0.422, 1.0
    )
    assert math.isnan(longwave.net_longwave_fao56_hourly_w_m2(0.0, 0.422, 0.2))
    assert math.isnan(longwave.net_longwave_fao56_hourly_w_m2(0.0, 4.22, 1.0))  # hPa passed as kPa


@pytest.mark.parametrize(
    ("air_temp_c", "dew_point_c", "net_ref_w_m2"),
    [(0.0, -5.0, -89.0), (5.0, -3.0, -92.0), (-2.0, -4.0, -84.0), (2.0, -10.0, -104.0)],
)
def test_net_longwave_w_m2_clear_night_vs_reference_sheet_2_5(air_temp_c, dew_point_c, net_ref_w_m2):
    # Reference sheet 2.5 [computed]: Brutsaert L-down, surface at Ta - 2 K, eps 0.98.
    # Tolerance 2 W m-2 (the sheet prints whole numbers; vapour pressure via WMO Magnus).
    net = longwave.net_longwave_w_m2(air_temp_c, _vp_hpa(dew_point_c), surface_temp_c=air_temp_c - 2.0)
    assert net == pytest.approx(net_ref_w_m2, abs=2.0)


def test_net_longwave_w_m2_clear_nights_in_literature_range():
    # Reference sheet 2.5: clear, calm frost nights give about -50 to -110 W m-2 (from memory).
    ta = np.array([-4.0, 0.0, 3.0, 8.0])
    net = longwave.net_longwave_w_m2(ta, np.array([3.0, 4.2, 5.5, 8.0]), surface_temp_c=ta - 2.0)
    assert np.all((net > -110.0) & (net < -50.0))


def test_net_longwave_w_m2_surface_defaults_to_air_temperature():
    assert longwave.net_longwave_w_m2(0.0, 4.22) == longwave.net_longwave_w_m2(0.0, 4.22, surface_temp_c=0.0)
    # Kirchhoff: eps_s (L-down - sigma Ts^4) when the reflected part is counted in L-up.
    down = longwave.downwelling_longwave_w_m2(0.0, sky_emissivity.sky_emissivity_brutsaert_1975(0.0, 4.22))
    assert longwave.net_longwave_w_m2(0.0, 4.22) == pytest.approx(0.98 * (down - 315.6), abs=0.2)


@pytest.mark.parametrize("cloud_model", sorted(cloud_cover.ALL_SKY_EMISSIVITY_MODELS))
@pytest.mark.parametrize("model", sorted(sky_emissivity.CLEAR_SKY_EMISSIVITY_MODELS))
def test_net_longwave_w_m2_cloud_never_increases_loss(model, cloud_model):
    # Physical invariant (STYLE.md): a cloudier sky never cools faster.
    cloud = np.linspace(0.0, 1.0, 101)
    net = longwave.net_longwave_w_m2(1.0, 5.0, cloud, model=model, cloud_model=cloud_model)
    assert np.all(np.diff(net) >= 0.0)
    assert np.all(net <= 0.0)


@pytest.mark.parametrize("cloud_model", ["konzelmann_1994", "unsworth_monteith_1975"])
def test_net_longwave_w_m2_overcast_gives_small_loss(cloud_model):
    # Reference sheet 2.3 rule: a full low overcast leaves a net loss of about 0-20 W m-2
    # (from memory); tolerance: the upper end of that range.
    net = longwave.net_longwave_w_m2(0.0, 4.22, cloud_frac=1.0, cloud_model=cloud_model)
    assert -20.0 <= net <= 0.0


def test_net_longwave_w_m2_overcast_jacobs_at_least_halves_the_loss():
    # Jacobs' linear factor (1 + 0.26 c) stops at eps_c * 1.26, so a full overcast keeps more
    # loss than the 0-20 W m-2 rule; it still removes more than half of the clear-sky loss.
    clear = longwave.net_longwave_w_m2(0.0, 4.22)
    overcast = longwave.net_longwave_w_m2(0.0, 4.22, cloud_frac=1.0)
    assert overcast > 0.5 * clear


def test_all_sky_emissivity_formulas_vs_flerchinger_2009_table2():
    # Flerchinger et al. (2009) Table 2 forms, evaluated by hand.
    assert cloud_cover.all_sky_emissivity_jacobs_1978(0.7, 0.5) == pytest.approx(0.7 * 1.13)
    assert cloud_cover.all_sky_emissivity_konzelmann_1994(0.7, 0.5) == pytest.approx(
        0.7 * (1 - 0.0625) + 0.952 * 0.0625
    )
    assert cloud_cover.all_sky_emissivity_unsworth_monteith_1975(0.7, 0.5) == pytest.approx(0.58 * 0.7 + 0.42)
    assert cloud_cover.all_sky_emissivity(0.7, 0.0) == pytest.approx(0.7)


def test_all_sky_emissivity_is_capped_at_one():
    assert cloud_cover.all_sky_emissivity(0.9, 1.0) == 1.0
    assert np.all(cloud_cover.all_sky_emissivity(np.array([0.85, 0.9]), 1.0) <= 1.0)


def test_cloud_frac_from_sky_temperature_round_trips_linear_mixing():
    # Unsworth & Monteith (1975) mixing with a blackbody cloud base: build the sky
    # temperature for a known fraction, then invert it.
    ta_c, e_hpa = 2.0, 5.0
    eps_clear = sky_emissivity.sky_emissivity_brutsaert_1975(ta_c, e_hpa)
    frac = np.array([0.0, 0.1, 0.35, 0.8, 1.0])
    eps_all = (1.0 - frac) * eps_clear + frac
    sky_c = (ta_c + 273.15) * eps_all**0.25 - 273.15
    assert cloud_cover.cloud_frac_from_sky_temperature(sky_c, ta_c, e_hpa) == pytest.approx(frac, abs=1e-9)


def test_cloud_frac_from_sky_temperature_clips_to_unit_interval():
    # A very cold (window-band) clear-sky reading clips to 0; a sky warmer than the air to 1.
    assert cloud_cover.cloud_frac_from_sky_temperature(-45.0, 2.0, 5.0) == 0.0
    assert cloud_cover.cloud_frac_from_sky_temperature(4.0, 2.0, 5.0) == 1.0
    assert math.isnan(cloud_cover.cloud_frac_from_sky_temperature(float("nan"), 2.0, 5.0))


def test_functions_give_float_for_float_and_array_for_array():
    assert isinstance(sky_emissivity.sky_emissivity_brutsaert_1975(0.0, 4.22), float)
    assert isinstance(longwave.net_longwave_w_m2(0.0, 4.22), float)
    out = longwave.net_longwave_w_m2(np.zeros((2, 3)), 4.22, np.array([0.0, 0.5, 1.0]))
    assert isinstance(out, np.ndarray) and out.shape == (2, 3)


@pytest.mark.parametrize(
    ("air_temp_c", "vp_hpa"),
    [
        (60.0, 5.0),
        (-60.0, 1.0),
        (5.0, 0.0),
        (5.0, -1.0),
        (5.0, 850.0),
        (5.0, 9.5),
        (-10.0, 3.2),
        (float("nan"), 5.0),
        (5.0, float("inf")),
    ],
)
def test_clear_sky_emissivity_out_of_domain_is_nan(air_temp_c, vp_hpa):
    # STYLE.md: NaN outside a formula's range, never a silent extrapolation (850 hPa: a units
    # slip; 9.5 hPa at 5 degC and 3.2 hPa at -10 degC: RH above 105 %, a sensor error).
    for name in sky_emissivity.CLEAR_SKY_EMISSIVITY_MODELS:
        if name == "swinbank_1963" and -45.0 <= air_temp_c <= 45.0:
            continue  # no humidity term to check
        assert math.isnan(sky_emissivity.clear_sky_emissivity(air_temp_c, vp_hpa, model=name))


def test_cloud_fraction_out_of_range_is_nan():
    assert math.isnan(longwave.net_longwave_w_m2(0.0, 4.22, cloud_frac=1.2))
    assert math.isnan(cloud_cover.all_sky_emissivity(0.7, -0.1))
    assert math.isnan(cloud_cover.all_sky_emissivity_konzelmann_1994(1.5, 0.5))


def test_unknown_model_names_raise_with_choices():
    with pytest.raises(ValueError, match="brutsaert_1975"):
        sky_emissivity.clear_sky_emissivity(0.0, 4.22, model="brutsaert")
    with pytest.raises(ValueError, match="jacobs_1978"):
        cloud_cover.all_sky_emissivity(0.7, 0.5, model="jacobs")
