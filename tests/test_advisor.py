"""The advice engine per block: literals in, Advice out (no clock, no I/O).

Physics references are those of the physics tests; here the advice must carry them through:
FAO-FP p. 160 (fans: wind <= 2.5 m/s, no supercooled fog), FAO-FP Table 7.5 / psychrolib (start
air temperature), frost-physics.md 4.2 and 10 (heat budget, table cross-check), UF/IFAS Circ. 348
(stop rule). The 0.3-0.5 fan gain is an engineering assumption from memory.
"""

from __future__ import annotations

import dataclasses
import datetime as dt
import itertools
import math

import numpy as np
import psychrolib
import pytest

from frostwatch.advisor import CAUTIONS, STOP_AFTER_SUNRISE_H, advise
from frostwatch.config import PROTECTION_METHODS, Block
from frostwatch.display import Display
from frostwatch.models import Projection
from frostwatch.physics import sprinklers

psychrolib.SetUnitSystem(psychrolib.SI)

UTC = dt.UTC
NOW = dt.datetime(2027, 4, 15, 8, 0, tzinfo=UTC)  # 01:00 local at a -7 h site
SUNRISE = dt.datetime(2027, 4, 15, 13, 10, tzinfo=UTC)
CROSSING = dt.datetime(2027, 4, 15, 10, 0, tzinfo=UTC)


def block(**kw) -> Block:
    base = dict(id="b1", crop="apple", stage="full bloom", kill_10pct_c=-2.2, kill_90pct_c=-3.9,
                critical_source="test", protection="wind_machine", margin_c=2.0, mobilisation_min=30.0,
                wind_machines=2)
    base.update(kw)
    return Block(**base)


def sprinkler_block(**kw) -> Block:
    base = dict(protection="overtree_sprinkler", margin_c=1.0, application_rate_mm_h=3.5, area_ha=4.0,
                water_supply_l_s=45.0, mobilisation_min=20.0)
    base.update(kw)
    return block(**base)


def projection(**kw) -> Projection:
    base = dict(time_utc=NOW, block="b1", station="b1-low", air_temp_c=1.0, dew_point_c=-5.0, wet_bulb_c=-1.6,
                predicted_min_c=-3.5, predicted_min_at_utc=SUNRISE, band_c=0.8,
                crossings_utc={"t10_margin": CROSSING, "wet_bulb_t10_margin": CROSSING, "t10": None},
                inversion_c=4.0, projected_inversion_c=4.0, inversion_class="strong", wind_speed_m_s=0.6,
                regime="radiation", method="nowcast", sunset_utc=NOW - dt.timedelta(hours=6), sunrise_utc=SUNRISE)
    base.update(kw)
    return Projection(**base)


def text(adv) -> str:
    return " ".join((adv.action, *adv.reasons, adv.stop_rule, *adv.alternatives))


# ---- cautions, risk, timing ------------------------------------------------------------------


@pytest.mark.parametrize("method", PROTECTION_METHODS)
@pytest.mark.parametrize("pmin", [-5.0, -0.5, 5.0])
def test_every_advice_carries_the_cautions(method, pmin):
    b = sprinkler_block(protection=method) if "sprinkler" in method else block(protection=method)
    adv = advise(projection(predicted_min_c=pmin), b, NOW)
    assert adv.cautions == CAUTIONS
    assert any("grower decides" in c for c in adv.cautions)
    unknown = advise(projection(air_temp_c=None, predicted_min_c=None), b, NOW)
    assert unknown.risk == "unknown" and unknown.cautions == CAUTIONS


def test_start_by_is_crossing_minus_mobilisation():
    adv = advise(projection(), block(mobilisation_min=45), NOW)
    assert adv.risk == "likely"
    assert adv.start_by_utc == CROSSING - dt.timedelta(minutes=45)
    assert adv.details["crossing_utc"] == CROSSING
    assert "be ready to start the wind machines by" in adv.action


def test_risk_levels():
    b = block()
    assert advise(projection(air_temp_c=-2.5), b, NOW).risk == "now"
    assert advise(projection(predicted_min_c=0.3, band_c=0.8), b, NOW).risk == "possible"
    assert advise(projection(predicted_min_c=3.0, band_c=0.8, crossings_utc={}), b, NOW).risk == "low"
    assert advise(projection(), b, SUNRISE + dt.timedelta(minutes=5)).risk == "morning"


# ---- wind machines -----------------------------------------------------------------------------


def test_wind_machine_useful_with_inversion_and_light_wind_gain_is_a_labelled_assumption():
    adv = advise(projection(projected_inversion_c=4.0, predicted_min_c=-2.5), block(), NOW)
    assert adv.details["wind_machine_useful"]
    assert adv.expected_gain_c == pytest.approx(0.4 * 4.0)
    assert adv.details["expected_gain_low_c"] == pytest.approx(1.2)
    assert adv.details["expected_gain_high_c"] == pytest.approx(2.0)
    assert "engineering assumption" in text(adv)
    assert "start the wind machines" in adv.action


@pytest.mark.parametrize("wind", np.arange(2.6, 9.0, 0.7))
@pytest.mark.parametrize("risk_pmin", [-3.5, -1.0])
def test_no_advice_to_start_fans_in_wind_above_the_limit(wind, risk_pmin):
    # FAO-FP p. 160: not above 2.5 m/s
    adv = advise(projection(wind_speed_m_s=float(wind), predicted_min_c=risk_pmin), block(), NOW)
    assert not adv.details["wind_machine_useful"]
    assert "start the wind machines" not in adv.action
    assert "too windy for fans" in text(adv)
    assert adv.alternatives  # and what else helps
    adv_now = advise(projection(wind_speed_m_s=float(wind), air_temp_c=-2.5), block(), NOW)
    assert "start the wind machines" not in adv_now.action


def test_weak_inversion_says_why_and_what_else_helps():
    adv = advise(projection(inversion_c=0.8, projected_inversion_c=0.8), block(), NOW)
    assert not adv.details["wind_machine_useful"]
    assert "inversion weak" in text(adv)
    assert any("heaters" in a for a in adv.alternatives)
    assert "other means" in adv.action


def test_supercooled_fog_blocks_fans_and_possible_fog_is_flagged():
    adv = advise(projection(), block(), NOW, supercooled_fog=True)
    assert not adv.details["wind_machine_useful"]
    assert "supercooled fog" in text(adv)
    near = advise(projection(air_temp_c=-0.5, dew_point_c=-0.8), block(), NOW)
    assert near.details["fog_possible"]
    assert "no fog" in near.action


def test_projected_minimum_far_below_critical_fans_alone_will_not_hold():
    adv = advise(projection(predicted_min_c=-6.0, projected_inversion_c=2.0), block(), NOW)
    assert adv.details["wind_machine_useful"] and not adv.details["wind_machine_sufficient"]
    assert "more than fans are expected to give" in text(adv)
    assert any("add heaters" in a for a in adv.alternatives)


def test_stronger_inversion_gives_larger_gain():
    gains = [advise(projection(projected_inversion_c=float(inv)), block(), NOW).expected_gain_c
             for inv in np.arange(1.5, 9.0, 0.5)]
    assert all(b > a for a, b in itertools.pairwise(gains))


def test_unknown_wind_is_not_calm_for_fans():
    adv = advise(projection(wind_speed_m_s=None), block(), NOW)
    assert "wind unknown" in text(adv)
    assert "if the wind is below 2.5 m/s" in adv.action


def test_unknown_inversion_is_not_zero_and_not_useful():
    adv = advise(projection(inversion_c=None, projected_inversion_c=None), block(), NOW)
    assert not adv.details["wind_machine_useful"]
    assert "inversion unknown" in text(adv)


# ---- sprinklers ----------------------------------------------------------------------------------


def _psychrolib_wet_bulb_c(air_c, dew_point_c, pressure_hpa=1013.25):
    # psychrolib (ASHRAE 2017), dew point over liquid water as hygrometers report it (see
    # tests/physics/test_sprinklers.py for why the vapour pressure is computed over water).
    t = dew_point_c + 273.15
    pw = math.exp(-5.8002206e3 / t + 1.3914993 - 4.8640239e-2 * t + 4.1764768e-5 * t**2
                  - 1.4452093e-8 * t**3 + 6.5459673 * math.log(t))
    w = psychrolib.GetHumRatioFromVapPres(pw, pressure_hpa * 100)
    return psychrolib.GetTWetBulbFromHumRatio(air_c, w, pressure_hpa * 100)


@pytest.mark.parametrize("dew_point_c", [-12.0, -8.0, -5.0])
def test_sprinkler_start_air_temp_vs_psychrolib(dew_point_c):
    # the start air temperature: psychrolib's wet bulb there equals T10 + margin within 0.05 C
    b = sprinkler_block()
    adv = advise(projection(dew_point_c=dew_point_c), b, NOW)
    assert _psychrolib_wet_bulb_c(adv.start_air_temp_c, dew_point_c) == pytest.approx(-1.2, abs=0.05)
    assert _psychrolib_wet_bulb_c(adv.stop_air_temp_c, dew_point_c) == pytest.approx(-2.2, abs=0.05)
    assert "must be running before the air cools to" in adv.action


def test_sprinkler_start_vs_rechecked_table_frost_physics_10():
    # frost-physics.md 10, rechecked table: Td -10, Tc -2 -> 2.0 C (margin 0 on T10 = -2)
    adv = advise(projection(dew_point_c=-10.0), sprinkler_block(kill_10pct_c=-2.0, margin_c=0.0), NOW)
    assert adv.start_air_temp_c == pytest.approx(2.0, abs=0.1)


def test_drier_air_gives_higher_start_temperature():
    starts = [advise(projection(dew_point_c=float(td)), sprinkler_block(), NOW).start_air_temp_c
              for td in np.arange(-16.0, -2.0, 1.0)]
    assert all(a > b for a, b in itertools.pairwise(starts))


def test_more_wind_needs_a_higher_rate():
    rates = [advise(projection(wind_speed_m_s=float(u)), sprinkler_block(), NOW).required_rate_mm_h
             for u in np.arange(0.0, 4.5, 0.3)]
    assert all(b >= a for a, b in itertools.pairwise(rates)) and rates[-1] > rates[0]


def test_required_rate_is_the_larger_of_heat_budget_and_table_and_says_which():
    adv = advise(projection(predicted_min_c=-5.6, wind_speed_m_s=2.9), sprinkler_block(), NOW)
    d = adv.details
    assert d["required_mm_h"] == pytest.approx(max(d["heat_budget_mm_h"], d["table_mm_h"]), abs=0.01)
    assert d["governed_by"] == "table (from memory)"
    assert "table (from memory) governs" in text(adv)


def test_capacity_short_says_more_harm_than_good_and_consult_an_adviser():
    adv = advise(projection(predicted_min_c=-5.6, wind_speed_m_s=2.9), sprinkler_block(application_rate_mm_h=3.5), NOW)
    assert adv.details["may_do_harm"]
    t = text(adv)
    assert "more harm than good" in t and "adviser" in t
    ok = advise(projection(predicted_min_c=-3.0, wind_speed_m_s=0.3),
                sprinkler_block(application_rate_mm_h=6.0, water_supply_l_s=100.0), NOW)
    assert not ok.details.get("may_do_harm")
    assert "more harm than good" not in text(ok)


def test_sprinkling_in_wind_above_4_5_m_s_is_not_advised():
    adv = advise(projection(wind_speed_m_s=5.5), sprinkler_block(application_rate_mm_h=30.0), NOW)
    assert "not advised in that wind" in text(adv)
    assert adv.details["may_do_harm"]


def test_unknown_wind_is_not_calm_for_sprinklers():
    adv = advise(projection(wind_speed_m_s=None), sprinkler_block(application_rate_mm_h=6.0), NOW)
    assert adv.details["wind_known"] is False and adv.details["required_mm_h"] is None
    assert "even in calm air tonight needs at least" in text(adv)
    assert "enough only if the air stays calm" in text(adv)


def test_water_volume_hours_and_peak_flow():
    b = sprinkler_block()
    adv = advise(projection(), b, NOW)
    start = CROSSING - dt.timedelta(minutes=20)
    hours = (SUNRISE + dt.timedelta(hours=STOP_AFTER_SUNRISE_H) - start).total_seconds() / 3600
    assert adv.resources["hours"] == pytest.approx(hours, abs=0.05)
    assert adv.resources["water_m3"] == pytest.approx(sprinklers.water_volume_m3(3.5, 4.0, hours), abs=1)
    assert adv.resources["peak_flow_l_s"] == pytest.approx(38.9, abs=0.05)  # 3.5 mm/h on 4 ha
    assert "peak flow 38.9 L/s" in text(adv)
    short = advise(projection(), sprinkler_block(water_supply_l_s=20.0), NOW)
    assert short.resources["supply_short"] and "never the whole block at a lower rate" in text(short)


def test_wind_machine_fuel_and_energy():
    adv = advise(projection(), block(fuel_l_per_h=40.0), NOW)
    assert adv.resources["fuel_l"] == pytest.approx(40.0 * adv.resources["hours"], rel=0.02)
    adv = advise(projection(), block(), NOW)
    assert adv.resources["energy_kwh"] == pytest.approx(2 * 75.0 * adv.resources["hours"], rel=0.02)  # hours shown to 0.1 h


def test_undertree_sprinkler_minimum_rate():
    adv = advise(projection(), sprinkler_block(protection="undertree_sprinkler", application_rate_mm_h=0.5), NOW)
    assert "lines may freeze" in text(adv)


# ---- stopping ------------------------------------------------------------------------------------


def _series(station, start_c, slope_c_per_h, now):
    t = now.timestamp() + np.arange(-1800.0, 1.0, 120.0)
    return {(station, "air_temperature"): (t, start_c + slope_c_per_h * (t - now.timestamp()) / 3600.0)}


MORNING = SUNRISE + dt.timedelta(minutes=40)


def test_sprinklers_stop_only_once_wet_bulb_above_t10_and_rising():
    b = sprinkler_block()
    p = projection(air_temp_c=0.5, dew_point_c=-4.0, wet_bulb_c=-1.5, time_utc=MORNING)
    rising = advise(p, b, MORNING, series=_series("b1-low", 0.5, 1.5, MORNING))
    assert rising.details["stop_ok"] is True and "may stop once the ice is melting" in rising.action
    falling = advise(p, b, MORNING, series=_series("b1-low", 0.5, -0.5, MORNING))
    assert falling.details["stop_ok"] is False and "keep the sprinklers running" in falling.action
    no_trend = advise(p, b, MORNING)
    assert no_trend.details["stop_ok"] is None and "watch it" in no_trend.action


def test_sprinklers_never_stop_while_wet_bulb_at_or_below_t10():
    b = sprinkler_block()
    p = projection(air_temp_c=-1.0, dew_point_c=-5.0, wet_bulb_c=-2.6, time_utc=MORNING)
    adv = advise(p, b, MORNING, series=_series("b1-low", -1.0, 3.0, MORNING))
    assert adv.details["stop_ok"] is False
    assert "keep the sprinklers running" in adv.action


def test_fans_stop_once_air_above_t10_plus_margin_and_rising():
    b = block()
    warm = projection(air_temp_c=0.5, time_utc=MORNING)
    assert advise(warm, b, MORNING, series=_series("b1-low", 0.5, 1.0, MORNING)).details["stop_ok"] is True
    assert advise(warm, b, MORNING, series=_series("b1-low", 0.5, -0.4, MORNING)).details["stop_ok"] is False
    cold = projection(air_temp_c=-0.5, time_utc=MORNING)
    adv = advise(cold, b, MORNING, series=_series("b1-low", -0.5, 1.0, MORNING))
    assert adv.details["stop_ok"] is False and "keep protection running" in adv.action


def test_stop_rule_is_given_with_the_start_advice():
    assert "never while the wet bulb is at or below T10" in advise(projection(), sprinkler_block(), NOW).stop_rule
    adv = advise(projection(), block(), NOW)
    assert "after sunrise" in adv.stop_rule and adv.stop_rule in adv.reasons


# ---- display -------------------------------------------------------------------------------------


@pytest.mark.parametrize("b", [block(), sprinkler_block(), block(protection="heaters"), block(protection="none")])
def test_advice_text_uses_the_display_unit(b):
    d = Display("degF", "America/Los_Angeles")
    for p in (projection(), projection(inversion_c=0.8, projected_inversion_c=0.8, wind_speed_m_s=3.0),
              projection(air_temp_c=-2.5)):
        adv = advise(p, b, NOW, display=d)
        t = text(adv)
        assert "°F" in t
        assert "°C" not in t and " C " not in t and " C)" not in t
    adv = advise(projection(), block(), NOW, display=d)
    assert "02:30" in adv.action  # local time of the start-by (10:00 UTC = 03:00 PDT, less 30 min)


def test_advice_is_pure_same_inputs_same_output():
    p, b = projection(), sprinkler_block()
    a1, a2 = advise(p, b, NOW), advise(p, b, NOW)
    assert dataclasses.asdict(a1) == dataclasses.asdict(a2)
