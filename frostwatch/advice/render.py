"""The one place advice becomes words: headline, action, reasons and cautions, from an `AdvicePlan`.

Every screen (alerts, the status page, `frostwatch status`, the morning report, replay and demo
output) calls these functions, so a level's headline and its action come from the same step and
cannot disagree. Rules of the wording:

- a standby ("get ready") text never says "start"; only the act and critical texts do;
- a method that is not advised tonight gets one line saying why, and no resource estimate;
- a missing number is left out of a sentence, never printed as "n/a".

Temperatures and times go through `Display` (the site's unit and time zone). The fixed words
(level words, method names, cautions) are in `frostwatch.advice.words`.
"""

from __future__ import annotations

import datetime as dt

from frostwatch.advice.plan import (
    AdvicePlan,
    Caution,
    Condition,
    Method,
    MethodVerdict,
    Risk,
    Step,
    StopBasis,
    WhyNot,
)
from frostwatch.advice.words import (  # noqa: F401 - re-exported: many screens take the words from here
    CAUTION_TEXT,
    GENERAL_CAUTIONS,
    LEVEL_WORD,
    LIGHTING,
    METHOD_NAME,
    OLD_LEVEL_NAMES,
    START,
    TRIGGER_WORD,
    Notice,
    alternative_text,
    level_word,
    method_name,
)
from frostwatch.display import Display


def _t(d: Display, t: dt.datetime | None) -> str:
    return d.time(t)


def _conditions(v: MethodVerdict | None, d: Display, ready: bool = False) -> str:
    """' if the wind is below 2.5 m/s and ...' (a get-ready text leaves out the warm air aloft: the
    crew gets the machines ready while it builds)."""
    if v is None or not v.conditions:
        return ""
    words = []
    for c in v.conditions:
        if c is Condition.WARM_AIR_ALOFT and not ready and v.fans is not None:
            words.append(f"the tower reads at least {d.delta(v.fans.min_useful_inversion_c)} warmer than crop height")
        elif c is Condition.WIND_BELOW_FAN_LIMIT:
            words.append(f"the wind is below {d.wind_limit(v.fans.wind_limit_m_s)}" if v.fans else "the wind is light")
        elif c is Condition.NO_FOG:
            words.append("there is no fog")
        elif c is Condition.CALM_AIR:
            words.append("the air stays calm")
    return " if " + " and ".join(words) if words else ""


def _reach(plan: AdvicePlan, d: Display) -> str:
    """'the air temperature is projected to reach -0.2 °C at 23:11' (or the nearest true thing)."""
    what = f"the {TRIGGER_WORD[plan.trigger]} temperature"
    now_c = plan.trigger_now_c
    if now_c is not None and now_c <= plan.line_c and plan.risk is not Risk.MORNING:
        return f"{what} is already at or below {d.temp(plan.line_c)} (now {d.temp(now_c)})"
    if plan.crossing_utc is not None and _from_cold_edge(plan):
        return f"{what} may reach {d.temp(plan.line_c)} by {_t(d, plan.crossing_utc)}"
    if plan.crossing_utc is not None:
        return f"{what} is projected to reach {d.temp(plan.line_c)} at {_t(d, plan.crossing_utc)}"
    if plan.risk in (Risk.LIKELY, Risk.NOW):
        return f"the projection reaches T10 + margin {d.temp(plan.line_c)}"
    return f"{what} may reach {d.temp(plan.line_c)} if the projection worsens"


def _short_reach(plan: AdvicePlan, d: Display) -> str:
    """The headline's form: 'air projected to reach -0.2 °C (T10 + margin) at 05:20'."""
    now_c = plan.trigger_now_c
    if now_c is not None and now_c <= plan.line_c and plan.risk is not Risk.MORNING:
        return f"{TRIGGER_WORD[plan.trigger]} {d.temp(now_c)}, at or below T10 + margin {d.temp(plan.line_c)}"
    if plan.crossing_utc is None:
        return f"T10 + margin {d.temp(plan.line_c)} within reach"
    if _from_cold_edge(plan):
        return f"{TRIGGER_WORD[plan.trigger]} may reach {d.temp(plan.line_c)} (T10 + margin) by {_t(d, plan.crossing_utc)}"
    return f"{TRIGGER_WORD[plan.trigger]} projected to reach {d.temp(plan.line_c)} (T10 + margin) at {_t(d, plan.crossing_utc)}"


def _from_cold_edge(plan: AdvicePlan) -> bool:
    """True when the act time comes from the band's cold edge, earlier than the middle projection."""
    return plan.crossing_utc is not None and plan.crossing_middle_utc != plan.crossing_utc


def _at_t10(plan: AdvicePlan, d: Display) -> str:
    air = plan.air_temp_c
    if air is not None and air <= plan.t10_c:
        return f"crop-height air {d.temp(air)} is at or below T10 {d.temp(plan.t10_c)}"
    now = f" (now {d.temp(air)})" if air is not None else ""
    return f"crop-height air reached T10 {d.temp(plan.t10_c)} tonight{now}"


def _trend(d: Display, tr: float | None) -> str:
    """' (rising 1.3 °C per hour)', ' (steady)'; nothing without a trend."""
    return "" if tr is None else f" ({d.trend(tr)})"


def _above(d: Display, what: str, now_c: float, limit_c: float, trend: float | None = None, name: str = "") -> str:
    """'crop-height air 1.2 °C is above 0.0 °C and rising 1.3 °C per hour', or, when both read
    the same once rounded, 'crop-height air has just passed 0.0 °C and is rising ...' (never
    "x is above x"; a trend that rounds to zero is "steady", never "rising")."""
    limit = f"{name} {d.temp(limit_c)}" if name else d.temp(limit_c)
    if d.same_temp(now_c, limit_c):
        text, verb = f"{what} has just passed {limit}", "is "
    else:
        text, verb = f"{what} {d.temp(now_c)} is above {limit}", ""
    return text if trend is None else f"{text} and {verb}{d.trend(trend)}"


def _sprinkler_start(plan: AdvicePlan, d: Display) -> str:
    v = plan.verdict
    if v is None or not v.advised or v.sprinklers is None or v.sprinklers.start_air_temp_c is None:
        return ""
    return f"; sprinklers must be running before the air cools to {d.temp(v.sprinklers.start_air_temp_c)}"


def action(step: Step, plan: AdvicePlan, d: Display) -> str:
    """What to do, as one sentence without a final full stop."""
    m, v = plan.method, plan.verdict
    name = METHOD_NAME[m]
    advised = plan.advised
    if step is Step.CHECK_SENSORS:
        return "go and check the block and its sensors: frostwatch cannot see it"
    if step is Step.NOTHING:
        return "nothing to do now; frostwatch keeps watching"
    if step is Step.WATCH:
        return "nothing to do yet: frost may come later tonight; frostwatch will say when to get ready"
    if step is Step.EASING:
        low = f" (minimum {d.temp(plan.predicted_min_c)}, above {d.temp(plan.line_c)})" if plan.predicted_min_c is not None else ""
        return (f"the projection has eased{low}; keep protection going if it is running until frostwatch gives "
                "the all-clear")
    if step is Step.GET_READY:
        if advised:
            who = f"get the {name} ready"
        elif m is Method.NONE:
            who = "get ready to protect the block if you can"
        else:
            who = "get ready to protect the block by other means"
        ahead = plan.ready_by_utc is not None and plan.ready_by_utc > plan.time_utc
        if ahead:
            text = (f"{who} by {_t(d, plan.ready_by_utc)}{_conditions(v, d, True) if advised else ''} "
                    f"({plan.mobilisation_min:.0f} min before {_reach(plan, d)})")
        else:
            text = f"{who} now{_conditions(v, d, True) if advised else ''}: {_reach(plan, d)}"
        if not advised and m is not Method.NONE:
            text += f"; the {name} are not advised tonight"
        return text + _sprinkler_start(plan, d) + (LIGHTING if advised and m is Method.HEATERS else "")
    if step is Step.START_NOW:
        if advised:
            lit = LIGHTING if m is Method.HEATERS else ""
            return f"{START[m]} now{_conditions(v, d)}: {_reach(plan, d)}{_sprinkler_start(plan, d)}{lit}"
        if m is Method.NONE:
            return f"protect the block now if you can: {_reach(plan, d)}"
        return f"protect the block by other means now: {_reach(plan, d)}; the {name} are not advised tonight"
    if step is Step.AT_CRITICAL:
        fact = _at_t10(plan, d)
        if advised and m.is_sprinkler:
            return f"{START[m]} now if they are not running, and keep them running without a break: {fact}"
        if advised:
            return f"{START[m]} now{_conditions(v, d)}: {fact}{LIGHTING if m is Method.HEATERS else ''}"
        if m is Method.NONE:
            return f"protect the block now if you can: {fact}"
        return f"protect the block by other means now: {fact}; the {name} are not advised tonight"
    if step is Step.NOT_HOLDING:
        return (f"the {name} are running but the block is at its critical temperature: check that every machine or "
                "line is really working, and add protection if you can")
    if step is Step.KEEP_RUNNING:
        if not advised and m.is_sprinkler:
            return (f"keep the {name} running without a break (stopping them would cool the wet buds): {_reach(plan, d)}; "
                    "they may not be enough tonight, see why")
        if not advised:
            return f"the {name} are running but are not advised tonight, see why: {_reach(plan, d)}"
        return f"keep the {name} running: {_reach(plan, d)}"
    s = plan.stop
    if step is Step.NIGHT_OVER or m is Method.NONE:
        air = f"crop-height air is {d.temp(plan.air_temp_c)}; " if plan.air_temp_c is not None else ""
        return f"the night is over: {air}check the buds for damage later today"
    now_c = None if s is None else s.now_c
    trend = None if s is None else s.trend_c_per_h
    if step is Step.SAFE_TO_STOP and now_c is None:
        return f"the {name} may stop: the stop rule was met this morning"
    if m.is_sprinkler:
        return _sprinkler_stop_action(step, plan, d)
    limit = d.temp(plan.line_c)
    if step is Step.SAFE_TO_STOP:
        return f"the {name} may stop: {_above(d, 'crop-height air', now_c, plan.line_c, trend)}"
    if step is Step.WATCH_TO_STOP:
        return (f"the {name} may stop once crop-height air ({d.temp(now_c)}) keeps rising above {limit} (watch it for "
                "15-30 min; frostwatch has no recent trend)")
    if now_c is None or now_c <= plan.line_c:
        now = f" (now {d.temp(now_c)})" if now_c is not None else ""
        return f"keep the {name} running until crop-height air is above {limit} and rising{now}"
    return f"keep the {name} running: crop-height air {d.temp(now_c)} is not rising{_trend(d, trend)}"


def _ice(plan: AdvicePlan) -> str:
    """The ice condition of the stop rule: on the twigs (over-tree) or on the ground (under-tree)."""
    if plan.method is Method.UNDERTREE_SPRINKLER:
        return "the ice on the ground has melted"
    return "the ice is melting (water running between ice and twig)"


def _sprinkler_stop_action(step: Step, plan: AdvicePlan, d: Display) -> str:
    """The morning stop advice for sprinklers: on unsprinkled reference air, or the stated fallback."""
    s = plan.stop
    now_c, trend, t10 = s.now_c, s.trend_c_per_h, d.temp(plan.t10_c)
    if s.basis is StopBasis.REFERENCE_WET_BULB:
        wb = f"the wet bulb of unsprinkled air at {s.reference_station} {d.temp(now_c)}"
        if step is Step.SAFE_TO_STOP:
            where = f"the wet bulb of unsprinkled air at {s.reference_station}"
            return f"the sprinklers may stop once {_ice(plan)}: {_above(d, where, now_c, plan.t10_c, trend, 'T10')}"
        if step is Step.WATCH_TO_STOP:
            return (f"{wb} is above T10 {t10}: the sprinklers may stop once it keeps rising (watch it for 15-30 min; "
                    f"frostwatch has no recent trend) and {_ice(plan)}")
        if now_c <= plan.t10_c:
            return (f"keep the sprinklers running: {wb} is not above T10 {t10}; stopping now would cool the wet buds "
                    "towards it")
        return (f"keep the sprinklers running: {wb} is above T10 but not yet rising by "
                f"{d.delta(s.min_rise_c_per_h)} an hour{_trend(d, trend)}")
    # no reference air: the block's own air must pass the fallback stop temperature
    why = (f"the reference station {s.reference_station} has no fresh reading frostwatch can trust" if s.reference_silent
           else "there is no reference station outside the sprinkled area")
    basis = (f"the spray wets the block's own air ({why}), so frostwatch waits for it to pass "
             f"{d.temp(s.limit_c)}, well above the usual stop temperature")
    air = f"the block's air {d.temp(now_c)}" if now_c is not None else "the block's air"
    if step is Step.SAFE_TO_STOP:
        above = (_above(d, "the block's air", now_c, s.limit_c, trend) if now_c is not None
                 else f"{air} is above {d.temp(s.limit_c)} and rising")
        return f"the sprinklers may stop once {_ice(plan)}: {above}; {basis}"
    if step is Step.WATCH_TO_STOP:
        return (f"{air} is above {d.temp(s.limit_c)}: the sprinklers may stop once it keeps rising (watch it for 15-30 "
                f"min) and {_ice(plan)}; {basis}")
    return f"keep the sprinklers running until {_ice(plan)} and {air} is above {d.temp(s.limit_c)} and rising; {basis}"


def headline(block_id: str, level: str, step: Step, plan: AdvicePlan, d: Display, notice: Notice = Notice.STATE,
             previous_ready_by_utc: dt.datetime | None = None) -> str:
    """The first line of a message (and a card's title): the level and the step, never at odds."""
    b, m = block_id, plan.method
    word = level_word(level)
    level = OLD_LEVEL_NAMES.get(level, level)
    pmin = plan.predicted_min_c
    if notice is Notice.OUTLOOK:
        around = f" around {_t(d, plan.predicted_min_at_utc)}" if plan.predicted_min_at_utc else ""
        if level == "wait":
            return f"{b}: {word}: frost may come tonight: minimum {d.temp(pmin)}{around} (T10 {d.temp(plan.t10_c)})"
        return f"{b}: {word}: tonight looks safe: minimum {d.temp(pmin)}{around}"
    if notice is Notice.RESOLVED:
        return f"{b}: {word}: the projection is back above T10 + margin (minimum {d.temp(pmin)})"
    if notice is Notice.NIGHT_OVER:
        return f"{b}: {word}: the night is over and the block is warming"
    prefix = f"{b}: "
    if notice is Notice.MONITORED_AGAIN:
        prefix = f"{b}: monitored again; "
    if notice is Notice.UPDATE:
        was = f" (was {_t(d, previous_ready_by_utc)})" if previous_ready_by_utc else ""
        return f"{b}: UPDATE: {word}: get ready by {_t(d, plan.ready_by_utc)}{was}; {_short_reach(plan, d)}"
    if step is Step.CHECK_SENSORS:
        return f"{prefix}{word}: NOT MONITORED: go and check the block"
    if step is Step.AT_CRITICAL:
        return f"{prefix}{word}: protect now: {_at_t10(plan, d)}"
    if step is Step.NOT_HOLDING:
        return f"{prefix}{word}: protection is not holding: {_at_t10(plan, d)}"
    if step is Step.START_NOW:
        if plan.advised:
            what = f"{START[m]} now"
        elif m is Method.NONE:
            what = "protect the block now if you can"
        else:
            what = f"protect the block by other means now ({METHOD_NAME[m]} not advised tonight)"
        return f"{prefix}{word}: {what}; {_short_reach(plan, d)}"
    if step is Step.GET_READY:
        ahead = plan.ready_by_utc is not None and plan.ready_by_utc > plan.time_utc
        by = f" by {_t(d, plan.ready_by_utc)}" if ahead else " now"
        return f"{prefix}{word}: get ready{by}; {_short_reach(plan, d)}"
    if step is Step.KEEP_RUNNING:
        return f"{prefix}{word}: keep the {METHOD_NAME[m]} running; {_short_reach(plan, d)}"
    if step is Step.EASING:
        return f"{prefix}{word}: the projection has eased"
    if step in (Step.SAFE_TO_STOP, Step.WATCH_TO_STOP) and level == "may-stop":
        return f"{prefix}{word}: the stop rule for the {METHOD_NAME[m]} is met"
    if step is Step.WAIT_TO_STOP:
        return f"{prefix}{word}: keep the {METHOD_NAME[m]} running for now"
    if step is Step.WATCH_TO_STOP:
        return f"{prefix}{word}: watch the trend before stopping"
    if step is Step.NIGHT_OVER:
        return f"{prefix}{word}: the night is over"
    if step is Step.WATCH:
        return f"{prefix}{word}: frost may come later tonight; nothing to do yet"
    low = f": minimum {d.temp(pmin)}" if pmin is not None else ""
    return f"{prefix}{word}: nothing to do{low}"


def risk_reason(plan: AdvicePlan, d: Display) -> str:
    """Why the block stands where it stands (one clause)."""
    pmin, line = plan.predicted_min_c, d.temp(plan.line_c)
    if plan.risk is Risk.UNKNOWN or pmin is None:
        return "no healthy crop-height sensor"
    if plan.risk is Risk.MORNING:
        at = f" at {_t(d, plan.predicted_min_at_utc)}" if plan.predicted_min_at_utc else ""
        return f"after sunrise: tonight's minimum was {d.temp(pmin)}{at}"
    if plan.risk is Risk.NOW:
        return _at_t10(plan, d)
    band = plan.band_c if plan.band_c is not None and plan.band_c == plan.band_c else None
    if plan.risk is Risk.LIKELY:
        pm = f" ± {d.delta(band)}" if band is not None else ""
        return f"projected minimum {d.temp(pmin)}{pm}, below T10 + margin {line}"
    if plan.risk is Risk.POSSIBLE:
        within = f"within {d.delta(band)} of" if band is not None else "near"
        return f"projected minimum {d.temp(pmin)}, {within} T10 + margin {line}"
    return f"projected minimum {d.temp(pmin)} stays above T10 + margin {line}"


def cautions(plan: AdvicePlan, d: Display) -> list[str]:
    """The cautions that travel with the plan, as sentences."""
    out = []
    for c in plan.cautions:
        if c is Caution.FOG_LOOK:
            out.append("The air is near its dew point below freezing: fog is possible; look before running fans, and "
                       "never run them in fog below freezing.")
        elif c is Caution.WET_BULB_AT_T10:
            out.append(f"The wet bulb ({d.temp(plan.trigger_now_c)}) is already at or below T10: sprinklers turned on "
                       "now cool the buds towards it until ice forms; weigh this with your adviser.")
        else:
            out.append(CAUTION_TEXT[c])
    return out


def alternatives(v: MethodVerdict | None, d: Display | None = None) -> list[str]:
    return [] if v is None else [alternative_text(a, d or Display()) for a in v.alternatives]


__all__ = [
    "Notice", "METHOD_NAME", "LEVEL_WORD", "GENERAL_CAUTIONS", "action", "headline", "risk_reason", "cautions", "alternatives",
    "method_name", "WhyNot",
]
