"""Heaters tonight (pure): the heat the block needs at T10 + margin, how much of the heaters' output
the inversion holds, and how many heaters per hectare that asks for.

Heaters replace what the block loses by net radiation; only 10-15 % of their heat stays in the
orchard (Evans), more under a strong, low inversion; with a weak one most of it rises away
(FAO-FP 2005 p. 147). They are lit in time for all of them to burn before the air reaches
T10 + margin (the block's `mobilisation_min` is the lighting crew's time), the upwind border and
the low spots first, with more heaters on the borders (FAO-FP p. 147, after Kepner 1951). See
`frostwatch.physics.heaters`.
"""

from __future__ import annotations

from frostwatch.advice.plan import Alternative, HeaterFigures, Method, MethodVerdict
from frostwatch.config import Block
from frostwatch.models import Projection
from frostwatch.physics import heaters, humidity, windmachine

# Without a humidity reading the requirement assumes air this much drier than the target (a drier
# sky radiates less back: the need errs high).
ASSUMED_DEPRESSION_C = 6.0


def heater_verdict(p: Projection, block: Block) -> MethodVerdict:
    """The heater plan for the night `p` projects.

    Returns
    -------
    MethodVerdict
        Always advised (heaters add heat in any weather, though little stays without an
        inversion), with the heat requirement at T10 + margin and, when the block gives
        `heater_kw`, the heaters per hectare; alternatives when the inversion is weak or the
        installed heaters fall short.
    """
    inv = p.projected_inversion_c if p.projected_inversion_c is not None else p.inversion_c
    target = block.kill_10pct_c + block.margin_c
    td = p.dew_point_c if p.dew_point_c is not None else target - ASSUMED_DEPRESSION_C
    e_hpa = float(humidity.vapour_pressure_hpa_from_dew_point(min(td, target)))
    need = heaters.heater_need(target, e_hpa, inv, block.heater_kw, block.heaters_per_ha)
    fig = HeaterFigures(
        inversion_c=inv, min_useful_inversion_c=windmachine.MIN_USEFUL_INVERSION_C, target_c=target,
        requirement_w_m2=None if need.requirement_w_m2 != need.requirement_w_m2 else round(need.requirement_w_m2, 1),
        retained_frac=need.retained_frac,
        output_kw_per_ha=None if need.output_kw_per_ha is None else round(need.output_kw_per_ha, 0),
        heater_kw=block.heater_kw, heaters_per_ha=need.heaters_per_ha, installed_per_ha=block.heaters_per_ha,
        installed_kw_per_ha=need.installed_kw_per_ha, enough=need.enough,
    )
    alternatives: list[Alternative] = []
    if need.retained_frac is None:
        alternatives.append(Alternative.HEATERS_WEAK_INVERSION)
    if need.enough is False:
        alternatives.append(Alternative.MORE_HEATERS)
    return MethodVerdict(method=Method.HEATERS, advised=True, alternatives=tuple(alternatives), heaters=fig)
