"""Under-tree (and micro-) sprinklers: published rates, the warming they give, and whether that holds
the block.

Pure: no I/O, no clock. Under-tree sprinklers wet the orchard floor, not the buds: the water
freezing on the ground and the warm wet spots radiate and convect heat into the canopy. They give
a modest warming near the ground, mostly under an inversion, and ask for far less water than
over-tree systems. They do not ice-load the trees, so the over-tree "ice melting between ice and
twig" stop condition does not apply; they stop after sunrise once the wet bulb of air outside the
wetted area is above the critical temperature, or once all the ice on the ground has melted.

References
----------
.. [1] Connell, J.H. & Snyder, R.L., UC Cooperative Extension (almonds), as reported by Western
   Farm Press ("Implementing frost protection in almonds"): target 30-40 gal/min/acre, at least
   15 gal/min/acre so that the lines do not freeze; "sprinklers can be safely turned off when the
   wet bulb temperature upwind of the protected orchard is above the critical damage temperature
   ... or when all the ice melts" (frost-physics.md 4.3 and 10).
.. [2] Parsons, L.R. (2015). Acta Horticulturae 1065: 1437-1442 (Florida citrus): 18.7 m3 ha-1
   h-1 (1.87 mm/h) recommended; warming at 1.2 m of 0.6-1.4 degC, above 2.4 m usually < 0.5 degC.
.. [3] An under-tree sprinkling study in a 28 ha apple orchard (abstract, frost-physics.md 4.3):
   at most about 1.7 degC of air warming, and only during inversions.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Final

__all__ = [
    "CITRUS_RATE_MM_H",
    "LINES_FREEZE_BELOW_MM_H",
    "TARGET_RATE_MM_H",
    "WARMING_UNDER_INVERSION_C",
    "UndertreeJudgement",
    "gpm_per_acre_to_mm_h",
    "judge_undertree",
    "undertree_warming_c",
]

_LITRES_PER_US_GALLON: Final = 3.785411784  # exact, by definition of the US gallon
_M2_PER_ACRE: Final = 4046.8564224  # exact, international acre


def gpm_per_acre_to_mm_h(gal_per_min_per_acre: float) -> float:
    """US gallons per minute per acre to millimetres of water per hour (1 gpm/acre = 0.0561 mm/h).

    1 L spread over 1 m2 is 1 mm; 60 minutes in an hour.
    """
    return gal_per_min_per_acre * _LITRES_PER_US_GALLON * 60.0 / _M2_PER_ACRE


# Connell & Snyder (UCCE almonds): 30-40 gal/min/acre target; at least 15 gal/min/acre.
TARGET_RATE_MM_H: Final = (gpm_per_acre_to_mm_h(30.0), gpm_per_acre_to_mm_h(40.0))  # 1.68-2.24
LINES_FREEZE_BELOW_MM_H: Final = gpm_per_acre_to_mm_h(15.0)  # 0.84
# Parsons (2015), Florida citrus: 18.7 m3/ha/h = 1.87 mm/h.
CITRUS_RATE_MM_H: Final = 1.87
# Parsons (2015): 0.6-1.4 degC of warming at 1.2 m; the apple-orchard study saw warming only
# under an inversion (at most about 1.7 degC).
WARMING_UNDER_INVERSION_C: Final = (0.6, 1.4)


def undertree_warming_c(inversion_c: float | None, min_useful_inversion_c: float = 1.5) -> tuple[float, float]:
    """Warming near crop height that under-tree sprinklers can be expected to give [degC].

    Parameters
    ----------
    inversion_c : float or None
        Tower minus crop-height air temperature [degC]; None or NaN when unknown.
    min_useful_inversion_c : float, optional
        The inversion below which no warming is counted [degC]; default 1.5 (the minimum
        useful inversion of common practice, as for wind machines).

    Returns
    -------
    (float, float)
        (low, high): Parsons' 0.6-1.4 degC under an inversion; (0, 0) without one or when it is
        unknown, since the warming was seen only during inversions.
    """
    if inversion_c is None or math.isnan(inversion_c) or inversion_c < min_useful_inversion_c:
        return (0.0, 0.0)
    return WARMING_UNDER_INVERSION_C


@dataclass(frozen=True)
class UndertreeJudgement:
    """What an under-tree system can do tonight.

    Attributes
    ----------
    lines_may_freeze : bool
        The system's rate is below the published minimum that keeps the lines open.
    below_target : bool
        Below the published target range (UCCE almonds); a note, not a verdict.
    warming_low_c, warming_high_c : float
        Expected warming [degC] (`undertree_warming_c`).
    sufficient : bool
        The projected minimum plus the low warming reaches T10 + margin.
    shortfall_c : float
        How far the projected minimum plus the low warming stays below T10 + margin [degC];
        0 when sufficient, NaN when unknown.
    """

    lines_may_freeze: bool
    below_target: bool
    warming_low_c: float
    warming_high_c: float
    sufficient: bool
    shortfall_c: float


def judge_undertree(
    rate_mm_h: float | None,
    projected_min_c: float,
    critical_c: float,
    margin_c: float,
    inversion_c: float | None,
) -> UndertreeJudgement:
    """Judge an under-tree system against the published rates and tonight's projection.

    Parameters
    ----------
    rate_mm_h : float or None
        The system's application rate [mm h-1]; None when not configured.
    projected_min_c : float
        Projected crop-height minimum without protection [degC].
    critical_c : float
        T10 of the stage [degC].
    margin_c : float
        The block's margin [degC]: sufficiency is judged against T10 + margin.
    inversion_c : float or None
        The inversion the warming depends on [degC].

    Returns
    -------
    UndertreeJudgement
    """
    low, high = undertree_warming_c(inversion_c)
    freeze = rate_mm_h is not None and rate_mm_h < LINES_FREEZE_BELOW_MM_H
    below = rate_mm_h is not None and rate_mm_h < TARGET_RATE_MM_H[0]
    line = critical_c + margin_c
    if math.isnan(projected_min_c) or math.isnan(line):
        return UndertreeJudgement(freeze, below, low, high, False, math.nan)
    shortfall = max(0.0, line - (projected_min_c + low))
    return UndertreeJudgement(freeze, below, low, high, shortfall == 0.0 and not freeze, shortfall)
