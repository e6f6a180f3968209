"""Whole messages from the plan: an alert's text, and the "not monitored" texts.

    msg = compose("east", "ready", step, plan, projection, display, Notice.LEVEL)
    msg.headline, msg.action, msg.text

`compose` is what the alert rules send and what the page and the report show for the same
decision; `not_monitored` is the one wording of "NOT MONITORED since HH:MM: why" everywhere.
"""

from __future__ import annotations

import datetime as dt
from dataclasses import dataclass

from frostwatch.advice import explain, render
from frostwatch.advice.plan import BASE_CAUTIONS, AdvicePlan, Step
from frostwatch.advice.render import Notice
from frostwatch.decision import Monitoring, MonitorReason
from frostwatch.display import Display
from frostwatch.models import SensorDoubt
from frostwatch.physics import humidity


@dataclass(frozen=True)
class Message:
    headline: str
    action: str
    text: str


def now_line(proj, d: Display) -> str | None:
    """'Now at east-low: air 6.2 °C, wet bulb 2.0 °C, ...' from a Projection or ProjectionSummary."""
    if proj is None or proj.air_temp_c is None:
        return None
    bits = [f"air {d.temp(proj.air_temp_c)}"]
    wet = proj.wet_bulb_c
    if wet is None and proj.dew_point_c is not None:
        wet = float(humidity.wet_bulb_c_from_dew_point(proj.air_temp_c, proj.dew_point_c))
    if wet is not None and wet == wet:
        bits.append(f"wet bulb {d.temp(wet)}")
    if proj.dew_point_c is not None:
        bits.append(f"dew point {d.temp(proj.dew_point_c)}")
    if proj.inversion_c is not None:
        bits.append(f"inversion {d.delta(proj.inversion_c)}")
    if proj.wind_speed_m_s is not None:
        farm = "farm " if getattr(proj, "wind_from_farm", False) else ""
        bits.append(f"{farm}wind {d.wind(proj.wind_speed_m_s)}")
    return f"Now at {proj.station}: " + ", ".join(bits) + "."


def projection_line(plan: AdvicePlan, proj, d: Display) -> str | None:
    if plan.predicted_min_c is None:
        return None
    band = f" ± {d.delta(plan.band_c)}" if plan.band_c is not None and plan.band_c == plan.band_c else ""
    around = f" around {d.time(plan.predicted_min_at_utc)}" if plan.predicted_min_at_utc else ""
    return (f"Projected minimum {d.temp(plan.predicted_min_c)}{band}{around}; T10 {d.temp(plan.t10_c)}, "
            f"T90 {d.temp(plan.t90_c)}, margin {d.delta(plan.margin_c)}; the {render.TRIGGER_WORD[plan.trigger]} "
            "temperature decides.")


def compose(block_id: str, level: str, step: Step, plan: AdvicePlan, proj, d: Display,
            notice: Notice = Notice.LEVEL, previous_ready_by_utc: dt.datetime | None = None) -> Message:
    """An alert's (or a screen's) text for `level` shown with `step`: headline, now, projection,
    advice, the verdict line or the night's resources, why, the stop rule, what else helps,
    cautions."""
    head = render.headline(block_id, level, step, plan, d, notice, previous_ready_by_utc)
    act = render.action(step, plan, d)
    lines = [head]
    nl = now_line(proj, d)
    if nl:
        lines.append(nl)
    morning = step in (Step.SAFE_TO_STOP, Step.WATCH_TO_STOP, Step.WAIT_TO_STOP, Step.NIGHT_OVER)
    if not morning:
        pl = projection_line(plan, proj, d)
        if pl:
            lines.append(pl)
        crossings = getattr(proj, "crossings_utc", None) or {}
        t10x = crossings.get("wet_bulb_t10" if plan.trigger.value == "wet-bulb" else "t10")
        if t10x:
            lines.append(f"Projected to cross T10 at {d.time(t10x)}.")
    lines.append(f"Advice: {act}.")
    calls_for_protection = step not in (Step.NOTHING, Step.WATCH, Step.CHECK_SENSORS) and not morning
    vl = explain.verdict_line(plan, d)
    if vl and calls_for_protection:
        lines.append(vl)
    rl = explain.resources_line(plan, d) if calls_for_protection else None
    if rl:
        lines.append(rl)
    why = explain.reasons(plan, d)
    if why:
        lines.append("Why:")
        lines += [f"- {w}." for w in why]
    stop = explain.stop_rule(plan, d) if calls_for_protection else None
    if stop:
        lines.append(f"Stop: {stop}.")
    also = render.alternatives(plan.verdict, d) if calls_for_protection else []
    if also:
        lines.append("Also: " + "; ".join(also) + ".")
    lines.append("Cautions: " + " ".join(render.cautions(plan, d)))
    return Message(head, act, "\n".join(lines))


# ---- not monitored ------------------------------------------------------------------------------


def _ago(d: Display, t: dt.datetime, now_utc: dt.datetime) -> str:
    s = max(0.0, (now_utc - t).total_seconds())
    span = f"{s:.0f} s" if s < 120 else f"{s / 60:.0f} min" if s < 7200 else f"{s / 3600:.1f} h"
    return f"{d.time(t)} ({span} ago)"


def monitoring_reason(m: Monitoring, d: Display, now_utc: dt.datetime, daemon_stopped_utc: dt.datetime | None = None,
                      evaluated_utc: dt.datetime | None = None, relative: bool = True) -> str:
    """Why a block is not monitored, in one plain clause (for a monitored block: 'sensors fresh').
    `relative=False` leaves out "(3 min ago)": an alert's text is sent again unchanged in its
    repeats and escalation, where "3 min ago" would no longer be true."""
    stations = ", ".join(m.stations) or "none declared"
    if m.reason is MonitorReason.OK:
        return f"crop-height sensor fresh ({stations})"
    if m.reason is MonitorReason.DAEMON_STOPPED:
        if daemon_stopped_utc is None:
            return "the frostwatch daemon is not running (it has never run on this store)"
        return f"the frostwatch daemon is not running: no heartbeat since {_ago(d, daemon_stopped_utc, now_utc)}"
    if m.reason is MonitorReason.NO_EVALUATION:
        if evaluated_utc is None:
            return "no evaluation of this block is stored yet"
        return f"no evaluation of this block since {_ago(d, evaluated_utc, now_utc)}"
    if m.reason is MonitorReason.NO_CROP_SENSOR:
        return "no crop-height sensor is declared for this block"
    if m.reason is MonitorReason.NO_DATA:
        return f"no reading at all from its crop-height sensor ({stations})"
    if m.reason is MonitorReason.STUCK:
        return f"its crop-height sensor ({stations}) reports a stuck, flat value"
    if m.reason is MonitorReason.IMPLAUSIBLE:
        left = [x for x in m.doubts if x.left_out]
        said = "; ".join(doubt_words(x, d) for x in left) if left else "its reading is far out of line with the farm"
        return f"its crop-height sensor is not trusted: {said}"
    when = (_ago(d, m.last_reading_utc, now_utc) if relative else d.time(m.last_reading_utc)) if m.last_reading_utc else ""
    last = f" since {when}" if when else ""
    return f"no reading from its crop-height sensor ({stations}){last}"


SET_UNIT = "Set its unit (README: Live readings over MQTT)"


def _others(x: SensorDoubt, d: Display) -> str:
    span = d.temp(x.peers_low_c) if d.temp(x.peers_low_c) == d.temp(x.peers_high_c) else \
        f"{d.temp(x.peers_low_c).split(' ')[0]} to {d.temp(x.peers_high_c)}"
    return f"the farm's other thermometer reads {span}" if x.peers == 1 else f"the farm's other thermometers read {span}"


def _as_fahrenheit(x: SensorDoubt, d: Display) -> str:
    # what the grower can check: the number it sent (a bare number is taken as °C) read as °F
    if d.us:
        return f"it sent {x.air_temp_c:g}, which was taken as °C"
    return f"{x.air_temp_c:g} °F is {d.temp((x.air_temp_c - 32.0) / 1.8)}"


def doubt_words(x: SensorDoubt, d: Display) -> str:
    """One plain sentence on a thermometer the farm's cross-check doubts, with the likely cause:
    'north-low reads 38.5 °C while the farm's other thermometers read 3.4 to 4.1 °C: is it sending
    °F (38.5 °F is 3.6 °C)? Set its unit (...); it is left out until it agrees'."""
    from frostwatch.forecast.crosscheck import COLD, JUMP, fahrenheit_fits

    if x.kind == JUMP:
        cause = (f"is it sending °F now ({_as_fahrenheit(x, d)})? {SET_UNIT}" if fahrenheit_fits(x)
                 else "check it (in the sun, near a heater, faulty?)")
        return (f"{x.station} jumped from {d.temp(x.jump_from_c)} to {d.temp(x.air_temp_c)} at {d.time(x.jump_at_utc)}, "
                f"faster than any weather, and no other thermometer on the farm can confirm it: {cause}; "
                "it is left out tonight unless it comes back down")
    head = f"{x.station} reads {d.temp(x.air_temp_c)} while {_others(x, d)}"
    if x.kind == COLD:
        return (f"{head}, colder than any weather explains: check it (wet, on the ground, damaged?); "
                "it is still used, as a colder reading is never ignored")
    if fahrenheit_fits(x):
        return f"{head}: is it sending °F ({_as_fahrenheit(x, d)})? {SET_UNIT}; it is left out until it agrees"
    return (f"{head}, warmer than any weather explains: check it (in the sun, near a heater, a wrong unit?); "
            "it is left out until it agrees")


def not_monitored_headline(block_id: str, since_utc: dt.datetime | None, d: Display) -> str:
    since = f" since {d.time(since_utc)}" if since_utc is not None else ""
    return f"{block_id}: {render.level_word('go-look')}: NOT MONITORED{since}"


def not_monitored(block_id: str, m: Monitoring, plan: AdvicePlan | None, d: Display, now_utc: dt.datetime,
                  frost_level: str | None = None) -> Message:
    """The alert (and card) text of a block nobody is watching: loud, with why and what to do."""
    head = not_monitored_headline(block_id, m.since_utc, d) + ": " + monitoring_reason(m, d, now_utc, relative=False)
    act = render.action(Step.CHECK_SENSORS, plan, d) if plan is not None else "go and check the block and its sensors"
    lines = [head, f"Advice: {act}; until it reports again, judge the block by hand."]
    if frost_level and render.level_word(frost_level) != render.level_word("rest"):
        lines.append(f"Last level before it went quiet: {render.level_word(frost_level)}.")
    cautions = render.cautions(plan, d) if plan is not None else [render.CAUTION_TEXT[c] for c in BASE_CAUTIONS]
    lines.append("Cautions: " + " ".join(cautions))
    return Message(head, act, "\n".join(lines))
