"""Tonight's over-tree application rate: the heat budget of an iced plant, checked by hand and
against published practice. No table governs (the Gerber & Harrison cells could not be read in a
printed source, frost-physics.md 10)."""

import itertools
import math

import numpy as np
import psychrolib
import pytest

from frostwatch.physics.sprinklers import (
    CALM_WIND_FLOOR_M_S,
    PRACTICE_RATE_MM_H,
    heat_released_w_m2_per_mm_h,
    iced_canopy_heat_loss,
    rate_for_heat_loss_mm_h,
    rate_tonight_mm_h,
)

psychrolib.SetUnitSystem(psychrolib.SI)
SIGMA = 5.670374419e-8  # Stefan-Boltzmann constant, CODATA 2018 [W m-2 K-4]


def _e_water_hpa(t_c):
    # ASHRAE Handbook-Fundamentals 2017 ch. 1 eq. 6, over liquid water (the dew-point convention)
    t = t_c + 273.15
    return math.exp(-5.8002206e3 / t + 1.3914993 - 4.8640239e-2 * t + 4.1764768e-5 * t**2
                    - 1.4452093e-8 * t**3 + 6.5459673 * math.log(t)) / 100.0


def test_iced_canopy_heat_loss_by_hand():
    # Air -4 C, dew point -8 C, wind 1 m/s, 1013.25 hPa, clear sky; the plant held at 0 C.
    ta, td, u, p = -4.0, -8.0, 1.0, 1013.25
    e_a = _e_water_hpa(td)  # 3.35 hPa
    # radiation: Brutsaert (1975) eps = 1.24 (e/T)^(1/7); the 0 C surface as a black body (an
    # upper bound: no tabulated emissivity of ice is used)
    eps = 1.24 * (e_a / (ta + 273.15)) ** (1 / 7)
    down = eps * SIGMA * (ta + 273.15) ** 4
    up = SIGMA * 273.15**4
    radiation = up - down
    # FAO-56 eq. 4, reference grass (h 0.12 m, wind at 2 m): d 0.08, zom 0.01476, zoh 0.001476
    r_a = math.log(1.92 / 0.01476) * math.log(1.92 / 0.001476) / (0.41**2 * u)  # 207.7 s/m
    rho = p * 100 / (287.047 * (ta + 273.15))
    sensible = rho * 1004.67 * (0.0 - ta) / r_a
    e_ice_0 = psychrolib.GetSatVapPres(0.0) / 100.0  # psychrolib: over ice at and below 0.01 C
    latent = rho * 1004.67 * (e_ice_0 - e_a) / (5.75e-4 * p * r_a)  # WMO-No. 8 ice-bulb coefficient
    rate = (radiation + sensible + latent) / (333.7e3 / 3600.0)  # Lf as metpy.constants.Lf
    loss = iced_canopy_heat_loss(ta, td, u, p)
    assert loss.radiation_w_m2 == pytest.approx(radiation, rel=2e-3)
    assert loss.sensible_w_m2 == pytest.approx(sensible, rel=2e-3)
    assert loss.latent_w_m2 == pytest.approx(latent, rel=3e-3)
    assert rate_tonight_mm_h(ta, td, u).required_mm_h == pytest.approx(rate, rel=3e-3)
    assert 1.5 < rate < 2.5  # about 1.9 mm/h


def test_rate_tonight_mm_h_vs_msu_longstroth_2012():
    # MSU Extension (Longstroth 2012; confirmed in frost-physics.md 10): systems of 3.0-3.8 mm/h
    # protect to about -5.6 C (22 F) with no wind and -4.4 to -3.9 C (24-25 F) in light wind. The
    # heat budget is a lower bound, so at those conditions it must not ask for more than they
    # deliver; light wind taken as 2 m/s (4.5 mph), dew points 2-6 K below the air.
    for td in (-7.6, -9.6, -11.6):
        calm = rate_tonight_mm_h(-5.6, td, 0.0).required_mm_h
        assert 1.0 < calm <= PRACTICE_RATE_MM_H[0]
    for t, td in ((-4.4, -7.0), (-3.9, -8.0)):
        light = rate_tonight_mm_h(t, td, 2.0).required_mm_h
        assert 1.0 < light <= PRACTICE_RATE_MM_H[1]


def test_rate_tonight_mm_h_vs_cooper_smith_martsolf_1997():
    # Cooper, Smith & Martsolf (1997): over-tree systems under 2.5 mm/h were judged unsafe for
    # citrus after the 1962 advective freeze (cold, dry, windy). The budget there must exceed it.
    r = rate_tonight_mm_h(-6.0, -12.0, 4.0)
    assert r.required_mm_h > 2.5


def test_rate_tonight_more_wind_drier_and_colder_need_more():
    winds = np.arange(0.5, 4.6, 0.25)
    for t_c in (-3.0, -5.0, -7.0):
        rates = [rate_tonight_mm_h(t_c, t_c - 3, u).required_mm_h for u in winds]
        assert all(b > a for a, b in itertools.pairwise(rates))
    temps = np.arange(-9.0, -1.0, 0.25)
    rates = [rate_tonight_mm_h(t, t - 3, 1.0).required_mm_h for t in temps]
    assert all(a > b for a, b in itertools.pairwise(rates))
    dews = np.arange(-15.0, -4.0, 0.5)
    rates = [rate_tonight_mm_h(-4.0, td, 1.0).required_mm_h for td in dews]
    assert all(a > b for a, b in itertools.pairwise(rates))  # drier air sublimes more ice


def test_rate_tonight_calm_floor_and_unknown_wind():
    assert CALM_WIND_FLOOR_M_S == 0.5
    assert rate_tonight_mm_h(-4.0, -7.0, 0.0).required_mm_h == rate_tonight_mm_h(-4.0, -7.0, 0.5).required_mm_h
    r = rate_tonight_mm_h(-4.0, -7.0, math.nan)
    assert math.isnan(r.required_mm_h) and math.isnan(r.heat_budget_mm_h)
    assert r.table.rate_mm_h is None and not r.beyond_table and r.governed_by == "heat budget"


def test_rate_for_heat_loss_mm_h():
    assert heat_released_w_m2_per_mm_h() == pytest.approx(333.7e3 / 3600)
    assert rate_for_heat_loss_mm_h(92.69) == pytest.approx(1.0, abs=1e-3)
    assert rate_for_heat_loss_mm_h(-10.0) == 0.0
    assert math.isnan(rate_for_heat_loss_mm_h(math.nan))


def test_cloud_cuts_the_radiative_loss():
    clear = iced_canopy_heat_loss(-3.0, -6.0, 1.0)
    cloudy = iced_canopy_heat_loss(-3.0, -6.0, 1.0, cloud_frac=1.0)
    assert cloudy.radiation_w_m2 < clear.radiation_w_m2
    # frost-physics.md 2.5: clear calm frost nights lose 50-110 W/m2 at air temperature; a surface
    # held at 0 C in -3 C air radiates more, so it sits at or above the top of that range
    assert 95.0 <= clear.radiation_w_m2 <= 135.0
