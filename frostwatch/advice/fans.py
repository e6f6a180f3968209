"""Wind machines tonight (pure): will fans help, by how much, and if not, the one reason why.

Fans draw warmer air down from an inversion: they need an inversion of about 1.5-2 degC between
crop height and the tower (common practice), wind below 2.5 m/s and no supercooled fog (FAO-FP
2005 p. 160). The expected warming is the physics module's (a fraction of the inversion: an
engineering assumption from memory, `frostwatch.physics.windmachine`).
"""

from __future__ import annotations

import math

from frostwatch.advice.plan import Alternative, Condition, FanFigures, Method, MethodVerdict, WhyNot
from frostwatch.config import Block
from frostwatch.models import Projection
from frostwatch.physics import windmachine

# Fog is possible below freezing when the air is this close to its dew point (engineering choice;
# frostwatch cannot see fog, so it asks the grower to look).
FOG_DEPRESSION_C = 0.5
FOG_AIR_MAX_C = 0.5


def _num(v: float | None) -> float:
    """None -> NaN, so that a missing value can never pass for a real one (never 0)."""
    return math.nan if v is None else float(v)


def fog_possible(air_temp_c: float | None, dew_point_c: float | None) -> bool:
    """Air at or near freezing within FOG_DEPRESSION_C of its dew point: fog may form."""
    if air_temp_c is None or dew_point_c is None:
        return False
    return air_temp_c <= FOG_AIR_MAX_C and air_temp_c - dew_point_c <= FOG_DEPRESSION_C


def fan_verdict(p: Projection, block: Block, supercooled_fog: bool | None = None) -> MethodVerdict:
    """The verdict on wind machines for the night `p` projects.

    Parameters
    ----------
    p : Projection
        The block's projection (inversion, wind, projected minimum).
    block : Block
        T10 and the fan gain fraction.
    supercooled_fog : bool, optional
        True when fog is observed: fans are then never advised.

    Returns
    -------
    MethodVerdict
        Advised or not with one reason (fog, too windy, inversion weak, in that order), the
        conditions the advice depends on, the figures and what else helps. With no working tower
        the fans are advised on the condition that the tower reads warmer (`Condition.WARM_AIR_ALOFT`),
        no warming counted: not known is not "not advised". While
        a radiation inversion is still building and nothing projects it (`Projection.inversion_basis`
        "not-yet"), the fans are advised on the condition that the warm air builds
        (`Condition.WARM_AIR_ALOFT`), with the time frostwatch will know; no warming is counted.

    References
    ----------
    FAO Frost Protection (Snyder & de Melo-Abreu 2005) p. 160: wind machines need an inversion,
    wind below about 2.5 m/s, and must not run in supercooled fog.
    """
    # a radiation inversion still building, with nothing to project it from: not known yet, so the
    # fans stay the block's method on the condition that the warm air builds (never "not advised")
    pending = p.inversion_basis == "not-yet" and p.projected_inversion_c is None and p.inversion_c is not None
    projected = p.projected_inversion_c is not None
    inv = p.projected_inversion_c if projected else p.inversion_c
    inv_c, wind = _num(inv), _num(p.wind_speed_m_s)
    suit = windmachine.wind_machine_suitability(
        inv_c, 0.0 if math.isnan(wind) else wind, _num(p.predicted_min_c), block.kill_10pct_c,
        supercooled_fog=bool(supercooled_fog), gain_fraction=block.wind_machine_gain_frac, margin_c=block.margin_c,
    )
    limit = windmachine.MAX_WIND_FOR_FANS_M_S
    fog = fog_possible(p.air_temp_c, p.dew_point_c)
    why: WhyNot | None = None
    blind = False
    if supercooled_fog:
        why = WhyNot.SUPERCOOLED_FOG
    elif not math.isnan(wind) and wind > limit:
        why = WhyNot.TOO_WINDY_FOR_FANS
    elif pending:
        pass
    elif math.isnan(inv_c):
        # no working tower (a broken sensor, or none): whether fans help is not known, which is
        # not "not advised". Fans running since the protect alert must not be stopped by a dead
        # tower sensor: they stay the block's method on the condition a thermometer aloft shows
        # (`Condition.WARM_AIR_ALOFT`), and no warming is counted
        blind = True
    elif inv_c < windmachine.MIN_USEFUL_INVERSION_C or not suit.useful:
        why = WhyNot.INVERSION_WEAK
    advised = why is None
    pending = pending and advised
    blind = blind and advised
    if pending or blind:  # no warming is promised before the warm air is there
        suit = windmachine.wind_machine_suitability(math.nan, 0.0, math.nan, block.kill_10pct_c)
    # judged against T10 + margin: buds run 1-2 degC below screen air on clear nights
    shortfall = block.kill_10pct_c + block.margin_c - (_num(p.predicted_min_c) + suit.expected_gain_low_c)
    sufficient = advised and suit.sufficient
    figures = FanFigures(
        inversion_c=None if math.isnan(inv_c) else inv_c, inversion_projected=projected,
        inversion_class=None if math.isnan(inv_c) else windmachine.classify_inversion(inv_c),
        wind_speed_m_s=None if math.isnan(wind) else wind, wind_limit_m_s=limit,
        min_useful_inversion_c=windmachine.MIN_USEFUL_INVERSION_C,
        gain_c=suit.expected_gain_c if advised else 0.0,
        gain_low_c=suit.expected_gain_low_c if advised else 0.0,
        gain_high_c=suit.expected_gain_high_c if advised else 0.0,
        sufficient=sufficient,
        shortfall_c=shortfall if advised and not (pending or blind) and shortfall > 0 and not sufficient else None,
        tower_station=p.tower_station, tower_own=p.tower_own, tower_site_wide=p.tower_site_wide,
        tower_distance_m=p.tower_distance_m,
        inversion_pending=pending, known_by_utc=p.inversion_known_by_utc if pending else None,
        history_nights=p.inversion_history_nights if p.inversion_basis == "site-history" else None,
    )
    conditions: list[Condition] = []
    if advised and (pending or blind):
        conditions.append(Condition.WARM_AIR_ALOFT)
    if advised and math.isnan(wind):
        conditions.append(Condition.WIND_BELOW_FAN_LIMIT)
    if advised and fog:
        conditions.append(Condition.NO_FOG)
    alts = fan_alternatives(WhyNot.INVERSION_WEAK if pending or blind else why,
                            advised and not sufficient and not (pending or blind))
    return MethodVerdict(
        method=Method.WIND_MACHINE, advised=advised, why_not=why, conditions=tuple(conditions),
        alternatives=alts, fans=figures,
    )


def fan_alternatives(why: WhyNot | None, not_enough: bool) -> tuple[Alternative, ...]:
    """What else helps where fans will not do (or not alone)."""
    if why is WhyNot.TOO_WINDY_FOR_FANS:
        return (Alternative.ADVECTIVE,)
    if why is WhyNot.SUPERCOOLED_FOG:
        return (Alternative.FOG_HEATERS_OR_SPRINKLERS,)
    if why in (WhyNot.INVERSION_WEAK, WhyNot.INVERSION_UNKNOWN):
        return (Alternative.HEATERS_WITH_FANS,)
    if not_enough:
        return (Alternative.ADD_HEATERS,)
    return ()
