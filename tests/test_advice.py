"""The advice engine per block: literals in, a typed AdvicePlan out (no clock, no I/O); its text
comes from the one rendering (frostwatch.advice.render/explain/message).

Physics references are those of the physics tests; here the advice must carry them through:
FAO-FP p. 160 (fans: wind <= 2.5 m/s, no supercooled fog), FAO-FP Table 7.5 / psychrolib (start
air temperature), frost-physics.md 4.2 and 10 (heat budget), UF/IFAS Circ. 348
(stop rule). The 0.3-0.5 fan gain is an engineering band within McMeeking et al. 2002's measured case.
"""

from __future__ import annotations

import dataclasses
import datetime as dt
import itertools
import json
import math

import numpy as np
import psychrolib
import pytest

from frostwatch.advice import STOP_AFTER_SUNRISE_H, explain, plan_advice, render
from frostwatch.advice.message import compose
from frostwatch.advice.plan import BASE_CAUTIONS, Caution, Condition, Risk, Step, StopBasis, WhyNot
from frostwatch.alerts.levels import wanted_level
from frostwatch.config import PROTECTION_METHODS, Block
from frostwatch.display import Display
from frostwatch.models import Projection
from frostwatch.physics import sprinklers
from frostwatch.reference import ReferenceAir

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


def advise(p, b, now, display=None, **kw):
    return plan_advice(p, b, now, **kw)


def text(plan, p=None, d=None) -> str:
    """The whole message the plan renders to, at the level it asks for (standby at least)."""
    lvl = wanted_level(plan, plan.time_utc)
    lvl = "ready" if lvl == "rest" else lvl
    return compose(plan.block, lvl, plan.step, plan, p, d or Display()).text


def action(plan, d=None) -> str:
    return render.action(plan.step, plan, d or Display())


# ---- cautions, risk, timing ------------------------------------------------------------------


@pytest.mark.parametrize("method", PROTECTION_METHODS)
@pytest.mark.parametrize("pmin", [-5.0, -0.5, 5.0])
def test_every_plan_carries_the_cautions(method, pmin):
    b = sprinkler_block(protection=method) if "sprinkler" in method else block(protection=method)
    plan = advise(projection(predicted_min_c=pmin), b, NOW)
    assert plan.cautions[:3] == BASE_CAUTIONS
    assert "grower decides" in text(plan, projection())
    unknown = advise(projection(air_temp_c=None, predicted_min_c=None), b, NOW)
    assert unknown.risk is Risk.UNKNOWN and unknown.step is Step.CHECK_SENSORS and unknown.cautions[:3] == BASE_CAUTIONS


def test_ready_by_is_crossing_minus_mobilisation():
    plan = advise(projection(), block(mobilisation_min=45), NOW)
    assert plan.risk is Risk.LIKELY and plan.step is Step.GET_READY
    assert plan.ready_by_utc == CROSSING - dt.timedelta(minutes=45)
    assert plan.crossing_utc == CROSSING
    assert "get the wind machines ready by" in action(plan)


def test_risk_levels():
    b = block()
    assert advise(projection(air_temp_c=-2.5), b, NOW).risk is Risk.NOW
    assert advise(projection(predicted_min_c=0.3, band_c=0.8), b, NOW).risk is Risk.POSSIBLE
    assert advise(projection(predicted_min_c=3.0, band_c=0.8, crossings_utc={}), b, NOW).risk is Risk.LOW
    assert advise(projection(), b, SUNRISE + dt.timedelta(minutes=5)).risk is Risk.MORNING


def test_step_start_now_once_ready_by_passed_and_keep_running_when_running():
    late = NOW + dt.timedelta(minutes=100)  # ready by 09:30 UTC
    assert advise(projection(), block(), late).step is Step.START_NOW
    assert advise(projection(), block(), late, protection_running=True).step is Step.KEEP_RUNNING
    assert advise(projection(air_temp_c=-2.5), block(), NOW, protection_running=True).step is Step.NOT_HOLDING
    assert advise(projection(air_temp_c=-2.5), block(), NOW).step is Step.AT_CRITICAL


# ---- wind machines -----------------------------------------------------------------------------


def test_wind_machine_useful_with_inversion_and_light_wind_gain_is_a_labelled_assumption():
    plan = advise(projection(projected_inversion_c=4.0, predicted_min_c=-2.5), block(), NOW)
    f = plan.verdict.fans
    assert plan.advised and plan.verdict.why_not is None
    assert f.gain_c == pytest.approx(0.4 * 4.0)
    assert f.gain_low_c == pytest.approx(1.2) and f.gain_high_c == pytest.approx(2.0)
    # the band's one measured case is named in the report's notes, not in the alert
    assert "fans add 1.2 °C to 2.0 °C" in text(plan, projection())
    assert any("McMeeking et al. 2002" in s for s in explain.SOURCES)
    assert "get the wind machines ready" in action(plan)


@pytest.mark.parametrize("wind", np.arange(2.6, 9.0, 0.7))
@pytest.mark.parametrize("risk_pmin", [-3.5, -1.0])
def test_no_advice_to_start_fans_in_wind_above_the_limit(wind, risk_pmin):
    # FAO-FP p. 160: not above 2.5 m/s
    plan = advise(projection(wind_speed_m_s=float(wind), predicted_min_c=risk_pmin), block(), NOW)
    assert not plan.advised and plan.verdict.why_not is WhyNot.TOO_WINDY_FOR_FANS
    assert plan.verdict.resources is None  # no fuel estimate for a method not advised
    t = text(plan, projection())
    assert "start the wind machines" not in t and "too windy for fans" in t and "fuel" not in t
    assert plan.verdict.alternatives  # and what else helps
    now_plan = advise(projection(wind_speed_m_s=float(wind), air_temp_c=-2.5), block(), NOW)
    assert "start the wind machines" not in action(now_plan) and "by other means" in action(now_plan)


def test_weak_inversion_says_why_and_what_else_helps():
    plan = advise(projection(inversion_c=0.8, projected_inversion_c=0.8), block(), NOW)
    assert not plan.advised and plan.verdict.why_not is WhyNot.INVERSION_WEAK
    t = text(plan, projection())
    assert "too little warm air aloft" in t and "heaters" in t
    assert "other means" in action(plan)


def test_supercooled_fog_blocks_fans_and_possible_fog_is_flagged():
    plan = advise(projection(), block(), NOW, supercooled_fog=True)
    assert not plan.advised and plan.verdict.why_not is WhyNot.SUPERCOOLED_FOG
    assert "do not run fans in fog" in text(plan, projection())
    near = advise(projection(air_temp_c=-0.5, dew_point_c=-0.8), block(), NOW)
    assert Condition.NO_FOG in near.verdict.conditions and Caution.FOG_LOOK in near.cautions
    assert "no fog" in action(near)


def test_projected_minimum_far_below_critical_fans_alone_will_not_hold():
    plan = advise(projection(predicted_min_c=-6.0, projected_inversion_c=2.0), block(), NOW)
    assert plan.advised and not plan.verdict.fans.sufficient
    assert "not enough alone" in text(plan, projection())
    assert any("add heaters" in a for a in render.alternatives(plan.verdict))


def test_fans_that_hold_t10_but_not_t10_plus_margin_are_not_sufficient():
    # Hand computation: inversion 4 C, low-band gain 0.3 * 4 = 1.2 C (McMeeking et al. 2002's
    # measured low end); projected minimum -3.0 C -> -1.8 C with fans: above T10 (-2.2 C) but below
    # T10 + margin (-0.2 C) by 1.6 C. Buds run 1-2 C below the air (frost-physics.md 5), so this
    # is not "fans should hold it".
    plan = advise(projection(predicted_min_c=-3.0, projected_inversion_c=4.0), block(), NOW)
    f = plan.verdict.fans
    assert plan.advised and not f.sufficient and f.shortfall_c == pytest.approx(1.6)
    assert any("add heaters" in a for a in render.alternatives(plan.verdict))
    assert advise(projection(predicted_min_c=-1.3, projected_inversion_c=4.0), block(), NOW).verdict.fans.sufficient


def test_stronger_inversion_gives_larger_gain():
    gains = [advise(projection(projected_inversion_c=float(inv)), block(), NOW).verdict.fans.gain_c
             for inv in np.arange(1.5, 9.0, 0.5)]
    assert all(b > a for a, b in itertools.pairwise(gains))


def test_unknown_wind_is_not_calm_for_fans():
    plan = advise(projection(wind_speed_m_s=None), block(), NOW)
    assert Condition.WIND_BELOW_FAN_LIMIT in plan.verdict.conditions
    assert "no wind reading" in text(plan, projection())
    assert "if the wind is below 2.5 m/s" in action(plan)


def test_unknown_inversion_is_not_zero_and_not_not_advised():
    """Pass: with no working tower (a dead or misreporting sensor) the fans stay the block's
    method on the condition a thermometer aloft shows, no warming counted, and every form says
    the tower is not working. Fails when a dead tower sensor turns "start the wind machines"
    into "protect the block by other means; the wind machines are not advised tonight" (a live
    trial's all-hands alert said so to a grower whose fans had been started at the protect alert)."""
    from frostwatch.advice.short import short_body

    p = projection(inversion_c=None, projected_inversion_c=None, air_temp_c=-2.4)
    plan = advise(p, block(), NOW)
    assert plan.advised and plan.verdict.why_not is None
    assert Condition.WARM_AIR_ALOFT in plan.verdict.conditions
    f = plan.verdict.fans
    assert f.gain_c == 0.0 and f.gain_low_c == 0.0 and not f.sufficient and f.shortfall_c is None
    body = text(plan, p)
    assert "no working tower sensor" in body and "not advised" not in body and "other means" not in body
    assert "if the tower reads at least 1.5 °C warmer than crop height" in action(plan)
    short = short_body("b1", "all-hands", plan.step, plan, Display(), None)
    assert "if tower 1.5C warmer" in short and "not advised" not in short, short


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
    plan = advise(projection(dew_point_c=dew_point_c), sprinkler_block(), NOW)
    s = plan.verdict.sprinklers
    assert _psychrolib_wet_bulb_c(s.start_air_temp_c, dew_point_c) == pytest.approx(-1.2, abs=0.05)
    assert _psychrolib_wet_bulb_c(s.stop_air_temp_c, dew_point_c) == pytest.approx(-2.2, abs=0.05)
    assert "must be running before the air cools to" in action(plan)


def test_sprinkler_start_vs_rechecked_table_frost_physics_10():
    # frost-physics.md 10, rechecked table: Td -10, Tc -2 -> 2.0 C (margin 0 on T10 = -2)
    plan = advise(projection(dew_point_c=-10.0), sprinkler_block(kill_10pct_c=-2.0, margin_c=0.0), NOW)
    assert plan.verdict.sprinklers.start_air_temp_c == pytest.approx(2.0, abs=0.1)


def test_drier_air_gives_higher_start_temperature():
    starts = [advise(projection(dew_point_c=float(td)), sprinkler_block(), NOW).verdict.sprinklers.start_air_temp_c
              for td in np.arange(-16.0, -2.0, 1.0)]
    assert all(a > b for a, b in itertools.pairwise(starts))


def test_more_wind_needs_a_higher_rate():
    rates = [advise(projection(wind_speed_m_s=float(u)), sprinkler_block(), NOW).verdict.sprinklers.required_mm_h
             for u in np.arange(0.0, 4.5, 0.3)]
    assert all(b >= a for a, b in itertools.pairwise(rates)) and rates[-1] > rates[0]


def test_required_rate_is_the_heat_budget_with_the_practice_beside_it():
    # no table governs: its cells could not be read in a printed source (frost-physics.md 10)
    plan = advise(projection(predicted_min_c=-5.6, wind_speed_m_s=2.9), sprinkler_block(application_rate_mm_h=9.0), NOW)
    s = plan.verdict.sprinklers
    assert s.required_mm_h == pytest.approx(s.heat_budget_mm_h, abs=0.01)
    t = text(plan, projection())
    assert "tonight needs at least" in t and "table" not in t
    assert any("Longstroth 2012" in s and "heat budget" in s for s in explain.SOURCES)


def test_rate_short_is_not_advised_says_why_once_and_gives_no_water_estimate():
    plan = advise(projection(predicted_min_c=-5.6, wind_speed_m_s=2.9), sprinkler_block(application_rate_mm_h=3.0), NOW)
    assert not plan.advised and plan.verdict.why_not is WhyNot.RATE_SHORT and plan.verdict.resources is None
    t = text(plan, projection())
    assert "not advised tonight" in t and "adviser" in t and "water about" not in t
    assert t.count("not advised tonight: ") == 1  # one line saying why
    ok = advise(projection(predicted_min_c=-3.0, wind_speed_m_s=0.3),
                sprinkler_block(application_rate_mm_h=6.0, water_supply_l_s=100.0), NOW)
    assert ok.advised and "not advised" not in text(ok, projection())


def test_sprinkling_in_wind_above_4_5_m_s_is_not_advised():
    plan = advise(projection(wind_speed_m_s=5.5), sprinkler_block(application_rate_mm_h=30.0), NOW)
    assert not plan.advised and plan.verdict.why_not is WhyNot.TOO_WINDY_FOR_SPRINKLERS
    assert "sprinkling does not protect" in text(plan, projection())


def test_sprinklers_not_advised_leave_the_buds_dry_so_the_air_times_the_block():
    # the windy night: the wet bulb reaches T10 + margin in 15 min, the air in 4 h.
    # Wetted buds cool towards the wet bulb (FAO-FP p. 168, Table 7.5), which is why sprinklers
    # start by it; sprinklers not advised are not run, and dry buds follow the air (grower-needs A2)
    wet_soon, air_late = NOW + dt.timedelta(minutes=15), NOW + dt.timedelta(hours=4)
    windy = projection(air_temp_c=3.0, wet_bulb_c=-0.8, dew_point_c=-9.0, predicted_min_c=-1.5, wind_speed_m_s=6.0,
                       crossings_utc={"t10_margin": air_late, "wet_bulb_t10_margin": wet_soon, "t10": None})
    plan = advise(windy, sprinkler_block(), NOW)
    assert not plan.advised and plan.verdict.why_not is WhyNot.TOO_WINDY_FOR_SPRINKLERS
    assert plan.trigger == "air" and plan.trigger_now_c == 3.0
    assert plan.crossing_utc == air_late and plan.ready_by_utc == air_late - dt.timedelta(minutes=20)
    assert plan.step is Step.GET_READY  # was START_NOW by the wet bulb: a crew called 8 h early
    assert "other means" in text(plan, windy)
    # the grower runs them anyway (the running sensor says so): the buds are wet, the wet bulb decides
    running = advise(windy, sprinkler_block(), NOW, protection_running=True)
    assert running.trigger == "wet-bulb" and running.crossing_utc == wet_soon
    # too little water: not advised either, timed by the air
    short = advise(dataclasses.replace(windy, wind_speed_m_s=2.9, predicted_min_c=-5.6),
                   sprinkler_block(application_rate_mm_h=3.0), NOW)
    assert short.verdict.why_not is WhyNot.RATE_SHORT and short.trigger == "air"
    # advised (calm): the wet bulb decides, as before
    calm = advise(dataclasses.replace(windy, wind_speed_m_s=0.5), sprinkler_block(application_rate_mm_h=6.0), NOW)
    assert calm.advised and calm.trigger == "wet-bulb" and calm.step is Step.START_NOW


def test_unknown_wind_is_not_calm_for_sprinklers():
    plan = advise(projection(wind_speed_m_s=None), sprinkler_block(application_rate_mm_h=6.0), NOW)
    s = plan.verdict.sprinklers
    assert s.wind_speed_m_s is None and s.required_mm_h is None and s.calm_air_mm_h > 0
    assert Condition.CALM_AIR in plan.verdict.conditions
    t = text(plan, projection())
    assert "even in calm air" in t or "enough only if the air stays calm" in t


def test_water_volume_hours_and_peak_flow():
    plan = advise(projection(), sprinkler_block(), NOW)
    r = plan.verdict.resources
    start = CROSSING - dt.timedelta(minutes=20)
    hours = (SUNRISE + dt.timedelta(hours=STOP_AFTER_SUNRISE_H) - start).total_seconds() / 3600
    assert r.hours == pytest.approx(hours, abs=0.05)
    assert r.water_m3 == pytest.approx(sprinklers.water_volume_m3(3.5, 4.0, r.hours), abs=1)
    assert r.peak_flow_l_s == pytest.approx(38.9, abs=0.05)  # 3.5 mm/h on 4 ha
    assert "peak flow 38.9 L/s" in text(plan, projection())
    short = advise(projection(), sprinkler_block(water_supply_l_s=20.0), NOW)
    assert short.verdict.resources.fed_area_ha == pytest.approx(20.0 / 38.89 * 4.0, abs=0.1)
    assert Caution.SUPPLY_SHORT in short.cautions and "never the whole block at a lower rate" in text(short, projection())


def test_wind_machine_fuel_and_energy():
    r = advise(projection(), block(fuel_l_per_h=40.0), NOW).verdict.resources
    assert r.fuel_l == pytest.approx(40.0 * r.hours, rel=0.02)
    r = advise(projection(), block(), NOW).verdict.resources
    assert r.energy_kwh == pytest.approx(2 * 75.0 * r.hours, rel=0.02)  # hours shown to 0.1 h


def test_undertree_sprinkler_minimum_rate():
    plan = advise(projection(), sprinkler_block(protection="undertree_sprinkler", application_rate_mm_h=0.5), NOW)
    assert plan.verdict.why_not is WhyNot.LINES_MAY_FREEZE
    assert "lines may freeze" in text(plan, projection())


# ---- stopping ------------------------------------------------------------------------------------


def _series(station, start_c, slope_c_per_h, now):
    t = now.timestamp() + np.arange(-1800.0, 1.0, 120.0)
    return {(station, "air_temperature"): (t, start_c + slope_c_per_h * (t - now.timestamp()) / 3600.0)}


MORNING = SUNRISE + dt.timedelta(minutes=40)


def _ref(wet_bulb_c, trend):
    return ReferenceAir("met", wet_bulb_c + 1.5, wet_bulb_c - 3.0, wet_bulb_c, trend)


def test_sprinklers_stop_only_once_reference_wet_bulb_above_t10_and_really_rising():
    # FAO-FP p. 168 / UF/IFAS Circ. 348: the wet bulb of air outside the wetted area, after
    # sunrise, above T10 (-2.2 C) and rising; a rise is at least 0.3 C/h over 30 min
    b = sprinkler_block()
    p = projection(air_temp_c=0.5, dew_point_c=-1.0, wet_bulb_c=-0.2, time_utc=MORNING)
    rising = advise(p, b, MORNING, reference=_ref(-1.5, 0.9), reference_station="met")
    assert rising.stop.stop_ok is True and rising.step is Step.SAFE_TO_STOP
    assert rising.stop.basis is StopBasis.REFERENCE_WET_BULB
    assert "may stop once the ice is melting" in action(rising) and "met" in action(rising)
    for flat in (0.0, 0.2, -0.5):  # "+0.0 C per hour" is not rising, nor are sensor steps
        plan = advise(p, b, MORNING, reference=_ref(-1.5, flat), reference_station="met")
        assert plan.stop.stop_ok is False and "keep the sprinklers running" in action(plan)
    no_trend = advise(p, b, MORNING, reference=_ref(-1.5, None), reference_station="met")
    assert no_trend.stop.stop_ok is None and "watch it" in action(no_trend)


def test_sprinklers_never_stop_while_reference_wet_bulb_at_or_below_t10():
    # the demo's case: in the sprinkled block the dew point is -2.0 C and its wet bulb -1.45 C,
    # above T10; unsprinkled air (-2.2 C, dew point -5.4 C) has a wet bulb of -3.2 C, below T10
    p = projection(air_temp_c=-0.9, dew_point_c=-2.0, wet_bulb_c=-1.45, time_utc=MORNING)
    plan = advise(p, sprinkler_block(), MORNING, series=_series("b1-low", -0.9, 3.0, MORNING),
                  reference=ReferenceAir("hill", -2.2, -5.4, -3.2, 1.0), reference_station="hill")
    assert plan.stop.stop_ok is False and plan.step is Step.WAIT_TO_STOP
    assert plan.stop.now_c == -3.2 and "not above T10" in action(plan)


def test_sprinkler_stop_without_reference_falls_back_to_block_air_well_above_the_ice_bulb_rule():
    # no unsprinkled air: frostwatch says it cannot judge from wetted air and waits for the
    # block's air to pass max(0 C, the ice-bulb rule for the night's driest air) + 1 K
    # (physics.sprinkler_timing.fallback_stop_air_temp_c): driest dew point -5.4 C -> 1.0 C
    b = sprinkler_block()
    p = projection(air_temp_c=0.5, dew_point_c=-1.0, wet_bulb_c=-0.2, time_utc=MORNING)
    plan = advise(p, b, MORNING, series=_series("b1-low", 0.5, 1.5, MORNING), driest_dew_point_c=-5.4)
    assert plan.stop.basis is StopBasis.FALLBACK_AIR and plan.stop.limit_c == pytest.approx(1.0)
    assert plan.stop.stop_ok is False and "the spray wets the block's own air" in action(plan)
    warm = projection(air_temp_c=1.6, dew_point_c=-1.0, wet_bulb_c=0.3, time_utc=MORNING)
    ok = advise(warm, b, MORNING, series=_series("b1-low", 1.6, 1.5, MORNING), driest_dew_point_c=-5.4)
    assert ok.stop.stop_ok is True and ok.step is Step.SAFE_TO_STOP
    silent = advise(p, b, MORNING, series=_series("b1-low", 0.5, 1.5, MORNING), reference_station="met",
                    driest_dew_point_c=-5.4)
    assert silent.stop.reference_silent and "met has no fresh reading" in action(silent)


def test_fans_stop_once_air_above_t10_plus_margin_and_rising():
    b = block()
    warm = projection(air_temp_c=0.5, time_utc=MORNING)
    assert advise(warm, b, MORNING, series=_series("b1-low", 0.5, 1.0, MORNING)).stop.stop_ok is True
    assert advise(warm, b, MORNING, series=_series("b1-low", 0.5, -0.4, MORNING)).stop.stop_ok is False
    cold = projection(air_temp_c=-0.5, time_utc=MORNING)
    plan = advise(cold, b, MORNING, series=_series("b1-low", -0.5, 1.0, MORNING))
    assert plan.stop.stop_ok is False and "keep the wind machines running" in action(plan)


def test_stop_rule_is_given_with_the_start_advice():
    d = Display()
    assert "never while that wet bulb is at or below T10" in explain.stop_rule(advise(projection(), sprinkler_block(), NOW), d)
    plan = advise(projection(), block(), NOW)
    assert "after sunrise" in explain.stop_rule(plan, d) and "Stop: after sunrise" in text(plan, projection())


# ---- display -------------------------------------------------------------------------------------


@pytest.mark.parametrize("b", [block(), sprinkler_block(), block(protection="heaters"), block(protection="none")])
def test_advice_text_uses_the_display_unit(b):
    d = Display("degF", "America/Los_Angeles")
    for p in (projection(), projection(inversion_c=0.8, projected_inversion_c=0.8, wind_speed_m_s=3.0),
              projection(air_temp_c=-2.5)):
        plan = advise(p, b, NOW)
        t = text(plan, p, d)
        assert "°F" in t
        assert "°C" not in t and " C " not in t and " C)" not in t
    assert "02:30" in action(advise(projection(), block(), NOW), d)  # ready by: 10:00 UTC = 03:00 PDT, less 30 min


def test_advice_is_pure_same_inputs_same_output():
    p, b = projection(), sprinkler_block()
    assert advise(p, b, NOW) == advise(p, b, NOW)


def test_plan_round_trips_through_its_json():
    from frostwatch.advice.codec import from_dict, to_dict
    from frostwatch.advice.plan import AdvicePlan

    for b in (block(), sprinkler_block(), block(protection="heaters"), block(protection="none")):
        for p, now in ((projection(), NOW), (projection(air_temp_c=-2.5), NOW), (projection(), MORNING),
                       (projection(air_temp_c=None, predicted_min_c=None), NOW)):
            plan = advise(p, b, now, series=_series("b1-low", 0.5, 1.0, now))
            assert from_dict(AdvicePlan, json.loads(json.dumps(to_dict(plan)))) == plan


# ---- heaters and under-tree sprinklers ------------------------------------------------------------


def test_heater_plan_heat_requirement_heaters_per_hectare_lighting_and_cautions():
    # FAO-FP ch. 7 (p. 147) and Evans (10-15 % retained): hold T10 + margin (-0.2 C) against the net
    # radiation loss there; a strong inversion (4 C) holds 15 %; 40 kW heaters
    b = block(protection="heaters", heater_kw=40.0, heaters_per_ha=80, fuel_l_per_h=300.0)
    plan = advise(projection(), b, NOW)
    h = plan.verdict.heaters
    assert plan.advised and h.target_c == pytest.approx(-0.2) and h.retained_frac == 0.15
    # 1 W/m2 = 10 kW/ha; the stored requirement is rounded to 0.1 W/m2 (x 66.7 -> within 7 kW/ha)
    assert h.output_kw_per_ha == pytest.approx(h.requirement_w_m2 / 0.15 * 10.0, abs=7.0)
    assert abs(h.heaters_per_ha - h.output_kw_per_ha / 40.0) <= 1.0
    assert h.enough is (80 * 40.0 >= h.output_kw_per_ha)
    t = text(plan, projection())
    assert "the upwind border and the low spots first" in t and "per hectare" in t
    assert "light the heaters" in render.action(Step.START_NOW, plan, Display())
    assert Caution.AIR_QUALITY in plan.cautions and "smudge pots" in t and "fire hazard" in t
    assert plan.ready_by_utc == CROSSING - dt.timedelta(minutes=30)  # lit before the crossing
    weak = advise(projection(inversion_c=0.8, projected_inversion_c=0.8), b, NOW)
    assert weak.verdict.heaters.retained_frac is None
    assert any("rises away" in a for a in render.alternatives(weak.verdict))


def test_undertree_sprinklers_own_rates_warming_and_stop_rule():
    # UCCE (Connell & Snyder): 1.7-2.2 mm/h target, at least 0.84 mm/h; Parsons 2015: 0.6-1.4 C of
    # warming, counted only under an inversion; judged against T10 + margin (-1.2 C here)
    b = sprinkler_block(protection="undertree_sprinkler", application_rate_mm_h=1.9)
    ok = advise(projection(predicted_min_c=-1.7), b, NOW)  # -1.7 + 0.6 = -1.1 >= -1.2
    s = ok.verdict.sprinklers
    assert ok.advised and s.undertree and s.sufficient and (s.warming_low_c, s.warming_high_c) == (0.6, 1.4)
    assert s.target_low_mm_h == pytest.approx(1.68, abs=0.01) and s.min_mm_h == pytest.approx(0.84, abs=0.01)
    short = advise(projection(predicted_min_c=-3.0), b, NOW)
    assert short.advised and not short.verdict.sprinklers.sufficient
    assert short.verdict.sprinklers.shortfall_c == pytest.approx(-1.2 - (-3.0 + 0.6))
    assert any("only with warm air aloft" in a for a in render.alternatives(short.verdict))
    flat = advise(projection(predicted_min_c=-1.7, inversion_c=0.5, projected_inversion_c=0.5), b, NOW)
    assert flat.verdict.sprinklers.warming_high_c == 0.0 and not flat.verdict.sprinklers.sufficient
    rule = explain.stop_rule(ok, Display())
    assert "ice on the ground has melted" in rule and "between ice and twig" not in rule
    frozen = advise(projection(), sprinkler_block(protection="undertree_sprinkler", application_rate_mm_h=0.6), NOW)
    assert not frozen.advised and frozen.verdict.why_not is WhyNot.LINES_MAY_FREEZE


def test_undertree_morning_stop_reads_reference_air_and_ground_ice():
    b = sprinkler_block(protection="undertree_sprinkler", application_rate_mm_h=1.9)
    p = projection(air_temp_c=0.5, dew_point_c=-1.0, wet_bulb_c=-0.2, time_utc=MORNING)
    plan = advise(p, b, MORNING, reference=_ref(-1.5, 0.9), reference_station="met")
    assert plan.step is Step.SAFE_TO_STOP and "ice on the ground has melted" in action(plan)


def test_sprinkler_start_follows_a_falling_dew_point():
    # the projection's dew point at the crossing (-8 C) sets the start, not tonight's (-6 C):
    # frost-physics.md 10 table, Tc -2: Td -6 -> 0.2 C, Td -8 -> 1.2 C (margin 0 on T10 -2)
    b = sprinkler_block(kill_10pct_c=-2.0, margin_c=0.0)
    fixed = advise(projection(dew_point_c=-6.0), b, NOW).verdict.sprinklers
    falling_p = projection(dew_point_c=-6.0, dew_point_trend_c_per_h=-0.7, dew_point_at_start_c=-8.0)
    falling = advise(falling_p, b, NOW)
    s = falling.verdict.sprinklers
    assert fixed.start_air_temp_c == pytest.approx(0.2, abs=0.1)
    assert s.start_air_temp_c == pytest.approx(1.2, abs=0.1) and s.start_dew_point_c == -8.0
    assert "falling" in text(falling, falling_p) and "the sooner the sprinklers must be on" in text(falling, falling_p)
