"""Protection advice per block (pure): a `Projection`, the block's config and recent readings in,
an `AdvicePlan` out.

The rules are those of the trade as the reference sheet records them: wind machines need an
inversion and light wind and no supercooled fog (FAO-FP 2005 p. 160); sprinklers must be running
before the wet bulb reaches the critical temperature plus the margin, need the application rate
tonight's heat budget asks for, and may stop only after sunrise once the wet bulb is above T10 and
rising and the ice is melting (FAO-FP p. 168; UF/IFAS Circ. 348); fans and heaters stop once
crop-height air is above T10 + margin and rising after sunrise; the ready-by time leaves the crew
its mobilisation time (grower-needs C1). It advises; the grower decides.

Nothing here reads a clock or does I/O: `now_utc` and the readings are passed in.
"""

from __future__ import annotations

import dataclasses
import datetime as dt
import math

from frostwatch.advice.fans import fan_verdict, fog_possible
from frostwatch.advice.heating import heater_verdict
from frostwatch.advice.morning import Series, stop_check
from frostwatch.advice.plan import (
    BASE_CAUTIONS,
    AdvicePlan,
    Alternative,
    Caution,
    Method,
    MethodVerdict,
    Resources,
    Risk,
    Step,
    Trigger,
    WhyNot,
)
from frostwatch.advice.sprinkling import sprinkler_verdict
from frostwatch.config import Block
from frostwatch.models import Projection
from frostwatch.night import DUSK_OFFSET
from frostwatch.physics import sprinklers
from frostwatch.reference import ReferenceAir

# A possible frost (within the band) asks the crew to get ready once the projected crossing of
# T10 + margin is this close (the alert rules' standby horizon).
STANDBY_HORIZON_H = 4.0
# Protection usually runs until the sun has warmed the block; for the night's water and fuel
# estimate frostwatch assumes it stops this long after sunrise (ENGINEERING ASSUMPTION; the stop
# rule, not this figure, decides when to stop).
STOP_AFTER_SUNRISE_H = 1.0
# One large wind machine: 65-75 kW per 4-4.5 ha (FAO-FP p. 28, p. 159); used for an energy
# estimate when the block gives no fuel figure.
WIND_MACHINE_POWER_KW = 75.0

_SAFETY = {
    Method.WIND_MACHINE: Caution.FAN_SAFETY,
    Method.OVERTREE_SPRINKLER: Caution.SPRINKLER_SAFETY,
    Method.UNDERTREE_SPRINKLER: Caution.SPRINKLER_SAFETY,
    Method.HEATERS: Caution.HEATER_SAFETY,
}


def risk_of(p: Projection, block: Block, after_sunrise: bool) -> Risk:
    """How close the night comes to T10 + margin (crop-height air decides: it stands for the buds)."""
    if p.predicted_min_c is None or p.air_temp_c is None:
        return Risk.UNKNOWN
    if after_sunrise:
        return Risk.MORNING
    line = block.kill_10pct_c + block.margin_c
    band = 0.0 if p.band_c is None or math.isnan(p.band_c) else p.band_c
    if p.air_temp_c <= block.kill_10pct_c:
        return Risk.NOW
    if p.predicted_min_c <= line:
        return Risk.LIKELY
    if p.predicted_min_c - band <= line:
        return Risk.POSSIBLE
    return Risk.LOW


def trigger_of(method: Method, wet_bulb_c: float | None, verdict: MethodVerdict | None,
               running: bool | None) -> Trigger:
    """The temperature that times the block's protection: the wet bulb for sprinklers that will run
    (grower-needs C3: wetted buds cool towards it), else the air.

    The wet-bulb start rule exists because wetted buds cool towards the wet bulb (FAO-FP 2005
    p. 168, Table 7.5; MSU Extension 2012: a failing system leaves buds colder than unsprinkled
    ones). Sprinklers not advised tonight (too windy, too little water) are not run, the buds stay
    dry, and dry buds are judged on the air like any block without water (grower-needs A2): the air
    times "protect by other means". While the block's running sensor says the sprinklers run
    anyway, the wet bulb decides again.
    """
    if not method.is_sprinkler or wet_bulb_c is None:
        return Trigger.AIR
    if verdict is not None and not verdict.advised and not running:
        return Trigger.AIR
    return Trigger.WET_BULB


def verdict_for(p: Projection, block: Block, pressure_hpa: float, supercooled_fog: bool | None) -> MethodVerdict:
    """The verdict on the block's configured method."""
    method = Method(block.protection)
    if method is Method.WIND_MACHINE:
        return fan_verdict(p, block, supercooled_fog)
    if method.is_sprinkler:
        return sprinkler_verdict(p, block, pressure_hpa)
    if method is Method.HEATERS:
        return heater_verdict(p, block)
    return MethodVerdict(method=method, advised=False, why_not=WhyNot.NO_PROTECTION,
                         alternatives=(Alternative.COVERS_OR_MOIST_SOIL,))


def resources_for(block: Block, verdict: MethodVerdict, begin_utc: dt.datetime, sunrise_utc: dt.datetime) -> Resources:
    """The night's running hours and water, fuel or energy from `begin_utc` to an hour after sunrise."""
    end = sunrise_utc + dt.timedelta(hours=STOP_AFTER_SUNRISE_H)
    hours = round(max(0.0, (end - begin_utc).total_seconds() / 3600.0), 1)
    res = Resources(hours=hours, stop_after_sunrise_h=STOP_AFTER_SUNRISE_H)
    method = verdict.method
    if method.is_sprinkler:
        cap, area, supply = block.application_rate_mm_h, block.area_ha, block.water_supply_l_s
        if cap is not None and area is not None:
            peak = sprinklers.peak_flow_l_s(cap, area)
            res = dataclasses.replace(
                res, rate_mm_h=cap, area_ha=area, water_m3=round(sprinklers.water_volume_m3(cap, area, hours), 0),
                peak_flow_l_s=round(peak, 1), supply_l_s=supply,
                fed_area_ha=round(supply / peak * area, 1) if supply is not None and supply < peak else None,
            )
    elif method in (Method.WIND_MACHINE, Method.HEATERS):
        if block.fuel_l_per_h is not None:
            res = dataclasses.replace(res, fuel_l=round(block.fuel_l_per_h * hours, 0), fuel_l_per_h=block.fuel_l_per_h)
        elif method is Method.WIND_MACHINE and block.wind_machines:
            res = dataclasses.replace(res, energy_kwh=round(block.wind_machines * WIND_MACHINE_POWER_KW * hours, 0),
                                      machines=block.wind_machines, machine_kw=WIND_MACHINE_POWER_KW)
    return res


def step_of(risk: Risk, plan_stop_ok: bool | None, method: Method, running: bool | None, now_utc: dt.datetime,
            crossing_utc: dt.datetime | None, ready_by_utc: dt.datetime | None) -> Step:
    """The one thing the advice rules want done now."""
    if risk is Risk.UNKNOWN:
        return Step.CHECK_SENSORS
    if risk is Risk.MORNING:
        if method is Method.NONE:
            return Step.NIGHT_OVER
        return {True: Step.SAFE_TO_STOP, False: Step.WAIT_TO_STOP, None: Step.WATCH_TO_STOP}[plan_stop_ok]
    if risk is Risk.NOW:
        return Step.NOT_HOLDING if running else Step.AT_CRITICAL
    if risk is Risk.LOW:
        return Step.NOTHING
    if running:
        return Step.KEEP_RUNNING
    if risk is Risk.LIKELY:
        return Step.START_NOW if ready_by_utc is not None and now_utc >= ready_by_utc else Step.GET_READY
    # possible: get ready once the crossing is near, else watch
    if crossing_utc is not None and (crossing_utc - now_utc).total_seconds() <= STANDBY_HORIZON_H * 3600.0:
        return Step.GET_READY
    return Step.WATCH


def plan_advice(
    projection: Projection,
    block: Block,
    now_utc: dt.datetime,
    pressure_hpa: float = 1013.25,
    *,
    series: Series | None = None,
    protection_running: bool | None = None,
    supercooled_fog: bool | None = None,
    reference: ReferenceAir | None = None,
    reference_station: str | None = None,
    driest_dew_point_c: float | None = None,
) -> AdvicePlan:
    """What to do about `block` at `now_utc`, from its projection and recent readings.

    Parameters
    ----------
    projection : Projection
        The block's projection at `now_utc` (`frostwatch.forecast.project_block`).
    block : Block
        The block's config: critical temperatures, margin, protection method and capacity.
    now_utc : datetime
        The evaluation instant (UTC, injected).
    pressure_hpa : float, optional
        Station pressure [hPa] for the psychrometrics.
    series : mapping, optional
        Recent readings ``{(station, quantity): (t_s, values)}``; gives the trends the stop rules
        need (without it the stop advice asks the grower to watch the trend).
    protection_running : bool, optional
        The block's running sensor: True while protection runs (then "keep it running").
    supercooled_fog : bool, optional
        True when fog is observed; fans are then never advised.
    reference : ReferenceAir, optional
        Fresh air outside the wetted area (`frostwatch.reference.reference_air`): the sprinkler
        stop rule reads its wet bulb.
    reference_station : str, optional
        The reference station configured for the block (named in the advice even when silent).
    driest_dew_point_c : float, optional
        The night's lowest measured dew point: without reference air it sets the fallback stop
        air temperature.

    Returns
    -------
    AdvicePlan
        Risk, step, trigger, ready-by time (projected crossing of T10 + margin minus the
        mobilisation time), the verdict on the block's method with its figures and (only when it
        is advised and protection may be needed) the night's resources, the stop check after
        sunrise, and the cautions.

    Notes
    -----
    A missing wind speed is never taken as calm: the verdict is then conditional on the wind.
    """
    p = projection
    method = Method(block.protection)
    t10, margin = block.kill_10pct_c, block.margin_c
    after_sunrise = p.sunrise_utc is not None and now_utc >= p.sunrise_utc
    risk = risk_of(p, block, after_sunrise)
    verdict = None if risk is Risk.UNKNOWN else verdict_for(p, block, pressure_hpa, supercooled_fog)
    trigger = trigger_of(method, p.wet_bulb_c, verdict, protection_running)
    # act on the band's cold edge (the safe side): the earliest the line is likely reached
    key = "wet_bulb_t10_margin" if trigger is Trigger.WET_BULB else "t10_margin"
    middle = p.crossings_utc.get(key)
    crossing = p.crossings_utc.get(f"{key}_cold_edge") or middle
    ready_by = crossing - dt.timedelta(minutes=block.mobilisation_min) if crossing else None
    # a new site before dusk: the times are set early to be safe: ready by dusk at the latest, when
    # the evening's cooling has shown and the dusk forecast firms them up
    if (ready_by is not None and p.calibration_nights_known is not None and p.sunset_utc is not None
            and now_utc < p.sunset_utc + DUSK_OFFSET):
        ready_by = min(ready_by, max(p.sunset_utc + DUSK_OFFSET, now_utc + dt.timedelta(minutes=block.mobilisation_min)))
    base = dict(
        block=block.id, time_utc=now_utc, method=method, risk=risk, trigger=trigger, t10_c=t10,
        t90_c=block.kill_90pct_c, margin_c=margin, mobilisation_min=block.mobilisation_min, line_c=t10 + margin,
        trigger_now_c=p.wet_bulb_c if trigger is Trigger.WET_BULB else p.air_temp_c, air_temp_c=p.air_temp_c,
        predicted_min_c=p.predicted_min_c, predicted_min_at_utc=p.predicted_min_at_utc, band_c=p.band_c,
        crossing_utc=crossing, ready_by_utc=ready_by, protection_running=protection_running, regime=p.regime,
        wind_speed_m_s=p.wind_speed_m_s, crossing_middle_utc=middle,
        learning_nights_known=p.calibration_nights_known, learning_nights_needed=p.calibration_nights_needed,
        physics_floor_c=p.physics_floor_c,
    )
    if risk is Risk.UNKNOWN:
        return AdvicePlan(**base, step=Step.CHECK_SENSORS)
    active = risk in (Risk.POSSIBLE, Risk.LIKELY, Risk.NOW)
    if active and verdict.advised and p.sunrise_utc is not None:
        begin = max(now_utc, ready_by) if (ready_by is not None and risk is not Risk.NOW) else now_utc
        verdict = dataclasses.replace(verdict, resources=resources_for(block, verdict, begin, p.sunrise_utc))
    stop = None
    if risk is Risk.MORNING:
        stop_air = verdict.sprinklers.stop_air_temp_c if verdict.sprinklers else None
        stop = stop_check(p, block, now_utc.timestamp(), series, pressure_hpa, stop_air, reference,
                          reference_station, driest_dew_point_c)
    step = step_of(risk, stop.stop_ok if stop else None, method, protection_running, now_utc, crossing, ready_by)
    cautions = list(BASE_CAUTIONS)
    if method in _SAFETY:
        cautions.append(_SAFETY[method])
    if method is Method.HEATERS:
        cautions.append(Caution.AIR_QUALITY)
    if method is Method.WIND_MACHINE and verdict.advised and fog_possible(p.air_temp_c, p.dew_point_c):
        cautions.append(Caution.FOG_LOOK)
    if (method.is_sprinkler and p.wet_bulb_c is not None and p.wet_bulb_c <= t10 and risk is not Risk.MORNING
            and not protection_running):
        cautions.append(Caution.WET_BULB_AT_T10)
    if verdict.resources is not None and verdict.resources.fed_area_ha is not None:
        cautions.append(Caution.SUPPLY_SHORT)
    return AdvicePlan(**base, step=step, verdicts=(verdict,), stop=stop, cautions=tuple(cautions))
