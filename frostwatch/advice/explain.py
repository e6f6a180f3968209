"""Why the advice says what it says, rendered from the plan: the reasons, the verdict line on the
block's method (one line saying why when it is not advised), the night's resources (only for an
advised method) and the stop rule. Part of the rendering, with `frostwatch.advice.render`.
"""

from __future__ import annotations

from frostwatch.advice.plan import AdvicePlan, Method, MethodVerdict, Risk, WhyNot
from frostwatch.advice.render import METHOD_NAME, risk_reason
from frostwatch.display import Display
from frostwatch.physics import sprinklers

_REGIME = {
    "windy": "windy night: the radiation model does not hold; the projection leans on the observed trend",
    "cloudy": "cloudy night: the radiation model does not hold; the projection leans on the observed trend",
}


def why_not(v: MethodVerdict, d: Display) -> str:
    """The one reason a method is not advised tonight."""
    w = v.why_not
    f, s = v.fans, v.sprinklers
    if w is WhyNot.NO_PROTECTION:
        return "no protection is configured for this block"
    if w is WhyNot.SUPERCOOLED_FOG:
        return "supercooled fog: ice on one blade can break it off; do not run fans in fog (FAO-FP p. 160)"
    if w is WhyNot.TOO_WINDY_FOR_FANS and f is not None:
        return (f"too windy for fans: {f.wind_speed_m_s:.1f} m/s is above {f.wind_limit_m_s:g} m/s, so there is no "
                "inversion to draw on and the blades can be damaged (FAO-FP p. 160)")
    if w is WhyNot.INVERSION_UNKNOWN:
        return ("inversion unknown (no healthy tower sensor for this block, of its own or site-wide): frostwatch cannot "
                "tell whether fans will help")
    if w is WhyNot.INVERSION_WEAK and f is not None:
        which = "projected" if f.inversion_projected else "measured"
        return (f"inversion {f.inversion_class} ({which} {d.delta(f.inversion_c)} between crop height and {tower_words(f)}); "
                f"fans need about {d.delta(f.min_useful_inversion_c)}-{d.delta(2.0)} or more (common practice)")
    if w is WhyNot.TOO_WINDY_FOR_SPRINKLERS and s is not None:
        return (f"wind {s.wind_speed_m_s:.1f} m/s is above about {s.wind_limit_m_s:g} m/s: over-tree sprinkling "
                "does not protect in that wind")
    if w is WhyNot.RATE_SHORT and s is not None:
        if s.required_mm_h is None:
            return (f"even in calm air the heat budget of the iced buds asks for at least {s.calm_air_mm_h:.1f} mm/h "
                    f"but the system delivers {s.capacity_mm_h:g} mm/h")
        return (f"the heat budget of the iced buds asks for at least {s.required_mm_h:.1f} mm/h tonight but the system "
                f"delivers {s.capacity_mm_h:g} mm/h")
    if w is WhyNot.LINES_MAY_FREEZE and s is not None:
        return f"the system's {s.capacity_mm_h:g} mm/h is below {s.min_mm_h:g} mm/h: the lines may freeze"
    return str(w)


def verdict_line(plan: AdvicePlan, d: Display) -> str | None:
    """'Wind machines: not advised tonight: too windy ...' (None when the method is advised)."""
    v = plan.verdict
    if v is None or v.advised:
        return None
    if v.method is Method.NONE:
        return "No protection is configured for this block."
    return f"{METHOD_NAME[v.method].capitalize()}: not advised tonight: {why_not(v, d)}."


def fan_facts(v: MethodVerdict, d: Display) -> list[str]:
    """The facts behind an advised fan verdict: the wind, the inversion, the warming expected."""
    f = v.fans
    out = []
    if f.wind_speed_m_s is None:
        out.append(f"wind unknown (no wind reading): fans help only below {f.wind_limit_m_s:g} m/s; check the wind first")
    which = "projected" if f.inversion_projected else "measured"
    out.append(f"inversion {f.inversion_class}: {which} {d.delta(f.inversion_c)} between crop height and "
               f"{tower_words(f)}")
    out.append(f"expected warming at crop height about {d.delta(f.gain_c)} ({d.delta(f.gain_low_c)}-{d.delta(f.gain_high_c)}: "
               f"30-50 % of the inversion, within the one measured case, McMeeking et al. 2002: {d.delta(1.0)}-{d.delta(2.0)} "
               f"from a {d.delta(3.5)} inversion; no published rule); it falls off with distance from the machine")
    if f.shortfall_c is not None:
        out.append(f"with the low end of that warming the block stays {d.delta(f.shortfall_c)} below T10 + margin: fans "
                   f"alone are not enough (buds run {d.delta(1.0)}-{d.delta(2.0)} colder than the air on clear nights)")
    return out


def tower_words(f) -> str:
    """'the tower' / 'the site-wide tower mast, 320 m away (the block has no tower of its own)'."""
    if f.tower_station is None or f.tower_own in (None, True):
        return "the tower"
    where = "the site-wide tower" if f.tower_site_wide else "tower"
    far = f", {f.tower_distance_m:,.0f} m away" if f.tower_distance_m is not None else ""
    return f"{where} {f.tower_station}{far} (the block has no tower of its own)"


def _sprinkler_facts(plan: AdvicePlan, v: MethodVerdict, d: Display) -> list[str]:
    s = v.sprinklers
    out = []
    falling = (s.dew_point_trend_c_per_h is not None and s.dew_point_trend_c_per_h < 0 and s.start_dew_point_c is not None
               and s.dew_point_c is not None and s.start_dew_point_c < s.dew_point_c - 0.05)
    if s.dew_point_c is None:
        out.append("no humidity reading: the sprinkler temperature cannot be computed from the wet bulb; have them "
                   "running earlier than the air temperature alone suggests")
    elif s.start_air_temp_c is not None and falling:
        when = f" by {d.time(plan.crossing_utc)}" if plan.crossing_utc is not None else " by the minimum"
        out.append(f"the dew point {d.temp(s.dew_point_c)} is falling ({d.delta(s.dew_point_trend_c_per_h)} per hour over "
                   f"the last two hours): projected at {d.temp(s.start_dew_point_c)}{when}, where the wet bulb reaches "
                   f"T10 + margin {d.temp(plan.line_c)} with the air at {d.temp(s.start_air_temp_c)} (FAO-FP Table 7.5 "
                   f"method, ASHRAE psychrometrics; each {d.delta(2.0)} fall of the dew point raises that air temperature by "
                   f"about {d.delta(1.0)})")
    elif s.start_air_temp_c is not None:
        out.append(f"at dew point {d.temp(s.dew_point_c)} the wet bulb reaches T10 + margin {d.temp(plan.line_c)} when "
                   f"the air is {d.temp(s.start_air_temp_c)} (FAO-FP Table 7.5 method, ASHRAE psychrometrics)")
    else:
        out.append(f"the dew point {d.temp(s.dew_point_c)} is above T10 + margin: the air temperature itself governs")
    if s.undertree:
        out.append(f"under-tree sprinklers: published rates are about "
                   f"{s.target_low_mm_h:g}-{s.target_high_mm_h:g} mm/h (UCCE almonds; 1.87 mm/h for Florida citrus, "
                   f"Parsons 2015), at least {s.min_mm_h:g} mm/h so the lines do not freeze (Connell & Snyder, UCCE)")
        if s.capacity_mm_h is not None and s.capacity_mm_h < (s.target_low_mm_h or 0):
            out.append(f"the system's {s.capacity_mm_h:g} mm/h is below those rates: expect less warming")
        if s.warming_high_c:
            out.append(f"with the inversion of {d.delta(s.inversion_c)} they warm the air near the ground by about "
                       f"{d.delta(s.warming_low_c)}-{d.delta(s.warming_high_c)} (Parsons 2015)")
        else:
            out.append("without a useful inversion (or with it unknown) under-tree sprinklers warm the air little: "
                       "frostwatch counts no warming (an apple-orchard study saw warming only under inversions)")
        if s.shortfall_c is not None:
            out.append(f"with the low end of that warming the block stays {d.delta(s.shortfall_c)} below T10 + margin")
    elif s.required_mm_h is None and s.calm_air_mm_h is not None:
        out.append(f"wind unknown (no wind reading): even in calm air tonight needs at least {s.calm_air_mm_h:.1f} mm/h "
                   "(more in any wind)")
        if s.capacity_mm_h is not None:
            out.append(f"the system's {s.capacity_mm_h:g} mm/h is enough only if the air stays calm; check the wind")
    elif s.required_mm_h is not None:
        wind = f" and {s.wind_speed_m_s:.1f} m/s" if s.wind_speed_m_s is not None else ""
        lo, hi = sprinklers.PRACTICE_RATE_MM_H
        lw = sprinklers.PRACTICE_LIGHT_WIND_PROTECTS_TO_C
        out.append(f"tonight needs at least {s.required_mm_h:.1f} mm/h at {d.temp(plan.predicted_min_c)}{wind} (heat "
                   f"budget of the iced buds, a lower bound; in practice {lo:g}-{hi:g} mm/h protects to about "
                   f"{d.temp(sprinklers.PRACTICE_CALM_PROTECTS_TO_C)} in calm air and to {d.temp(lw[0])} to "
                   f"{d.temp(lw[1])} in light wind, Longstroth 2012, MSU Extension)")
    return out


def _heater_facts(v: MethodVerdict, d: Display) -> list[str]:
    h = v.heaters
    out = []
    if h.inversion_c is None:
        out.append("inversion unknown (no tower): frostwatch cannot tell how much of the heaters' heat will stay")
    elif h.inversion_c >= h.min_useful_inversion_c:
        out.append(f"inversion {d.delta(h.inversion_c)}: heaters work best under a low inversion; many small fires hold "
                   "the heat better than a few big ones, whose plumes break through it (FAO-FP p. 147)")
    else:
        out.append(f"weak inversion ({d.delta(h.inversion_c)}): much of the heaters' heat will rise away (FAO-FP p. 147)")
    if h.requirement_w_m2 is not None and h.target_c is not None:
        req = (f"to hold {d.temp(h.target_c)} (T10 + margin) the heaters must replace the block's net radiation loss, "
               f"about {h.requirement_w_m2:.0f} W/m2")
        if h.output_kw_per_ha is not None:
            req += (f"; only about {h.retained_frac * 100:.0f} % of their heat stays under this inversion (10-15 %, Evans), "
                    f"so about {h.output_kw_per_ha:,.0f} kW of burning heaters per hectare")
            if h.heaters_per_ha is not None:
                req += f", {h.heaters_per_ha} heaters of {h.heater_kw:g} kW per hectare"
            else:
                req += " (set heater_kw for the block to see heaters per hectare)"
        out.append(req + " (an estimate that errs high: the soil gives back some heat)")
        if h.enough is False:
            out.append(f"the block's {h.installed_per_ha:g} heaters per hectare give about {h.installed_kw_per_ha:,.0f} kW/ha: "
                       "less than that estimate")
    out.append("light them in time for all to burn before the air reaches T10 + margin: the upwind border and the low "
               "spots first, with more heaters on the borders (FAO-FP p. 147)")
    return out


def reasons(plan: AdvicePlan, d: Display) -> list[str]:
    """The reasons behind the plan: the risk, the night's regime, and the facts on an advised method.

    A method not advised gets no facts here: its one line is `verdict_line`.
    """
    out = [risk_reason(plan, d)]
    if plan.risk in (Risk.UNKNOWN, Risk.MORNING):
        return out
    if plan.regime in _REGIME:
        out.append(_REGIME[plan.regime])
    if plan.crossing_utc is not None and plan.crossing_middle_utc != plan.crossing_utc:
        middle = f"at {d.time(plan.crossing_middle_utc)}" if plan.crossing_middle_utc else "not before sunrise"
        out.append(f"times are from the cold edge of the 80 % band (the safe side): T10 + margin may be reached by "
                   f"{d.time(plan.crossing_utc)}; the middle projection reaches it {middle}")
    if plan.learning_nights_known is not None:
        out.append(f"site still learning: {plan.learning_nights_known} of about {plan.learning_nights_needed} past "
                   "nights known, so the projection's band is wide")
    v = plan.verdict
    if v is None or not v.advised:
        if plan.wind_speed_m_s is None:
            out.append("wind unknown: no recent wind reading")
        return out
    if v.fans is not None:
        out += fan_facts(v, d)
    elif v.sprinklers is not None:
        if plan.wind_speed_m_s is None and v.sprinklers.undertree:
            out.append("wind unknown: no recent wind reading")
        out += _sprinkler_facts(plan, v, d)
    elif v.heaters is not None:
        if plan.wind_speed_m_s is None:
            out.append("wind unknown: no recent wind reading")
        out += _heater_facts(v, d)
    return out


def resources_line(plan: AdvicePlan, d: Display) -> str | None:
    """The night's running hours and water, fuel or energy for an advised method (else None)."""
    v = plan.verdict
    if v is None or not v.advised or v.resources is None or not plan.active:
        return None
    r = v.resources
    parts = [f"running about {r.hours:.1f} h (to {r.stop_after_sunrise_h:g} h after sunrise, an estimate; the stop "
             "rule decides)"]
    if v.method.is_sprinkler:
        if r.water_m3 is None:
            parts.append("set application_rate_mm_h and area_ha for the block to see the night's water")
        else:
            parts.append(f"water about {r.water_m3:,.0f} m3 at {r.rate_mm_h:g} mm/h on {r.area_ha:g} ha, peak flow "
                         f"{r.peak_flow_l_s:.1f} L/s")
            if r.fed_area_ha is not None:
                parts.append(f"the supply ({r.supply_l_s:g} L/s) feeds only {r.fed_area_ha:.1f} ha at the full rate: "
                             "sprinkle only that part")
    elif r.fuel_l is not None:
        parts.append(f"fuel about {r.fuel_l:,.0f} L at {r.fuel_l_per_h:g} L/h")
    elif r.energy_kwh is not None:
        parts.append(f"energy about {r.energy_kwh:,.0f} kWh ({r.machines} machine(s) at about {r.machine_kw:g} kW each, "
                     "FAO-FP p. 28; set fuel_l_per_h for a fuel figure)")
    else:
        parts.append("set fuel_l_per_h for the block to see the night's fuel")
    return f"{METHOD_NAME[v.method].capitalize()}: " + "; ".join(parts) + "."


def stop_rule(plan: AdvicePlan, d: Display) -> str | None:
    """When the advised method may stop (said with the advice to run it)."""
    v = plan.verdict
    if v is None or not v.advised or not plan.active:
        return None
    if v.method is Method.UNDERTREE_SPRINKLER:
        return (f"stop the under-tree sprinklers after sunrise, once the wet bulb of air outside the wetted area is above "
                f"T10 {d.temp(plan.t10_c)} and rising, or once all the ice on the ground has melted (Connell & Snyder, "
                "UCCE); never while that wet bulb is at or below T10")
    if v.method.is_sprinkler:
        at = ""
        if v.sprinklers is not None and v.sprinklers.stop_air_temp_c is not None:
            at = f" (at tonight's dew point the air is then above {d.temp(v.sprinklers.stop_air_temp_c)})"
        return (f"stop the sprinklers only after sunrise, once the wet bulb of air outside the sprinkled area is above "
                f"T10 {d.temp(plan.t10_c)}{at} and rising and the ice is melting (water running between ice and twig); "
                "never while that wet bulb is at or below T10 (FAO-FP p. 168)")
    return (f"stop the {METHOD_NAME[v.method]} after sunrise once crop-height air is above T10 + margin "
            f"{d.temp(plan.line_c)} and rising")
