"""Tests for the night-cooling modules (sqrt_time_cooling, wind_mixing, night_energy_balance, clear_night_prior): Brunt, the FAO-FP square-root trend, the projection.

"Reference sheet" is shared/reference/frost-physics.md; each check names the section.
"""

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from frostwatch.physics import clear_night_prior, night_energy_balance, sqrt_time_cooling, wind_mixing

# FAO-FP Ch. 5 sample of ten radiation nights, as given in reference sheet 1.1 (fixture:
# T0 and Td at sunset + 2 h, observed minimum Tn, degC).
FAO_T0_C = [3.2, 0.8, 0.2, 2.6, 4.4, 5.2, 2.7, 1.2, 4.5, 5.6]
FAO_TD_C = [-4.2, -8.8, -6.5, -6.2, -6.1, 2.6, -0.7, -1.7, -1.2, 0.1]
FAO_TN_C = [-3.1, -5.0, -6.3, -5.4, -4.0, -2.5, -4.8, -5.0, -4.4, -3.3]
FAO_HOURS_T0_TO_SUNRISE_H = 12.0  # assumption for April nights: the sample gives no sunrise times


def _minimum_c(start_temp_c, dew_point_c, hours=10.0, **kwargs):
    _, temps, _ = night_energy_balance.project_night_energy_balance(start_temp_c, dew_point_c, hours, **kwargs)
    return float(np.min(temps))


# ----------------------------------------------------------------------------- Brunt, Reuter


def test_surface_cooling_k_brunt_1941_vs_reference_sheet_1_3():
    # Reference sheet 1.3 [computed]: 80 W m-2, mu 1200, 10 h -> 14.3 K; tolerance 0.05 K (rounding).
    assert sqrt_time_cooling.surface_cooling_k_brunt_1941(80.0, 1200.0, 10 * 3600.0) == pytest.approx(14.3, abs=0.05)


def test_surface_cooling_k_brunt_1941_grows_as_sqrt_time_and_masks_bad_input():
    t_s = np.array([1.0, 4.0, 9.0]) * 3600.0
    dt = sqrt_time_cooling.surface_cooling_k_brunt_1941(80.0, 1200.0, t_s)
    assert dt / dt[0] == pytest.approx([1.0, 2.0, 3.0])
    assert math.isnan(sqrt_time_cooling.surface_cooling_k_brunt_1941(80.0, 0.0, 3600.0))
    assert math.isnan(sqrt_time_cooling.surface_cooling_k_brunt_1941(80.0, 1200.0, -1.0))


# Oke (1987), Boundary Layer Climates, 2nd ed., Table 2.1: thermal conductivity k [W m-1 K-1] and
# heat capacity C [MJ m-3 K-1] of natural surfaces (from memory, like the admittances themselves;
# reference sheet 1.3). mu = sqrt(k C) is the definition of the thermal admittance.
OKE_K_C = {
    "dry_sandy_soil": (0.30, 1.28),
    "saturated_sandy_soil": (2.20, 2.96),
    "dry_clay": (0.25, 1.42),
    "saturated_clay": (1.58, 3.10),
    "dry_peat": (0.06, 0.58),
    "fresh_snow": (0.08, 0.21),
    "still_water": (0.57, 4.18),
}


def test_thermal_admittance_table_vs_sqrt_k_c_of_oke_1987_table_2_1():
    # Each tabulated admittance against sqrt(k C) from the same table's conductivity and heat
    # capacity columns; tolerance 4 % (Oke rounds mu; dry sandy soil prints 600 for 620).
    table = sqrt_time_cooling.THERMAL_ADMITTANCE_J_M2_K_S05
    assert set(table) == set(OKE_K_C)
    for surface, (k_w_m_k, c_mj_m3_k) in OKE_K_C.items():
        assert table[surface] == pytest.approx(math.sqrt(k_w_m_k * c_mj_m3_k * 1e6), rel=0.04), surface
    # the default ground lies between Oke's dry and saturated mineral soils
    assert table["dry_sandy_soil"] < sqrt_time_cooling.GROUND_ADMITTANCE_DEFAULT_J_M2_K_S05 < table["saturated_clay"]


def test_reuter_sqrt_trend_c_vs_fao_fp_check_b():
    # Reference sheet 1.1 check B [computed]: T0 0.95, Tp -5.45, h 13 h; tolerance 0.01 degC
    # (values printed to two decimals).
    expected = [
        0.95,
        -0.83,
        -1.56,
        -2.12,
        -2.60,
        -3.02,
        -3.40,
        -3.75,
        -4.07,
        -4.38,
        -4.66,
        -4.94,
        -5.20,
        -5.45,
    ]
    hours = np.arange(14.0)
    trend = sqrt_time_cooling.reuter_sqrt_trend_c(0.95, -5.45, hours, 13.0)
    assert trend == pytest.approx(expected, abs=0.01)
    assert sqrt_time_cooling.reuter_coefficient_c_per_sqrt_h(0.95, -5.45, 13.0) == pytest.approx(-1.7750, abs=5e-5)


def test_reuter_sqrt_trend_c_is_nan_outside_t0_to_sunrise():
    assert math.isnan(sqrt_time_cooling.reuter_sqrt_trend_c(0.95, -5.45, -0.5, 13.0))
    assert math.isnan(sqrt_time_cooling.reuter_sqrt_trend_c(0.95, -5.45, 13.5, 13.0))
    assert math.isnan(sqrt_time_cooling.reuter_coefficient_c_per_sqrt_h(0.95, -5.45, 0.0))


def test_crossing_elapsed_h_round_trips_the_trend():
    coeff = sqrt_time_cooling.reuter_coefficient_c_per_sqrt_h(0.95, -5.45, 13.0)
    thresholds = np.array([-0.5, -2.2, -4.0, -5.45])
    t_h = sqrt_time_cooling.crossing_elapsed_h(0.95, coeff, thresholds)
    assert sqrt_time_cooling.reuter_sqrt_trend_c(0.95, -5.45, t_h, 13.0) == pytest.approx(thresholds, abs=1e-9)
    assert t_h[-1] == pytest.approx(13.0)


def test_crossing_elapsed_h_edge_cases():
    assert sqrt_time_cooling.crossing_elapsed_h(2.0, -1.5, 2.0) == 0.0  # already at the threshold
    assert sqrt_time_cooling.crossing_elapsed_h(2.0, -1.5, 3.0) == 0.0  # already below it
    assert math.isnan(sqrt_time_cooling.crossing_elapsed_h(2.0, 0.0, -1.0))  # never cools
    assert math.isnan(sqrt_time_cooling.crossing_elapsed_h(2.0, 0.4, -1.0))  # warming
    assert math.isnan(sqrt_time_cooling.crossing_elapsed_h(float("nan"), -1.0, -1.0))


def test_fit_sqrt_cooling_recovers_known_coefficients():
    t_h = np.linspace(0.0, 8.0, 33)
    temps = 4.2 - 1.6 * np.sqrt(t_h)
    a, b, std = sqrt_time_cooling.fit_sqrt_cooling(t_h, temps)
    assert (a, b) == pytest.approx((4.2, -1.6), abs=1e-9)
    assert std == pytest.approx(0.0, abs=1e-9)


def test_fit_sqrt_cooling_with_noise_and_recent_weighting():
    rng = np.random.default_rng(7)
    t_h = np.linspace(0.0, 8.0, 97)
    temps = 3.0 - 1.2 * np.sqrt(t_h) + rng.normal(0.0, 0.2, t_h.size)
    a, b, std = sqrt_time_cooling.fit_sqrt_cooling(t_h, temps)
    assert a == pytest.approx(3.0, abs=0.15) and b == pytest.approx(-1.2, abs=0.08)
    assert std == pytest.approx(0.2, abs=0.05)
    a_w, b_w, _ = sqrt_time_cooling.fit_sqrt_cooling(t_h, 3.0 - 1.2 * np.sqrt(t_h), recent_half_life_h=1.0)
    assert (a_w, b_w) == pytest.approx((3.0, -1.2), abs=1e-9)


def test_fit_sqrt_cooling_drops_bad_points_and_needs_two():
    a, b, std = sqrt_time_cooling.fit_sqrt_cooling([0.0, 1.0, float("nan"), 4.0, -1.0], [2.0, 1.0, 0.0, 0.0, 9.0])
    assert (a, b) == pytest.approx((2.0, -1.0)) and std == pytest.approx(0.0, abs=1e-12)
    assert all(math.isnan(v) for v in sqrt_time_cooling.fit_sqrt_cooling([1.0], [2.0]))
    assert all(math.isnan(v) for v in sqrt_time_cooling.fit_sqrt_cooling([1.0, 1.0], [2.0, 3.0]))
    assert math.isnan(sqrt_time_cooling.fit_sqrt_cooling([0.0, 4.0], [2.0, 0.0])[2])
    with pytest.raises(ValueError):
        sqrt_time_cooling.fit_sqrt_cooling([0.0, 1.0], [1.0])


# ----------------------------------------------------------------------------- projection


def test_project_night_energy_balance_vs_brunt_1941_constant_loss(monkeypatch):
    # With a constant 80 W m-2 loss, no air layer, no wind and air too dry to saturate, the
    # projection is Brunt's solution: 14.3 K after 10 h at mu 1200 (reference sheet 1.3).
    monkeypatch.setattr(night_energy_balance, "net_longwave_w_m2", lambda t, *a, **k: np.full(np.shape(t), -80.0))
    hours, temps, _ = night_energy_balance.project_night_energy_balance(
        10.0, -30.0, 10.0, air_admittance_j_m2_k_s05=0.0, thermal_admittance_j_m2_k_s05=1200.0
    )
    brunt = sqrt_time_cooling.surface_cooling_k_brunt_1941(80.0, 1200.0, hours * 3600.0)
    assert 10.0 - temps == pytest.approx(brunt, abs=1e-9)


def test_project_night_energy_balance_saturated_air_follows_its_frost_point_down(monkeypatch):
    # Same constant loss: the deposit's latent heat is not added to the layer's capacity (see
    # the function's notes), so saturated air cools as dry air does, and its dew point falls
    # with it, never above the air temperature.
    monkeypatch.setattr(night_energy_balance, "net_longwave_w_m2", lambda t, *a, **k: np.full(np.shape(t), -80.0))
    _, dry, _ = night_energy_balance.project_night_energy_balance(2.0, -25.0, 10.0)
    _, wet, dew = night_energy_balance.project_night_energy_balance(2.0, 2.0, 10.0)
    assert wet == pytest.approx(dry, abs=1e-9)
    assert np.all(dew <= wet + 1e-12)
    assert dew[-1] < 2.0 - 2.0 and np.all(np.diff(dew) <= 1e-12)


def test_stable_transfer_factor_louis_1979_hand_values():
    # 1 / (1 + 3 b Ri sqrt(1 + d Ri)), b = d = 5 (Louis 1979): by hand, Ri 0.1 -> 1/(1 + 1.5 sqrt 1.5)
    # = 0.35247; Ri 0.5 -> 1/(1 + 7.5 sqrt 3.5) = 0.06653; neutral and unstable -> 1.
    assert wind_mixing.stable_transfer_factor(0.1) == pytest.approx(0.35247, abs=1e-5)
    assert wind_mixing.stable_transfer_factor(0.5) == pytest.approx(0.06653, abs=1e-5)
    assert wind_mixing.stable_transfer_factor([0.0, -0.3]) == pytest.approx([1.0, 1.0])
    # bulk Richardson number by hand: 9.80665 * 10 m * 3 K / (273.15 K * 2^2 m2 s-2) = 0.26927
    assert wind_mixing.bulk_richardson_frac(3.0, 0.0, 2.0) == pytest.approx(0.26927, abs=1e-5)
    assert math.isnan(wind_mixing.bulk_richardson_frac(3.0, 0.0, 0.0))
    # log-law neutral coefficient at 10 m over z0 = 0.1 m: (0.4 / ln 100)^2 = 0.0075445
    assert wind_mixing.NEUTRAL_TRANSFER_COEFF_FRAC == pytest.approx(0.0075445, abs=1e-7)


def test_evening_wind_decouples_as_the_inversion_grows():
    # A 2.5 m/s evening wind used to hold its neutral-ish mixing all night; with the stable
    # factor the crop air keeps cooling once the inversion builds, nearer the calm night.
    calm = _minimum_c(8.0, -2.0, wind_speed_m_s=0.0)
    breezy = _minimum_c(8.0, -2.0, wind_speed_m_s=2.5)
    windy = _minimum_c(8.0, -2.0, wind_speed_m_s=8.0)
    assert calm < breezy < windy
    assert breezy - calm < 0.5 * (windy - calm)


def test_project_night_energy_balance_shapes_and_dew_point():
    hours, temps, dew = night_energy_balance.project_night_energy_balance(3.0, -5.0, 10.0, step_s=300)
    assert hours.shape == temps.shape == dew.shape == (121,)
    assert hours[0] == 0.0 and hours[-1] == pytest.approx(10.0)
    assert temps[0] == 3.0 and np.all(np.diff(temps) <= 0.0)
    assert dew[0] == pytest.approx(-5.0, abs=1e-9) and np.all(dew <= temps + 1e-12)
    hours, _, _ = night_energy_balance.project_night_energy_balance(3.0, -5.0, 1.1, step_s=600)
    assert hours[-1] == pytest.approx(1.1) and hours.size == 8


def test_project_night_energy_balance_out_of_domain_is_nan_and_bad_structure_raises():
    for kwargs in (
        {"dew_point_c": 4.0},
        {"dew_point_c": -243.12},
        {"wind_speed_m_s": -1.0},
        {"cloud_frac": 1.5},
        {"pressure_hpa": 101.3},
        {"start_temp_c": float("nan")},
    ):
        args = {"start_temp_c": 3.0, "dew_point_c": -5.0, **kwargs}
        _, temps, dew = night_energy_balance.project_night_energy_balance(hours=10.0, **args)
        assert np.all(np.isnan(temps)) and np.all(np.isnan(dew))
    for hours, step in ((0.0, 300), (-1.0, 300), (30.0, 300), (10.0, 0.0), (float("nan"), 300)):
        with pytest.raises(ValueError):
            night_energy_balance.project_night_energy_balance(3.0, -5.0, hours, step_s=step)


def test_project_night_energy_balance_takes_slight_supersaturation_as_saturated():
    # Hygrometers read a little over 100 % RH in dew; up to 105 % counts as saturated air.
    _, sat, _ = night_energy_balance.project_night_energy_balance(2.0, 2.0, 10.0)
    _, over, dew = night_energy_balance.project_night_energy_balance(2.0, 2.3, 10.0)
    assert over == pytest.approx(sat, abs=1e-12) and dew[0] == pytest.approx(2.0)
    _, far_over, _ = night_energy_balance.project_night_energy_balance(2.0, 3.5, 10.0)
    assert np.all(np.isnan(far_over))
    assert math.isnan(clear_night_prior.clear_night_minimum_prior_c(2.0, -300.0, 10.0))


def test_clear_night_minimum_prior_c_sanity_calm_clear():
    # Brief: T0 3, Td -5, 10 h, calm and clear should land about -3..-6 degC, the range of the
    # FAO-FP sample minima.
    assert -6.0 <= clear_night_prior.clear_night_minimum_prior_c(3.0, -5.0, 10.0) <= -3.0


def test_air_admittance_tuning_vs_fao_fp_ch5_sample_held_out_night_by_night():
    # The prior's one free constant is tuned on this sample, so checking the shipped constant on it
    # would check the fit against itself. Instead, the tuning procedure is cross-validated: for each
    # of the ten nights, the admittance is tuned on the other nine (grid 500..6000 in steps of 100,
    # least MAE) and that night is projected with it. The shipped constant itself is checked on
    # held-out open data (test_cooling_open_data.py, pvlib's Greensboro TMY3 year).
    # Tolerance: MAE <= 1.5 degC, the tolerance Reuter-type minimum forecasts reach (Dalla Nora,
    # de Franceschi & Zardi 2005; reference sheet 1.2 and 8), and |bias| <= 0.5 degC. Measured:
    # MAE 1.19, bias -0.30, RMSE 1.41 (the same procedure's in-sample MAE was 1.07).
    grid = np.arange(500.0, 6001.0, 100.0)
    err = np.array([
        [_minimum_c(t0, td, FAO_HOURS_T0_TO_SUNRISE_H, air_admittance_j_m2_k_s05=mu) - tn
         for t0, td, tn in zip(FAO_T0_C, FAO_TD_C, FAO_TN_C, strict=True)]
        for mu in grid
    ])
    held_out = []
    for night in range(len(FAO_TN_C)):
        others = np.arange(len(FAO_TN_C)) != night
        best = int(np.argmin(np.mean(np.abs(err[:, others]), axis=1)))
        held_out.append(err[best, night])
    held_out = np.array(held_out)
    assert np.mean(np.abs(held_out)) <= 1.5
    assert abs(np.mean(held_out)) <= 0.5


def test_clear_night_minimum_prior_c_broadcasts_and_masks():
    prior = clear_night_prior.clear_night_minimum_prior_c(np.array([[1.0], [3.0]]), -5.0, [8.0, 10.0, 12.0])
    assert prior.shape == (2, 3)
    assert np.all(np.diff(prior, axis=1) <= 0.0)  # a longer night is never warmer
    assert math.isnan(clear_night_prior.clear_night_minimum_prior_c(3.0, -5.0, 0.0))
    assert math.isnan(clear_night_prior.clear_night_minimum_prior_c(3.0, 5.0, 10.0))
    assert isinstance(clear_night_prior.clear_night_minimum_prior_c(3.0, -5.0, 10.0), float)


def test_project_night_energy_balance_wind_and_cloud_raise_the_minimum():
    calm = _minimum_c(3.0, -5.0)
    assert _minimum_c(3.0, -5.0, wind_speed_m_s=2.5) > calm + 1.0
    assert _minimum_c(3.0, -5.0, cloud_frac=1.0, cloud_model="konzelmann_1994") > calm + 3.0


# Physical invariants (STYLE.md; issue "Overnight projection"): hypothesis over radiation-night
# inputs. Tolerance 1e-9 K: the projection is built to be monotone, not merely close to it.
TEMP = st.floats(-8.0, 15.0)
SPREAD = st.floats(0.0, 15.0)
WIND = st.floats(0.0, 4.0)
CLOUD = st.floats(0.0, 1.0)
HOURS = st.floats(2.0, 14.0)
TOL_K = 1e-9


@settings(max_examples=60, deadline=None)
@given(TEMP, SPREAD, WIND, CLOUD, CLOUD, HOURS)
def test_project_night_energy_balance_clearer_sky_never_warmer(t0, spread, wind, c1, c2, hours):
    clear, cloudy = sorted((c1, c2))
    lo = _minimum_c(t0, t0 - spread, hours, wind_speed_m_s=wind, cloud_frac=clear)
    hi = _minimum_c(t0, t0 - spread, hours, wind_speed_m_s=wind, cloud_frac=cloudy)
    assert lo <= hi + TOL_K


@settings(max_examples=60, deadline=None)
@given(TEMP, SPREAD, SPREAD, WIND, CLOUD, HOURS)
def test_project_night_energy_balance_higher_dew_point_never_colder(t0, s1, s2, wind, cloud, hours):
    small, large = sorted((s1, s2))
    humid = _minimum_c(t0, t0 - small, hours, wind_speed_m_s=wind, cloud_frac=cloud)
    dry = _minimum_c(t0, t0 - large, hours, wind_speed_m_s=wind, cloud_frac=cloud)
    assert humid >= dry - TOL_K


@settings(max_examples=60, deadline=None)
@given(TEMP, SPREAD, WIND, WIND, CLOUD, HOURS)
def test_project_night_energy_balance_more_wind_never_colder(t0, spread, w1, w2, cloud, hours):
    calm, windy = sorted((w1, w2))
    lo = _minimum_c(t0, t0 - spread, hours, wind_speed_m_s=calm, cloud_frac=cloud)
    hi = _minimum_c(t0, t0 - spread, hours, wind_speed_m_s=windy, cloud_frac=cloud)
    assert hi >= lo - TOL_K


@settings(max_examples=60, deadline=None)
@given(TEMP, st.floats(0.0, 6.0), st.floats(-12.0, 0.0), WIND, CLOUD, HOURS)
def test_project_night_energy_balance_monotone_in_start_temperature(
    t0, warmer_by, dew_rel, wind, cloud, hours
):
    # Same dew point for both starts (at or below the colder start).
    dew = t0 + dew_rel
    cold = _minimum_c(t0, dew, hours, wind_speed_m_s=wind, cloud_frac=cloud)
    warm = _minimum_c(t0 + warmer_by, dew, hours, wind_speed_m_s=wind, cloud_frac=cloud)
    assert warm >= cold - TOL_K


@settings(max_examples=60, deadline=None)
@given(TEMP, SPREAD, WIND, CLOUD, HOURS)
def test_project_night_energy_balance_dew_point_never_above_air(t0, spread, wind, cloud, hours):
    _, temps, dew = night_energy_balance.project_night_energy_balance(
        t0, t0 - spread, hours, wind_speed_m_s=wind, cloud_frac=cloud
    )
    assert np.all(dew <= temps + 1e-9)
    assert np.all(np.diff(temps) <= TOL_K)


def test_energy_balance_saturation_is_ashrae_hyland_wexler_vs_psychrolib():
    """The cooling model's air holds the vapour the humidity module says it does: over water at
    and above 0 degC, over ice below (frost deposits), both Hyland & Wexler (1983) as in ASHRAE
    ch. 1, checked against psychrolib's own implementation (tolerance 0.05 %: the two use the same
    coefficients; Magnus, used before, differs by up to 0.3 % over this range)."""
    psychrolib = pytest.importorskip("psychrolib")
    psychrolib.SetUnitSystem(psychrolib.SI)
    temps = np.array([-30.0, -15.0, -5.0, -0.5, 0.0, 5.0, 15.0, 30.0])
    ours = night_energy_balance._saturation_vp_hpa(temps)
    ref = np.array([psychrolib.GetSatVapPres(float(t)) / 100.0 for t in temps])
    assert np.allclose(ours, ref, rtol=5e-4)
    # the vapour pressure of a dew point and back: over water (the hygrometer convention; psychrolib
    # reads a dew point below 0 degC over ice, so it is compared above 0 only)
    for td in (-20.0, -4.0, 3.0, 18.0):
        e_hpa = night_energy_balance._vp_from_dew_point_hpa(td)
        if td > 0.0:
            assert e_hpa == pytest.approx(psychrolib.GetVapPresFromTDewPoint(td) / 100.0, rel=5e-4)
        assert float(night_energy_balance._dew_point_from_vp_c(e_hpa)) == pytest.approx(td, abs=1e-6)


def test_clear_night_minimum_prior_c_of_many_nights_is_each_night_alone():
    """The array path steps all nights together (a season's priors in one pass); each night's
    minimum must be the scalar path's, bit for bit, in and out of domain, on nights that cool
    past the first part of the loss curve and nights that do not."""
    rng = np.random.default_rng(0)
    n = 400
    t0 = rng.uniform(-10.0, 25.0, n)
    td = t0 - rng.uniform(0.0, 15.0, n)
    hours = rng.uniform(0.1, 15.0, n)
    wind = rng.uniform(0.0, 6.0, n)
    wind[::7] = 0.0
    cloud = rng.uniform(0.0, 1.0, n)
    cloud[::5] = 0.0
    p = rng.uniform(850.0, 1030.0, n)
    td[::50] = t0[::50] + 0.3  # a hygrometer slightly over saturation
    hours[::97] = 30.0  # out of domain
    t0[::101] = np.nan
    t0[1::60], td[1::60], hours[1::60], wind[1::60], cloud[1::60] = 30.0, -30.0, 24.0, 0.0, 0.0  # cools over 20 K
    many = clear_night_prior.clear_night_minimum_prior_c(t0, td, hours, wind, cloud, p)
    one = np.array([clear_night_prior.clear_night_minimum_prior_c(*a) for a in zip(t0, td, hours, wind, cloud, p, strict=True)])
    assert np.array_equal(many, one, equal_nan=True)
    assert np.isnan(one).sum() >= 8 and np.sum(t0 - one > clear_night_prior.FIRST_SPAN_K) >= 1
