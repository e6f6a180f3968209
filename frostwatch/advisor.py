"""Protection advice per block (pure): a `Projection`, the block's config and recent readings in,
`Advice` out.

The rules are those of the trade as the reference sheet records them: wind machines need an
inversion and light wind and no supercooled fog (FAO-FP 2005 p. 160); sprinklers must be running
before the wet bulb reaches the critical temperature plus the margin, need the application rate
tonight's heat budget asks for, and may stop only after sunrise once the wet bulb is above T10 and
rising and the ice is melting (FAO-FP p. 168; UF/IFAS Circ. 348); fans and heaters stop once
crop-height air is above T10 + margin and rising after sunrise; the start time leaves the crew its
mobilisation time (grower-needs C1). It advises; the grower decides.

Nothing here reads a clock or does I/O: `now_utc` and the readings are passed in.
"""

from __future__ import annotations

import datetime as dt
import math
from collections.abc import Mapping

import numpy as np

from frostwatch.config import Block
from frostwatch.display import Display
from frostwatch.models import Advice, Projection
from frostwatch.physics import humidity, sprinklers, windmachine

CAUTIONS = (
    "frostwatch advises; the grower decides.",
    "Check with your own calibrated thermometers at bud height before acting.",
    "Local agronomic advice, codes and water rights prevail.",
    "Keep clear of wind machines when starting them; ice-loaded trees and wet ground are hazards under sprinklers.",
)

SPRINKLER_METHODS = ("overtree_sprinkler", "undertree_sprinkler")
STANDBY_HORIZON_H = 3.0  # standby when the margin line is projected to be crossed within this
# Protection usually runs until the sun has warmed the block; for the night's water and fuel
# estimate frostwatch assumes it stops this long after sunrise (ENGINEERING ASSUMPTION; the stop
# rule, not this figure, decides when to stop).
STOP_AFTER_SUNRISE_H = 1.0
TREND_WINDOW_S = 1800.0  # the last 30 min of readings give the trend for the stop rules
# Fog is possible below freezing when the air is this close to its dew point (engineering choice;
# frostwatch cannot see fog, so it asks the grower to look).
FOG_DEPRESSION_C = 0.5
# One large wind machine: 65-75 kW per 4-4.5 ha (FAO-FP p. 28, p. 159); used for an energy
# estimate when the block gives no fuel figure.
WIND_MACHINE_POWER_KW = 75.0
# Under-tree sprinklers (Connell & Snyder, UCCE almonds): target 1.7-2.2 mm/h, at least 0.84 mm/h
# so the lines do not freeze; warming 0.6-1.4 C at 1.2 m (Parsons 2015), up to about 1.7 C and
# only under an inversion (apple-orchard study, frost-physics.md 4.3).
UNDERTREE_TARGET_MM_H = (1.7, 2.2)
UNDERTREE_MIN_MM_H = 0.84

Series = Mapping[tuple[str, str], tuple[np.ndarray, np.ndarray]]

_ACTION_WORDS = {
    "wind_machine": "start the wind machines",
    "overtree_sprinkler": "start the over-tree sprinklers",
    "undertree_sprinkler": "start the under-tree sprinklers",
    "heaters": "light the heaters",
    "none": "protect the block if you can (this block has no protection configured)",
}


def _num(v: float | None) -> float:
    """None -> NaN, so that a missing value can never pass for a real one (never 0)."""
    return math.nan if v is None else float(v)


def trend_c_per_h(series: Series | None, station: str | None, quantity: str, now_s: float,
                  window_s: float = TREND_WINDOW_S) -> float | None:
    """Least-squares slope of a station's readings over the window before `now_s` [degC h-1].

    None without at least three readings spanning a third of the window.
    """
    if series is None or station is None or (station, quantity) not in series:
        return None
    t, v = series[(station, quantity)]
    sel = (t > now_s - window_s) & (t <= now_s) & np.isfinite(v)
    if sel.sum() < 3 or float(t[sel][-1] - t[sel][0]) < window_s / 3:
        return None
    return float(np.polyfit((t[sel] - now_s) / 3600.0, v[sel], 1)[0])


def _wet_bulb_trend_c_per_h(series: Series | None, station: str | None, dew_point_c: float | None,
                            now_s: float, pressure_hpa: float) -> float | None:
    """Slope of the wet bulb over the window, from the air readings and tonight's dew point."""
    if series is None or station is None or dew_point_c is None or (station, "air_temperature") not in series:
        return None
    t, v = series[(station, "air_temperature")]
    sel = (t > now_s - TREND_WINDOW_S) & (t <= now_s) & np.isfinite(v)
    if sel.sum() < 3 or float(t[sel][-1] - t[sel][0]) < TREND_WINDOW_S / 3:
        return None
    td = np.minimum(dew_point_c, v[sel])
    wb = np.asarray(humidity.wet_bulb_c_from_dew_point(v[sel], td, pressure_hpa), dtype=float)
    ok = np.isfinite(wb)
    if ok.sum() < 3:
        return None
    return float(np.polyfit((t[sel][ok] - now_s) / 3600.0, wb[ok], 1)[0])


def _risk(p: Projection, block: Block, after_sunrise: bool, d: Display) -> tuple[str, list[str]]:
    t10, margin, T = block.kill_10pct_c, block.margin_c, d.temp
    band = _num(p.band_c)
    band = 0.0 if math.isnan(band) else band
    if after_sunrise:
        return "morning", [f"after sunrise: tonight's minimum was {T(p.predicted_min_c)} at {d.time(p.predicted_min_at_utc)}"]
    if p.air_temp_c <= t10:
        # damage is done at bud temperature, which crop-height air stands for: the air decides
        return "now", [f"crop-height air {T(p.air_temp_c)} is at or below T10 {T(t10)}"]
    if p.predicted_min_c <= t10 + margin:
        return "likely", [f"projected minimum {T(p.predicted_min_c)} (+/- {d.delta(band)}) reaches T10 + margin {T(t10 + margin)}"]
    if p.predicted_min_c - band <= t10 + margin:
        return "possible", [f"projected minimum {T(p.predicted_min_c)} is within its uncertainty ({d.delta(band)}) "
                            f"of T10 + margin {T(t10 + margin)}"]
    return "low", [f"projected minimum {T(p.predicted_min_c)} stays above T10 + margin {T(t10 + margin)}"]


# ---- wind machines ---------------------------------------------------------------------------


def wind_machine_plan(p: Projection, block: Block, d: Display, supercooled_fog: bool | None) -> dict:
    """Will fans help tonight, by how much, and if not, why and what else helps."""
    inv = p.projected_inversion_c if p.projected_inversion_c is not None else p.inversion_c
    inv_c, wind = _num(inv), _num(p.wind_speed_m_s)
    fog_possible = (p.air_temp_c is not None and p.dew_point_c is not None and p.air_temp_c <= 0.5
                    and p.air_temp_c - p.dew_point_c <= FOG_DEPRESSION_C)
    # with the wind unknown, judge the rest and make the advice conditional on the wind
    suit = windmachine.wind_machine_suitability(
        inv_c, 0.0 if math.isnan(wind) else wind, _num(p.predicted_min_c), block.kill_10pct_c,
        supercooled_fog=bool(supercooled_fog), gain_fraction=block.wind_machine_gain_frac,
    )
    reasons: list[str] = []
    why_not: list[str] = []
    limit = windmachine.MAX_WIND_FOR_FANS_M_S
    if math.isnan(wind):
        reasons.append(f"wind unknown (no wind reading): fans help only below {limit:g} m/s; check the wind before starting")
    elif wind > limit:
        why_not.append(f"too windy for fans: {wind:.1f} m/s is above {limit:g} m/s, so there is no inversion to draw on "
                       "and the blades can be damaged (FAO-FP p. 160)")
    if supercooled_fog:
        why_not.append("supercooled fog: ice on one blade can break it off; do not run fans in fog (FAO-FP p. 160)")
    elif fog_possible:
        reasons.append(f"the air is within {d.delta(FOG_DEPRESSION_C)} of its dew point below freezing: fog is possible; "
                       "look before starting, and do not run fans in supercooled fog (FAO-FP p. 160)")
    which = "projected" if p.projected_inversion_c is not None else "measured"
    if math.isnan(inv_c):
        why_not.append("inversion unknown (no healthy tower sensor): frostwatch cannot tell whether fans will help")
    elif inv_c < windmachine.MIN_USEFUL_INVERSION_C:
        why_not.append(f"inversion {windmachine.classify_inversion(inv_c)} ({which} {d.delta(inv_c)} between crop height "
                       f"and the tower; fans need about {d.delta(windmachine.MIN_USEFUL_INVERSION_C)}-"
                       f"{d.delta(2.0)} or more, common practice)")
    else:
        reasons.append(f"inversion {windmachine.classify_inversion(inv_c)}: {which} {d.delta(inv_c)} between crop height "
                       "and the tower")
    useful = not why_not and suit.useful
    gain = suit.expected_gain_c if useful else 0.0
    lo, hi = (suit.expected_gain_low_c, suit.expected_gain_high_c) if useful else (0.0, 0.0)
    sufficient = useful and suit.sufficient
    deficit = block.kill_10pct_c - _num(p.predicted_min_c)
    if useful:
        reasons.append(f"expected warming at crop height about {d.delta(gain)} ({d.delta(lo)}-{d.delta(hi)}: 30-50 % of "
                       "the inversion, an engineering assumption from memory, not a published rule); it falls off with "
                       "distance from the tower")
        if deficit > 0 and not sufficient:
            why_not.append(f"the projected minimum is {d.delta(deficit)} below T10, more than fans are expected to give")
    alternatives = _alternatives("wind_machine", why_not, useful)
    return dict(useful=useful, sufficient=sufficient, gain=gain, gain_low=lo, gain_high=hi, inversion_c=inv,
                wind_known=not math.isnan(wind), fog_possible=fog_possible, reasons=reasons, why_not=why_not,
                alternatives=alternatives)


def _alternatives(method: str, why_not: list[str], useful: bool) -> list[str]:
    out: list[str] = []
    text = " ".join(why_not)
    if "too windy" in text:
        out.append("in wind (an advective frost) little works well: heaters lose their heat downwind, over-tree "
                   "sprinklers need far more water (and none above about 4.5 m/s); protect what you can and ask your adviser")
    if "fog" in text:
        out.append("in fog use heaters or sprinklers, not fans")
    if "inversion" in text and "too windy" not in text:
        out.append("with a weak inversion, heaters together with the fans (the fans spread the heat) or sprinklers help more")
    if useful and "more than fans" in text:
        out.append("add heaters to the fans (they combine well, common practice) or use sprinklers where you have them")
    return out


# ---- sprinklers ------------------------------------------------------------------------------


def _sprinkler_plan(p: Projection, block: Block, d: Display, pressure_hpa: float) -> dict:
    """Start and stop air temperatures, the rate tonight needs against the block's capacity."""
    t10, margin, T = block.kill_10pct_c, block.margin_c, d.temp
    reasons: list[str] = []
    harm: list[str] = []
    start_air = stop_air = None
    if p.dew_point_c is None:
        reasons.append("no humidity reading: the sprinkler start temperature cannot be computed from the wet bulb; "
                       "start earlier than you would by air temperature alone")
    else:
        s = float(sprinklers.sprinkler_start_air_temp_c(p.dew_point_c, t10, margin_c=margin, pressure_hpa=pressure_hpa))
        e = float(sprinklers.sprinkler_start_air_temp_c(p.dew_point_c, t10, margin_c=0.0, pressure_hpa=pressure_hpa))
        start_air = s if math.isfinite(s) else None
        stop_air = e if math.isfinite(e) else None
        if start_air is not None:
            reasons.append(f"at dew point {T(p.dew_point_c)} the wet bulb reaches T10 + margin {T(t10 + margin)} when the "
                           f"air is {T(start_air)} (FAO-FP Table 7.5 method, ASHRAE psychrometrics)")
        else:
            reasons.append(f"the dew point {T(p.dew_point_c)} is above T10 + margin: the air temperature itself governs")
    wind = _num(p.wind_speed_m_s)
    cap = block.application_rate_mm_h
    out = dict(start_air=start_air, stop_air=stop_air, rate=None, reasons=reasons, harm=harm, rate_info={})
    if block.protection == "undertree_sprinkler":
        lo, hi = UNDERTREE_TARGET_MM_H
        out["rate"] = lo
        reasons.append(f"under-tree sprinklers: about {lo:g}-{hi:g} mm/h is the usual target, at least "
                       f"{UNDERTREE_MIN_MM_H:g} mm/h so the lines do not freeze (Connell & Snyder, UCCE); they warm the "
                       f"air by about {d.delta(0.6)}-{d.delta(1.4)} near the ground (Parsons 2015), most under an inversion")
        if cap is not None and cap < UNDERTREE_MIN_MM_H:
            harm.append(f"the system's {cap:g} mm/h is below {UNDERTREE_MIN_MM_H:g} mm/h: the lines may freeze")
        return out
    # over-tree: the heat budget, with the (from memory) table as a cross-check; the larger governs
    td = p.dew_point_c if p.dew_point_c is not None else p.predicted_min_c - 6.0
    pmin = p.predicted_min_c
    if math.isnan(wind):
        r = sprinklers.rate_tonight_mm_h(pmin, td, 0.0)
        out["rate"] = r.required_mm_h
        out["rate_info"] = dict(required_mm_h=None, calm_air_mm_h=round(r.required_mm_h, 2), governed_by=r.governed_by,
                                heat_budget_mm_h=round(r.heat_budget_mm_h, 2), wind_known=False)
        reasons.append(f"wind unknown (no wind reading): even in calm air tonight needs at least {r.required_mm_h:.1f} mm/h "
                       "(more in any wind)")
        if cap is not None and cap < r.required_mm_h:
            harm.append(f"even in calm air tonight needs at least {r.required_mm_h:.1f} mm/h but the system delivers "
                        f"{cap:g} mm/h")
        elif cap is not None:
            reasons.append(f"the system's {cap:g} mm/h is enough only if the air stays calm; check the wind")
        return out
    r = sprinklers.rate_tonight_mm_h(pmin, td, wind)
    out["rate"] = r.required_mm_h
    table = (f"{r.table.rate_mm_h:.1f} mm/h ({r.table.note})" if r.table.rate_mm_h is not None
             else f"no cell ({r.table.note})")
    out["rate_info"] = dict(required_mm_h=round(r.required_mm_h, 2), heat_budget_mm_h=round(r.heat_budget_mm_h, 2),
                            table_mm_h=None if r.table.rate_mm_h is None else round(r.table.rate_mm_h, 2),
                            governed_by=r.governed_by, beyond_table=r.beyond_table,
                            net_loss_w_m2=round(r.net_loss_w_m2, 1), wind_known=True)
    reasons.append(f"tonight needs about {r.required_mm_h:.1f} mm/h at {T(pmin)} and {wind:.1f} m/s ({r.governed_by} "
                   f"governs: heat budget {r.heat_budget_mm_h:.1f} mm/h, a lower bound; table {table})")
    if r.beyond_table:
        harm.append("tonight is colder or windier than any cell of the application-rate table: over-tree sprinkling "
                    "is unlikely to protect")
    if cap is not None and not sprinklers.capacity_adequate(r.required_mm_h, cap):
        harm.append(f"tonight needs about {r.required_mm_h:.1f} mm/h but the system delivers {cap:g} mm/h")
    if wind > sprinklers.MAX_WIND_FOR_SPRINKLING_M_S:
        harm.append(f"wind {wind:.1f} m/s is above about {sprinklers.MAX_WIND_FOR_SPRINKLING_M_S:g} m/s: over-tree "
                    "sprinkling is not advised in that wind")
    return out


def _water(block: Block, rate_mm_h: float | None, hours: float) -> tuple[dict, list[str]]:
    cap, area, supply = block.application_rate_mm_h, block.area_ha, block.water_supply_l_s
    res: dict = {}
    notes: list[str] = []
    if cap is None or area is None:
        notes.append("set application_rate_mm_h and area_ha for the block to see the night's water")
        return res, notes
    peak = sprinklers.peak_flow_l_s(cap, area)
    vol = sprinklers.water_volume_m3(cap, area, hours)
    res.update(water_m3=round(vol, 0), peak_flow_l_s=round(peak, 1))
    notes.append(f"water: about {vol:,.0f} m3 over {hours:.1f} h at {cap:g} mm/h on {area:g} ha, peak flow {peak:.1f} L/s")
    if supply is not None:
        res["water_supply_l_s"] = supply
        if supply < peak:
            part = supply / peak * area
            notes.append(f"the supply ({supply:g} L/s) cannot run the whole block at {cap:g} mm/h (needs {peak:.1f} L/s): "
                         f"sprinkle only the {part:.1f} ha it can feed at the full rate, never the whole block at a lower rate")
            res["supply_short"] = True
    return res, notes


# ---- the advice ------------------------------------------------------------------------------


def _stop_rule(block: Block, stop_air: float | None, d: Display) -> str:
    t10, margin, T = block.kill_10pct_c, block.margin_c, d.temp
    if block.protection in SPRINKLER_METHODS:
        at = f" (at tonight's dew point the air is then above {T(stop_air)})" if stop_air is not None else ""
        return (f"stop the sprinklers only after sunrise, once the wet bulb is above T10 {T(t10)}{at} and rising and the "
                "ice is melting (water running between ice and twig); never while the wet bulb is at or below T10")
    if block.protection in ("wind_machine", "heaters"):
        what = "wind machines" if block.protection == "wind_machine" else "heaters"
        return f"stop the {what} after sunrise once crop-height air is above T10 + margin {T(t10 + margin)} and rising"
    return ""


def _morning(p: Projection, block: Block, d: Display, wet_trend: float | None, air_trend: float | None,
             stop_air: float | None) -> tuple[str, bool | None]:
    t10, margin, T = block.kill_10pct_c, block.margin_c, d.temp

    def trend_text(tr: float | None) -> str:
        return "" if tr is None else f" ({'+' if tr >= 0 else ''}{d.delta(tr)} per hour)"

    if block.protection in SPRINKLER_METHODS:
        wet = p.wet_bulb_c
        if wet is None:
            return ("keep the sprinklers running until the ice is melting and the air is well above T10: the wet bulb is "
                    "unknown (no humidity reading)"), False
        if wet <= t10:
            return (f"keep the sprinklers running: the wet bulb {T(wet)} is not above T10 {T(t10)}; stopping now would "
                    "cool the wet buds towards it"), False
        if wet_trend is None:
            return (f"the wet bulb {T(wet)} is above T10 {T(t10)}: sprinklers may stop once it keeps rising (watch it for "
                    "15-30 min; frostwatch has no recent trend) and the ice is melting"), None
        if wet_trend <= 0:
            return f"keep the sprinklers running: the wet bulb {T(wet)} is above T10 but not rising{trend_text(wet_trend)}", False
        return (f"the wet bulb {T(wet)} is above T10 {T(t10)} and rising{trend_text(wet_trend)}: sprinklers may stop once "
                "the ice is melting (water running between ice and twig)"), True
    if block.protection == "none":
        return f"after sunrise: crop-height air is {T(p.air_temp_c)}; check the buds for damage later today", None
    air = p.air_temp_c
    if air <= t10 + margin:
        return f"keep protection running until crop-height air is above {T(t10 + margin)} and rising (now {T(air)})", False
    if air_trend is None:
        return (f"after sunrise: protection may stop once crop-height air ({T(air)}) keeps rising above {T(t10 + margin)} "
                "(watch it for 15-30 min; frostwatch has no recent trend)"), None
    if air_trend <= 0:
        return f"keep protection running: crop-height air {T(air)} is not rising{trend_text(air_trend)}", False
    return (f"after sunrise: crop-height air {T(air)} is above {T(t10 + margin)} and rising{trend_text(air_trend)}: "
            "protection may stop"), True


_RUNNING_WORDS = {
    "wind_machine": "the wind machines are",
    "overtree_sprinkler": "the over-tree sprinklers are",
    "undertree_sprinkler": "the under-tree sprinklers are",
    "heaters": "the heaters are",
    "none": "protection is",
}


def advise(
    projection: Projection,
    block: Block,
    now_utc: dt.datetime,
    pressure_hpa: float = 1013.25,
    display: Display | None = None,
    *,
    series: Series | None = None,
    protection_running: bool | None = None,
    supercooled_fog: bool | None = None,
) -> Advice:
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
    display : Display, optional
        The site's display unit and time zone; every temperature in the text uses it.
    series : mapping, optional
        Recent readings ``{(station, quantity): (t_s, values)}``; gives the trends the stop rules
        need (without it the stop advice asks the grower to watch the trend).
    supercooled_fog : bool, optional
        True when fog is observed; fans are then never advised.

    Returns
    -------
    Advice
        Risk and reasons, action, latest start time (projected crossing of T10 + margin minus the
        mobilisation time), the method's figures, stop rule, the night's resources and cautions.

    Notes
    -----
    A missing wind speed is never taken as calm: the advice says the wind is unknown.
    """
    p = projection
    d = display or Display()
    T = d.temp
    t10, margin, method = block.kill_10pct_c, block.margin_c, block.protection
    base = dict(time_utc=now_utc, block=block.id, threshold_c=t10, margin_c=margin, cautions=CAUTIONS)
    if p.predicted_min_c is None or p.air_temp_c is None:
        return Advice(
            **base, risk="unknown", action="check the block's sensors: it is not monitored",
            reasons=tuple(p.notes) or ("no healthy crop-height sensor",), start_by_utc=None,
            trigger="air", trigger_temp_c=None, method=method, stop_rule=_stop_rule(block, None, d),
        )
    sprinkler = method in SPRINKLER_METHODS
    # sprinklers are governed by the wet bulb (grower-needs C3), everything else by the air
    trigger = "wet-bulb" if sprinkler and p.wet_bulb_c is not None else "air"
    now_c = p.wet_bulb_c if trigger == "wet-bulb" else p.air_temp_c
    crossing = p.crossings_utc.get("wet_bulb_t10_margin" if trigger == "wet-bulb" else "t10_margin")
    after_sunrise = p.sunrise_utc is not None and now_utc >= p.sunrise_utc
    risk, reasons = _risk(p, block, after_sunrise, d)
    reasons.extend(n for n in p.notes if "assumed" in n or "does not hold" in n or "left out" in n)
    if p.wind_speed_m_s is None:
        reasons.append("wind unknown: no recent wind reading")
    start_by = crossing - dt.timedelta(minutes=block.mobilisation_min) if crossing else None
    details: dict = {"crossing_utc": crossing, "mobilisation_min": block.mobilisation_min}
    start_air = stop_air = rate = gain = None
    alternatives: list[str] = []
    harm: list[str] = []
    active = risk in ("likely", "now", "possible")

    what = _ACTION_WORDS[method]
    conditional = ""
    if method == "wind_machine":
        wm = wind_machine_plan(p, block, d, supercooled_fog)
        gain = wm["gain"]
        details.update(wind_machine_useful=wm["useful"], wind_machine_sufficient=wm["sufficient"],
                       expected_gain_low_c=wm["gain_low"], expected_gain_high_c=wm["gain_high"],
                       inversion_used_c=wm["inversion_c"], fog_possible=wm["fog_possible"])
        if risk != "morning":
            reasons.extend(wm["reasons"] + wm["why_not"])
        alternatives = wm["alternatives"]
        if not wm["useful"]:
            what = "protect the block by other means (wind machines will not help much tonight, see why)"
        elif not wm["wind_known"]:
            conditional = f" if the wind is below {windmachine.MAX_WIND_FOR_FANS_M_S:g} m/s"
        if wm["fog_possible"] and wm["useful"]:
            conditional += " and there is no fog"
    if sprinkler:
        sp = _sprinkler_plan(p, block, d, pressure_hpa)
        start_air, stop_air, rate = sp["start_air"], sp["stop_air"], sp["rate"]
        harm = sp["harm"] if risk != "morning" else []
        if risk != "morning":
            reasons.extend(sp["reasons"])
        details.update(sp["rate_info"])
        if harm:
            details["may_do_harm"] = True
            alternatives.append("running the sprinklers tonight may do more harm than good (too little water for the "
                                "conditions leaves the buds near the wet bulb, colder than dry buds): consult your "
                                "adviser before relying on them")
            reasons.extend(harm)
        if p.wet_bulb_c is not None and p.wet_bulb_c <= t10 and risk not in ("now", "morning"):
            reasons.append(f"the wet bulb {T(p.wet_bulb_c)} is already at or below T10: sprinklers started now cool the "
                           "buds towards it until ice forms; if they are not running yet, weigh this with your adviser")
    if method == "heaters":
        inv = p.inversion_c
        if inv is not None and inv >= windmachine.MIN_USEFUL_INVERSION_C:
            reasons.append(f"inversion {d.delta(inv)}: heaters work best under a low inversion; many small fires hold the "
                           "heat better than a few big ones (FAO-FP p. 147)")
        elif inv is not None:
            reasons.append(f"weak inversion ({d.delta(inv)}): much of the heaters' heat will rise away (FAO-FP p. 147)")
    if method == "none" and active:
        alternatives.append("no protection is configured: covers for small plantings, or irrigating dry ground in the "
                            "afternoon (moist soil stores and gives back more heat, FAO-FP) help a little")

    if active:
        reasons.extend(alternatives)
    stop_rule = _stop_rule(block, stop_air, d)
    # the night's running hours, water, fuel and energy
    resources: dict = {}
    if active and method != "none" and p.sunrise_utc is not None:
        begin = max(now_utc, start_by) if (start_by is not None and risk != "now") else now_utc
        end = p.sunrise_utc + dt.timedelta(hours=STOP_AFTER_SUNRISE_H)
        hours = max(0.0, (end - begin).total_seconds() / 3600.0)
        resources["hours"] = round(hours, 1)
        res_notes = [f"running about {hours:.1f} h (to {STOP_AFTER_SUNRISE_H:g} h after sunrise, an estimate; the stop "
                     "rule decides)"]
        if sprinkler:
            w, notes = _water(block, rate, hours)
            resources.update(w)
            res_notes += notes
            if w.get("supply_short"):
                details["may_do_harm"] = True
        if method in ("wind_machine", "heaters"):
            if block.fuel_l_per_h is not None:
                resources["fuel_l"] = round(block.fuel_l_per_h * hours, 0)
                res_notes.append(f"fuel: about {block.fuel_l_per_h * hours:,.0f} L at {block.fuel_l_per_h:g} L/h")
            elif method == "wind_machine" and block.wind_machines:
                kwh = block.wind_machines * WIND_MACHINE_POWER_KW * hours
                resources["energy_kwh"] = round(kwh, 0)
                res_notes.append(f"energy: about {kwh:,.0f} kWh ({block.wind_machines} machine(s) at about "
                                 f"{WIND_MACHINE_POWER_KW:g} kW each, FAO-FP p. 28; set fuel_l_per_h for a fuel figure)")
            else:
                res_notes.append("set fuel_l_per_h for the block to see the night's fuel")
        resources["notes"] = tuple(res_notes)
        reasons.extend(res_notes)
        if stop_rule:
            reasons.append(stop_rule)

    stop_ok = None
    if risk == "morning":
        now_s = now_utc.timestamp()
        air_trend = trend_c_per_h(series, p.station, "air_temperature", now_s)
        wet_trend = _wet_bulb_trend_c_per_h(series, p.station, p.dew_point_c, now_s, pressure_hpa) if sprinkler else None
        details.update(air_trend_c_per_h=air_trend, wet_bulb_trend_c_per_h=wet_trend)
        action, stop_ok = _morning(p, block, d, wet_trend, air_trend, stop_air)
    elif active and protection_running:
        # the block's running sensor says protection is on: keep it on, and say if it is not holding
        if risk == "now":
            action = (f"{_RUNNING_WORDS[method]} running but the block is at its critical temperature: check that every "
                      "machine or line is really working, and add protection if you can")
            reasons.append("protection is running (running sensor) and crop-height air is still at or below T10")
        else:
            action = f"keep the {_RUNNING_WORDS[method].split(' are')[0].removeprefix('the ')} running: the projection still reaches T10 + margin"
    elif active:
        if risk == "now":
            action = f"{what}{conditional} now: the block is at its critical temperature"
            if sprinkler:
                action = (f"{what} now if they are not running, and keep them running without a break: the block is at "
                          "its critical temperature")
        elif start_by is not None and now_utc >= start_by:
            action = (f"{what}{conditional} now: the {trigger} temperature is projected to reach {T(t10 + margin)} by "
                      f"{d.time(crossing)}")
        elif start_by is not None:
            action = (f"be ready to {what}{conditional} by {d.time(start_by)} ({block.mobilisation_min:.0f} min before the "
                      f"{trigger} temperature is projected to reach {T(t10 + margin)})")
        else:
            action = f"stand by: {what}{conditional} if the projection worsens"
        if sprinkler and start_air is not None:
            action += f"; sprinklers must be running before the air cools to {T(start_air)}"
        if details.get("may_do_harm"):
            action += "; but see why: the system may not be able to protect tonight, consult your adviser"
    else:
        action = "no protection needed tonight on the current projection; frostwatch keeps watching"
    details["stop_ok"] = stop_ok
    return Advice(
        **base,
        risk=risk,
        action=action,
        reasons=tuple(reasons),
        start_by_utc=start_by,
        trigger=trigger,
        trigger_temp_c=now_c,
        start_air_temp_c=start_air,
        stop_air_temp_c=stop_air,
        required_rate_mm_h=rate,
        expected_gain_c=gain,
        details=details,
        method=method,
        stop_rule=stop_rule,
        resources=resources,
        alternatives=tuple(alternatives),
    )
