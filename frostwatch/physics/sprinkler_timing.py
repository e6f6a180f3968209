"""When sprinklers must run: start and stop air temperatures from the dew point and the wet bulb,
and the stop rule judged on unsprinkled air.

Pure: no I/O, no clock. Temperatures in degC. Over-tree and under-tree sprinklers share the start
rule (wetted buds and wetted ground fall towards the wet bulb once water evaporates); the stop rule
reads the wet bulb of air outside the wetted area.

References
----------
.. [1] Snyder, R.L. & de Melo-Abreu, J.P. (2005). Frost Protection: fundamentals, practice and
   economics, Vol. 1. FAO, Rome ("FAO-FP"), ch. 7, p. 168 and Table 7.5.
.. [2] Harrison, D.S., Gerber, J.F. & Choate, R.E. Sprinkler irrigation for cold protection.
   Univ. Florida IFAS Circular 348 (stopping rule, as quoted by UF/IFAS).
"""

from __future__ import annotations

import math
from typing import Final

from frostwatch.constants import STANDARD_PRESSURE_HPA
from frostwatch.physics.wet_bulb import air_temp_c_for_wet_bulb

__all__ = [
    "FALLBACK_STOP_MARGIN_C",
    "MIN_RISE_C_PER_H",
    "fallback_stop_air_temp_c",
    "sprinkler_start_air_temp_c",
    "sprinkler_stop_ok",
]

# A wet bulb (or air) trend counts as rising only at this rate or more over the last 30 min: a
# sensor's 0.1 degC steps make +0.0 or +0.1 degC per hour noise (ENGINEERING CHOICE).
MIN_RISE_C_PER_H: Final = 0.3
# Without an unsprinkled reference station, stop only once the in-block air is this far above the
# air temperature at which the driest air of the night has its wet bulb at T10 (and above 0 degC):
# common practice "air above 0 degC with a margin, and the ice melting" (ENGINEERING CHOICE of 1 K).
FALLBACK_STOP_MARGIN_C: Final = 1.0


def sprinkler_start_air_temp_c(
    dew_point_c: float,
    critical_c: float,
    margin_c: float = 0.0,
    pressure_hpa: float = STANDARD_PRESSURE_HPA,
) -> float:
    """Air temperature at which the wet bulb falls to the critical temperature plus a margin.

    Sprinklers must be running before the air cools to this temperature: once water
    starts evaporating, the wetted buds fall towards the wet bulb.

    Parameters
    ----------
    dew_point_c : float
        Dew point over liquid water, as hygrometers report it [degC].
    critical_c : float
        Critical bud temperature of the stage [degC].
    margin_c : float, optional
        Safety margin added to ``critical_c`` [degC].
    pressure_hpa : float, optional
        Station pressure [hPa].

    Returns
    -------
    float
        Start air temperature [degC]; NaN when the dew point is above the target wet
        bulb. The wet bulb can never fall below the dew point, so the air temperature
        itself then governs: start no later than the air reaching the target.

    Notes
    -----
    Uses `frostwatch.physics.wet_bulb.air_temp_c_for_wet_bulb` (ASHRAE psychrometrics,
    ice bulb below 0 degC). This is the FAO-FP Table 7.5 method; frost-physics.md 10 gives
    rechecked values (e.g. Td -10, Tc -2: 2.0 degC).

    References
    ----------
    .. [1] Snyder & de Melo-Abreu (2005), FAO-FP p. 168, Table 7.5.
    """
    target_wet_bulb_c = critical_c + margin_c
    if math.isnan(dew_point_c) or math.isnan(target_wet_bulb_c):
        return math.nan
    if dew_point_c > target_wet_bulb_c:
        return math.nan
    return float(air_temp_c_for_wet_bulb(target_wet_bulb_c, dew_point_c, pressure_hpa))


def sprinkler_stop_ok(
    after_sunrise: bool,
    wet_bulb_c: float,
    critical_c: float,
    wet_bulb_trend_c_per_h: float,
    margin_c: float = 0.0,
    min_rise_c_per_h: float = MIN_RISE_C_PER_H,
) -> bool:
    """Whether over-plant sprinklers may be stopped, judged on unsprinkled air.

    Parameters
    ----------
    after_sunrise : bool
        True once the sun has risen at the site.
    wet_bulb_c : float
        Wet-bulb temperature of air outside the wetted area (upwind, a reference station)
        [degC]. Air inside the sprinkled block has had its dew point raised by the spray and
        gives too warm a wet bulb.
    critical_c : float
        Critical bud temperature of the stage [degC].
    wet_bulb_trend_c_per_h : float
        Recent rate of change of that wet bulb [degC h-1].
    margin_c : float, optional
        Margin the wet bulb must exceed the critical temperature by [degC].
    min_rise_c_per_h : float, optional
        The least trend that counts as rising [degC h-1]; default `MIN_RISE_C_PER_H`.

    Returns
    -------
    bool
        True only after sunrise, with the wet bulb above ``critical_c + margin_c`` and rising
        at ``min_rise_c_per_h`` or more. Never True while the wet bulb is at or below
        critical, never on a flat trend, and False for any NaN input.

    Notes
    -----
    FAO-FP also asks that the ice be melting (water running between ice and twig); that
    observation is the grower's, not this rule's. UF/IFAS Circ. 348: a wet bulb of 0 degC or
    more is safe for any part of the plant.

    References
    ----------
    .. [1] Snyder & de Melo-Abreu (2005), FAO-FP p. 168 (the wet bulb upwind of the wetted
       area, after sunrise).
    .. [2] Harrison, Gerber & Choate, UF/IFAS Circular 348.
    """
    values = (wet_bulb_c, critical_c, wet_bulb_trend_c_per_h, margin_c, min_rise_c_per_h)
    if not all(math.isfinite(v) for v in values):
        return False
    return (
        bool(after_sunrise)
        and wet_bulb_c > critical_c + margin_c
        and wet_bulb_trend_c_per_h >= max(min_rise_c_per_h, 1e-9)
    )


def fallback_stop_air_temp_c(
    driest_dew_point_c: float,
    critical_c: float,
    pressure_hpa: float = STANDARD_PRESSURE_HPA,
    margin_c: float = FALLBACK_STOP_MARGIN_C,
) -> float:
    """In-block air temperature to wait for when no unsprinkled reference air is measured.

    Parameters
    ----------
    driest_dew_point_c : float
        The lowest dew point measured tonight [degC] (the air before the spray moistened it, or
        the site's); NaN when none was measured.
    critical_c : float
        Critical bud temperature of the stage [degC].
    pressure_hpa : float, optional
        Station pressure [hPa].
    margin_c : float, optional
        The stated margin [K]; default `FALLBACK_STOP_MARGIN_C`.

    Returns
    -------
    float
        ``max(0, T_stop(driest dew point)) + margin`` [degC], where T_stop is the air
        temperature at which that air's wet bulb equals ``critical_c`` (FAO-FP Table 7.5
        method). Without any dew point: the wet bulb of 0 degC rule cannot be placed, so the
        answer is the air temperature at which air with a -15 degC dew point has a 0 degC wet
        bulb, plus the margin (UF/IFAS Circ. 348: a 0 degC wet bulb is safe for any part of the
        plant).

    Notes
    -----
    Common practice without a psychrometer outside the wetted area: stop once the air is well
    above 0 degC and the ice is melting. Using the driest air of the night makes the answer
    err warm (later stop), never cold.
    """
    if math.isnan(critical_c):
        return math.nan
    if math.isnan(driest_dew_point_c):
        base = float(air_temp_c_for_wet_bulb(0.0, -15.0, pressure_hpa))
    else:
        stop = float(air_temp_c_for_wet_bulb(critical_c, min(driest_dew_point_c, critical_c), pressure_hpa))
        base = max(0.0, stop) if math.isfinite(stop) else 0.0
    return base + margin_c
