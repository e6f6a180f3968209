"""Why the advice says what it says, rendered from the plan: the reasons (at most three short
lines), the verdict line on the block's method (one line saying why when it is not advised), the
night's resources (only for an advised method) and the stop rule. Part of the rendering, with
`frostwatch.advice.render`.

Written for a grower reading a phone at 3 a.m.: plain words, the site's units (`Display`), no
method names, sources or internal terms. The sources behind each rule are listed once, in the
night report's notes (`SOURCES`) and the README.
"""

from __future__ import annotations

from frostwatch.advice.plan import AdvicePlan, Condition, Method, MethodVerdict, Risk, WhyNot
from frostwatch.advice.render import METHOD_NAME, risk_reason
from frostwatch.display import Display

MAX_REASONS = 3
MAX_REASON_CHARS = 110  # one short line on a phone or in an email

# Where the rules come from, for the report's notes and the README (never inside an alert).
SOURCES = (
    "Critical temperatures T10 and T90: the crop tables in frostwatch (`frostwatch calc critical` names the "
    "source of each value), after WSU Extension EB 634 and similar extension tables.",
    "Wet bulb and dew point: ASHRAE psychrometrics (Handbook of Fundamentals); the ice bulb below freezing.",
    "Sprinkler start and stop temperatures: FAO Frost Protection (Snyder & de Melo-Abreu 2005) Table 7.5 "
    "method and p. 168; UF/IFAS Circular 348. Application rates: the heat budget of the iced plant "
    "(a lower bound), with Longstroth 2012 (MSU Extension) for rates used in practice.",
    "Wind machines: FAO Frost Protection p. 160 (light wind, an inversion, never in supercooled fog); the "
    "warming expected is 30-50 % of the inversion, a band set around the one measured case "
    "(McMeeking et al. 2002), not a published rule.",
    "Under-tree sprinklers: Parsons 2015 and Connell & Snyder (UCCE) for rates and warming.",
    "Heaters: FAO Frost Protection p. 147 (lighting order, borders); 10-15 % of their heat retained (Evans, "
    "Good Fruit Grower).",
    "Assessing the buds the day after: the Utah State University / Intermountain Fruit method (about 100 buds "
    "warmed for 2 hours, cut across, brown pistils counted).",
    "The projection of the night: radiative cooling fitted to this site's own past nights (Reuter's "
    "square-root curve, Brunt and Brutsaert sky emission); its times are taken on the early, safe side of "
    "its range, more so while the site is still learning.",
)


def why_not(v: MethodVerdict, d: Display) -> str:
    """The one reason a method is not advised tonight, in one short clause."""
    w = v.why_not
    f, s = v.fans, v.sprinklers
    if w is WhyNot.NO_PROTECTION:
        return "no protection is set up for this block"
    if w is WhyNot.SUPERCOOLED_FOG:
        return "fog below freezing: ice on a blade can break it off; do not run fans in fog"
    if w is WhyNot.TOO_WINDY_FOR_FANS and f is not None:
        return (f"too windy for fans ({d.wind(f.wind_speed_m_s)}, above {d.wind_limit(f.wind_limit_m_s)}): no warm "
                "air aloft to bring down, and the blades can be damaged")
    if w is WhyNot.INVERSION_UNKNOWN:
        return "no working tower sensor: frostwatch cannot tell whether fans will help"
    if w is WhyNot.INVERSION_WEAK and f is not None and f.history_nights:
        return (f"too little warm air aloft: at the coldest hour of {f.history_nights} past clear nights here "
                f"{tower_words(f, d)} was {d.delta(f.inversion_c)} warmer; fans need about "
                f"{d.delta(f.min_useful_inversion_c)} or more")
    if w is WhyNot.INVERSION_WEAK and f is not None:
        return (f"too little warm air aloft ({d.delta(f.inversion_c)} warmer at {tower_words(f, d)}); fans need "
                f"about {d.delta(f.min_useful_inversion_c)} or more")
    if w is WhyNot.TOO_WINDY_FOR_SPRINKLERS and s is not None:
        return f"too windy ({d.wind(s.wind_speed_m_s)}, above {d.wind_limit(s.wind_limit_m_s)}): sprinkling does not protect"
    if w is WhyNot.RATE_SHORT and s is not None:
        need = s.required_mm_h if s.required_mm_h is not None else s.calm_air_mm_h
        calm = " even in calm air" if s.required_mm_h is None else ""
        return (f"tonight needs at least {d.rate(need)}{calm}; the system gives {d.rate(s.capacity_mm_h)}: too little "
                "water leaves the buds colder than dry ones")
    if w is WhyNot.LINES_MAY_FREEZE and s is not None:
        return f"the system's {d.rate(s.capacity_mm_h)} is below {d.rate(s.min_mm_h)}: the lines may freeze"
    return str(w)


def verdict_line(plan: AdvicePlan, d: Display) -> str | None:
    """'Wind machines: not advised tonight: too windy ...' (None when the method is advised); for
    fans while the warm air aloft is still building, when frostwatch will know."""
    v = plan.verdict
    if v is not None and v.advised and v.fans is not None and v.fans.inversion_c is None \
            and Condition.WARM_AIR_ALOFT in v.conditions:
        return (f"{METHOD_NAME[v.method].capitalize()}: no working tower sensor: frostwatch cannot tell whether they "
                f"will help; run them if a thermometer up the tower reads at least "
                f"{d.delta(v.fans.min_useful_inversion_c)} warmer than at crop height.")
    if v is not None and v.advised and v.fans is not None and v.fans.inversion_pending:
        when = f"by {d.time(v.fans.known_by_utc)}" if v.fans.known_by_utc is not None else "later tonight"
        return (f"{METHOD_NAME[v.method].capitalize()}: warm air aloft usually builds after dusk; frostwatch will say "
                f"{when} whether they will help.")
    if v is None or v.advised:
        return None
    if v.method is Method.NONE:
        return "No protection is set up for this block."
    return f"{METHOD_NAME[v.method].capitalize()}: not advised tonight: {why_not(v, d)}."


def tower_words(f, d: Display) -> str:
    """'the tower' / 'tower east-tower, 320 m away' (another block's or the site-wide one)."""
    if f.tower_station is None or f.tower_own in (None, True):
        return "the tower"
    far = f", {d.length(f.tower_distance_m)} away" if f.tower_distance_m is not None else ""
    return f"tower {f.tower_station}{far}"


def fan_facts(v: MethodVerdict, d: Display) -> list[str]:
    """The facts behind an advised fan verdict: the wind, the inversion, the warming expected."""
    f = v.fans
    out = []
    if f.wind_speed_m_s is None:
        out.append(f"no wind reading: fans help only below {d.wind_limit(f.wind_limit_m_s)}; check the wind first")
    if f.inversion_c is None:
        out.append(f"no working tower sensor: fans need the air aloft about {d.delta(f.min_useful_inversion_c)} "
                   "or more warmer than at crop height")
        return out
    if f.inversion_pending:
        out.append(f"{d.delta(f.inversion_c)} warmer at {tower_words(f, d)} now; fans need about "
                   f"{d.delta(f.min_useful_inversion_c)} or more")
        return out
    warming = f"fans add {d.delta(f.gain_low_c)} to {d.delta(f.gain_high_c)}"
    if f.shortfall_c is not None:
        warming += f", not enough alone ({d.delta(f.shortfall_c)} short)"
    if f.history_nights:
        # the inversion projected from the site's past clear nights (before tonight's tower curve)
        fact = f"{d.delta(f.inversion_c)} warmer aloft at the coldest hour of {f.history_nights} past clear nights: {warming}"
        if len(fact) > MAX_REASON_CHARS:
            fact = f"usually {d.delta(f.inversion_c)} warmer aloft by the coldest hour: {warming}"
        out.append(fact)
        return out
    out.append(f"{d.delta(f.inversion_c)} warmer at {tower_words(f, d)}: {warming}")
    return out


def _sprinkler_facts(plan: AdvicePlan, v: MethodVerdict, d: Display) -> list[str]:
    s = v.sprinklers
    out = []
    falling = (s.dew_point_trend_c_per_h is not None and s.dew_point_trend_c_per_h < 0 and s.start_dew_point_c is not None
               and s.dew_point_c is not None and s.start_dew_point_c < s.dew_point_c - 0.05)
    if s.undertree:
        if s.warming_high_c:
            out.append(f"under-tree sprinklers add {d.delta(s.warming_low_c)} to {d.delta(s.warming_high_c)} "
                       "with this inversion")
        else:
            out.append("without warm air aloft under-tree sprinklers add little warmth")
        if s.shortfall_c is not None:
            out[-1] += f", not enough alone ({d.delta(s.shortfall_c)} short)"
        return out
    if s.dew_point_c is None:
        out.append("no humidity reading: have the sprinklers on earlier than the air temperature alone suggests")
    elif s.start_air_temp_c is not None and falling:
        out.append(f"dew point {d.temp(s.dew_point_c)}, {d.trend(s.dew_point_trend_c_per_h)}: the drier the air, "
                   "the sooner the sprinklers must be on")
    elif s.start_air_temp_c is None:
        out.append(f"dew point {d.temp(s.dew_point_c)} is above T10 + margin: the air temperature governs")
    if s.required_mm_h is None and s.calm_air_mm_h is not None:
        out.append(f"no wind reading: {d.rate(s.capacity_mm_h)} is enough only if the air stays calm; check the wind")
    elif s.required_mm_h is not None and s.capacity_mm_h is not None:
        out.append(f"tonight needs at least {d.rate(s.required_mm_h)}; the system gives {d.rate(s.capacity_mm_h)}")
    return out


def _heater_facts(v: MethodVerdict, d: Display) -> list[str]:
    h = v.heaters
    out = []
    if h.inversion_c is None:
        out.append("no tower reading: frostwatch cannot tell how much of the heaters' heat will stay")
    elif h.inversion_c < h.min_useful_inversion_c:
        out.append(f"little warm air aloft ({d.delta(h.inversion_c)}): much of the heat will rise away")
    if h.heaters_per_ha is not None:
        need = f"about {d.per_area(h.heaters_per_ha)} needed ({h.heater_kw:g} kW each)"
        if h.enough is False:
            need += f"; the block has {d.per_area(h.installed_per_ha)}"
        out.append(need)
    elif h.output_kw_per_ha is not None:
        out.append(f"about {d.power_per_area(h.output_kw_per_ha)} of burning heaters needed")
    return out


def _uncertainty(plan: AdvicePlan, d: Display) -> str | None:
    """The one caveat on the projection a grower should know: the readings fall faster than a
    clear night can cool (a sensor fault, first), the site is still learning, the night is windy or
    cloudy, or the times are set early to be safe."""
    if plan.physics_floor_c is not None:
        return (f"cooling faster than physics allows: check the sensor (projection held at the coldest a clear "
                f"night can reach, {d.temp(plan.physics_floor_c)})")
    early = plan.crossing_utc is not None and plan.crossing_middle_utc != plan.crossing_utc
    if plan.learning_nights_known is not None:
        return (f"site still learning ({plan.learning_nights_known} of about {plan.learning_nights_needed} nights "
                "known): times are set early to be safe")
    if plan.regime in ("windy", "cloudy"):
        return f"{plan.regime} night: the projection is less certain" + ("; times are set early" if early else "")
    if early:
        return "times are set early, on the safe side of the projection"
    return None


def reasons(plan: AdvicePlan, d: Display) -> list[str]:
    """At most three short reasons: where the night stands, the method's decisive fact, and the
    one caveat on the projection. A method not advised gets no fact here: its one line is
    `verdict_line`."""
    out = [risk_reason(plan, d)]
    if plan.risk in (Risk.UNKNOWN, Risk.MORNING):
        return out
    v = plan.verdict
    facts: list[str] = []
    if v is not None and v.advised:
        if v.fans is not None:
            facts = fan_facts(v, d)
        elif v.sprinklers is not None:
            facts = _sprinkler_facts(plan, v, d)
        elif v.heaters is not None:
            facts = _heater_facts(v, d)
    caveat = _uncertainty(plan, d)
    room = MAX_REASONS - 1 - (1 if caveat else 0)
    out += facts[:room]
    if caveat:
        out.append(caveat)
    return out[:MAX_REASONS]


def resources_line(plan: AdvicePlan, d: Display) -> str | None:
    """The night's running hours and water, fuel or energy for an advised method (else None)."""
    v = plan.verdict
    if v is None or not v.advised or v.resources is None or not plan.active:
        return None
    r = v.resources
    parts = [f"running about {r.hours:.1f} h to an hour after sunrise"]
    if v.method.is_sprinkler:
        if r.water_m3 is None:
            parts.append("set application_rate_mm_h and area_ha for the block to see the water")
        else:
            parts.append(f"water about {d.water(r.water_m3)}, peak flow {d.flow(r.peak_flow_l_s)}")
            if r.fed_area_ha is not None:
                parts.append(f"the supply ({d.flow(r.supply_l_s)}) runs only {d.area(r.fed_area_ha)} at the full rate: "
                             "sprinkle only that part")
    elif r.fuel_l is not None:
        parts.append(f"fuel about {d.fuel(r.fuel_l)}")
    elif r.energy_kwh is not None:
        parts.append(f"energy about {r.energy_kwh:,.0f} kWh")
    else:
        parts.append("set fuel_l_per_h for the block to see the fuel")
    return f"{METHOD_NAME[v.method].capitalize()} (estimate): " + "; ".join(parts) + "."


def stop_rule(plan: AdvicePlan, d: Display) -> str | None:
    """When the advised method may stop (said with the advice to run it)."""
    v = plan.verdict
    if v is None or not v.advised or not plan.active:
        return None
    if v.method is Method.UNDERTREE_SPRINKLER:
        return (f"after sunrise, once the wet bulb outside the wetted area is above T10 {d.temp(plan.t10_c)} and "
                "rising, or the ice on the ground has melted; never while that wet bulb is at or below T10")
    if v.method.is_sprinkler:
        at = ""
        if v.sprinklers is not None and v.sprinklers.stop_air_temp_c is not None:
            at = f" (air above about {d.temp(v.sprinklers.stop_air_temp_c)} tonight)"
        return (f"after sunrise, once the wet bulb outside the sprinkled area is above T10 {d.temp(plan.t10_c)}{at} "
                "and rising and the ice is melting; never while that wet bulb is at or below T10")
    return (f"after sunrise, once crop-height air is above T10 + margin {d.temp(plan.line_c)} and rising")
