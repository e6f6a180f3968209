"""Sprinklers tonight (pure): start and stop air temperatures, the rate tonight needs, and whether
the block's system can deliver it.

Sprinklers must be running before the wet bulb reaches T10 + margin (FAO-FP 2005 Table 7.5 method
with ASHRAE psychrometrics); over-tree sprinkling needs at least the rate the heat budget of the
iced plant asks for (`physics.sprinklers.rate_tonight_mm_h`, a lower bound) and is not advised
above about 4.5 m/s of wind; too little water can leave the buds colder than dry buds, so a system
short of the heat budget's rate is not advised (consult an adviser). The start follows tonight's
dew point as it falls: the projection's dew point at the crossing sets it (`frostwatch.drying`).
Under-tree systems are judged by `physics.undertree`: the published rates (UCCE almonds 1.7-2.2
mm/h, at least 0.84 mm/h so the lines do not freeze; Parsons 2015, citrus 1.87 mm/h) and a warming
of 0.6-1.4 degC only under an inversion, against T10 + margin.
"""

from __future__ import annotations

import math

from frostwatch.advice.plan import Alternative, Condition, Method, MethodVerdict, SprinklerFigures, WhyNot
from frostwatch.config import Block
from frostwatch.models import Projection
from frostwatch.physics import sprinklers, undertree

# Without a humidity reading the rate estimate assumes this dew-point depression below the minimum.
ASSUMED_DEPRESSION_C = 6.0


def _finite(v: float | None) -> float | None:
    return None if v is None or not math.isfinite(v) else float(v)


def start_stop_air_temps_c(dew_point_c: float | None, block: Block, pressure_hpa: float) -> tuple[float | None, float | None]:
    """(start, stop) air temperatures [degC]: the wet bulb is at T10 + margin, and at T10.

    References
    ----------
    FAO Frost Protection (2005) Table 7.5 method; ASHRAE Handbook Fundamentals psychrometrics
    (`frostwatch.physics.sprinklers.sprinkler_start_air_temp_c`).
    """
    if dew_point_c is None:
        return None, None
    t10 = block.kill_10pct_c
    s = float(sprinklers.sprinkler_start_air_temp_c(dew_point_c, t10, margin_c=block.margin_c, pressure_hpa=pressure_hpa))
    e = float(sprinklers.sprinkler_start_air_temp_c(dew_point_c, t10, margin_c=0.0, pressure_hpa=pressure_hpa))
    return _finite(s), _finite(e)


def sprinkler_verdict(p: Projection, block: Block, pressure_hpa: float) -> MethodVerdict:
    """The verdict on the block's sprinklers for the night `p` projects.

    Returns
    -------
    MethodVerdict
        Not advised (with one reason: too windy, beyond the table, rate short, lines may freeze)
        or advised, with the start/stop temperatures and the rate figures.
    """
    method = Method(block.protection)
    # the start: the dew point projected at the crossing (a falling dew point starts warmer)
    start_td = p.dew_point_at_start_c if p.dew_point_at_start_c is not None else p.dew_point_c
    if start_td is not None and p.dew_point_c is not None:
        start_td = min(start_td, p.dew_point_c)
    start_air, _ = start_stop_air_temps_c(start_td, block, pressure_hpa)
    _, stop_air = start_stop_air_temps_c(p.dew_point_c, block, pressure_hpa)
    wind = p.wind_speed_m_s
    cap = block.application_rate_mm_h
    common = dict(dew_point_c=p.dew_point_c, start_air_temp_c=start_air, stop_air_temp_c=stop_air,
                  wind_speed_m_s=wind, wind_limit_m_s=sprinklers.MAX_WIND_FOR_SPRINKLING_M_S, capacity_mm_h=cap,
                  dew_point_trend_c_per_h=p.dew_point_trend_c_per_h, start_dew_point_c=start_td)
    if method is Method.UNDERTREE_SPRINKLER:
        return _undertree_verdict(p, block, common)
    pmin = p.predicted_min_c
    # the heat budget at the driest air expected before the crossing (more sublimation, more water)
    td = start_td if start_td is not None else pmin - ASSUMED_DEPRESSION_C
    if wind is None:
        # the wind is never taken as calm: the calm-air figure is a floor, and the advice is conditional
        r = sprinklers.rate_tonight_mm_h(pmin, td, 0.0)
        fig = SprinklerFigures(undertree=False, required_mm_h=None, calm_air_mm_h=_finite(r.required_mm_h),
                               heat_budget_mm_h=_finite(r.heat_budget_mm_h), net_loss_w_m2=_finite(r.net_loss_w_m2),
                               **common)
        # not advised when short of the heat budget in calm air (a lower bound in any wind)
        short = cap is not None and cap < r.heat_budget_mm_h
        return MethodVerdict(
            method=method, advised=not short, why_not=WhyNot.RATE_SHORT if short else None,
            conditions=() if short or cap is None else (Condition.CALM_AIR,),
            alternatives=(Alternative.SPRINKLERS_ASK_ADVISER,) if short else (), sprinklers=fig,
        )
    r = sprinklers.rate_tonight_mm_h(pmin, td, wind)
    fig = SprinklerFigures(
        undertree=False, required_mm_h=_finite(r.required_mm_h), calm_air_mm_h=None,
        heat_budget_mm_h=_finite(r.heat_budget_mm_h), net_loss_w_m2=_finite(r.net_loss_w_m2), **common,
    )
    why: WhyNot | None = None
    if wind > sprinklers.MAX_WIND_FOR_SPRINKLING_M_S:
        why = WhyNot.TOO_WINDY_FOR_SPRINKLERS
    elif cap is not None and math.isfinite(r.heat_budget_mm_h) and not sprinklers.capacity_adequate(r.heat_budget_mm_h, cap):
        why = WhyNot.RATE_SHORT  # short of the heat budget, a lower bound
    alternatives: tuple[Alternative, ...] = ()
    if why is WhyNot.TOO_WINDY_FOR_SPRINKLERS:
        alternatives = (Alternative.ADVECTIVE,)
    elif why is not None:
        alternatives = (Alternative.SPRINKLERS_ASK_ADVISER,)
    return MethodVerdict(method=method, advised=why is None, why_not=why, alternatives=alternatives, sprinklers=fig)


def _undertree_verdict(p: Projection, block: Block, common: dict) -> MethodVerdict:
    """Under-tree sprinklers: the published rates and a warming counted only under an inversion,
    judged against T10 + margin (`physics.undertree.judge_undertree`)."""
    lo, hi = undertree.TARGET_RATE_MM_H
    inv = p.projected_inversion_c if p.projected_inversion_c is not None else p.inversion_c
    pmin = math.nan if p.predicted_min_c is None else p.predicted_min_c
    j = undertree.judge_undertree(block.application_rate_mm_h, pmin, block.kill_10pct_c, block.margin_c, inv)
    fig = SprinklerFigures(undertree=True, required_mm_h=round(lo, 2), calm_air_mm_h=None, heat_budget_mm_h=None,
                           net_loss_w_m2=None, target_low_mm_h=round(lo, 2), target_high_mm_h=round(hi, 2),
                           min_mm_h=round(undertree.LINES_FREEZE_BELOW_MM_H, 2), warming_low_c=j.warming_low_c,
                           warming_high_c=j.warming_high_c, inversion_c=inv, sufficient=j.sufficient,
                           shortfall_c=None if math.isnan(j.shortfall_c) or j.shortfall_c == 0 else round(j.shortfall_c, 2),
                           **common)
    if j.lines_may_freeze:
        return MethodVerdict(method=Method.UNDERTREE_SPRINKLER, advised=False, why_not=WhyNot.LINES_MAY_FREEZE,
                             alternatives=(Alternative.SPRINKLERS_ASK_ADVISER,), sprinklers=fig)
    alternatives = (Alternative.UNDERTREE_NOT_ENOUGH,) if not j.sufficient else ()
    return MethodVerdict(method=Method.UNDERTREE_SPRINKLER, advised=True, alternatives=alternatives, sprinklers=fig)
