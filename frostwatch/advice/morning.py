"""The morning stop rules (pure): when protection may stop after sunrise.

Sprinklers may stop only after sunrise once the wet bulb of air outside the wetted area is above
T10 and rising and the ice is melting (FAO-FP 2005 p. 168; UF/IFAS Circ. 348): the block's own
hygrometer reads air the spray has moistened, so the wet bulb is read on the reference station
(`frostwatch.reference`). Without reference air the block's own air must rise well above the
ice-bulb rule (`physics.sprinkler_timing.fallback_stop_air_temp_c`). Fans and heaters stop once
crop-height air is above T10 + margin and rising. A rise is the least-squares slope of the last
30 min, and counts only at `MIN_RISE_C_PER_H` or more (a real rise, not sensor steps).
"""

from __future__ import annotations

from collections.abc import Mapping

import numpy as np

from frostwatch.advice.plan import Method, StopBasis, StopCheck, Trigger
from frostwatch.config import Block
from frostwatch.models import Projection
from frostwatch.physics.sprinkler_timing import MIN_RISE_C_PER_H, fallback_stop_air_temp_c
from frostwatch.reference import ReferenceAir

Series = Mapping[tuple[str, str], tuple[np.ndarray, np.ndarray]]
TREND_WINDOW_S = 1800.0  # the last 30 min of readings give the trend for the stop rules


def _window(series: Series | None, station: str | None, quantity: str, now_s: float,
            window_s: float) -> tuple[np.ndarray, np.ndarray] | None:
    if series is None or station is None or (station, quantity) not in series:
        return None
    t, v = series[(station, quantity)]
    sel = (t > now_s - window_s) & (t <= now_s) & np.isfinite(v)
    if sel.sum() < 3 or float(t[sel][-1] - t[sel][0]) < window_s / 3:
        return None
    return t[sel], v[sel]


def trend_c_per_h(series: Series | None, station: str | None, quantity: str, now_s: float,
                  window_s: float = TREND_WINDOW_S) -> float | None:
    """Least-squares slope of a station's readings over the window before `now_s` [degC h-1].

    None without at least three readings spanning a third of the window.
    """
    w = _window(series, station, quantity, now_s, window_s)
    if w is None:
        return None
    t, v = w
    return float(np.polyfit((t - now_s) / 3600.0, v, 1)[0])


def _judge(now_c: float | None, limit_c: float, trend: float | None) -> bool | None:
    """False at or below the limit; None above it without a trend; else whether it is really rising."""
    if now_c is None or now_c <= limit_c:
        return False
    if trend is None:
        return None
    return trend >= MIN_RISE_C_PER_H


def stop_check(p: Projection, block: Block, now_s: float, series: Series | None, pressure_hpa: float,
               stop_air_temp_c: float | None, reference: ReferenceAir | None = None,
               reference_station: str | None = None, driest_dew_point_c: float | None = None) -> StopCheck:
    """The stop rule of the block's method, judged now.

    Parameters
    ----------
    reference : ReferenceAir, optional
        Fresh reference air outside the wetted area (sprinkler blocks).
    reference_station : str, optional
        The reference station configured for the block (named even when it has no fresh reading).
    driest_dew_point_c : float, optional
        The night's lowest dew point measured (the fallback's dry air).

    Returns
    -------
    StopCheck
        `stop_ok` True when the trigger temperature is above its limit and rising by at least
        `MIN_RISE_C_PER_H`, False when it is not, None when it is above the limit but there is no
        recent trend to confirm the rise.

    References
    ----------
    FAO Frost Protection (2005) p. 168 and UF/IFAS Circular 348: sprinklers stop after sunrise
    once the wet bulb upwind of the wetted area is above the critical temperature and the ice is
    melting.
    """
    method = Method(block.protection)
    common = dict(min_rise_c_per_h=MIN_RISE_C_PER_H)
    if method.is_sprinkler and reference is not None:
        limit = block.kill_10pct_c
        return StopCheck(trigger=Trigger.WET_BULB, now_c=reference.wet_bulb_c, limit_c=limit,
                         trend_c_per_h=reference.wet_bulb_trend_c_per_h,
                         stop_ok=_judge(reference.wet_bulb_c, limit, reference.wet_bulb_trend_c_per_h),
                         stop_air_temp_c=stop_air_temp_c, basis=StopBasis.REFERENCE_WET_BULB,
                         reference_station=reference.station, **common)
    if method.is_sprinkler:
        # no unsprinkled air measured: the block's own air, well above the ice-bulb rule
        limit = fallback_stop_air_temp_c(float("nan") if driest_dew_point_c is None else driest_dew_point_c,
                                         block.kill_10pct_c, pressure_hpa)
        trend = trend_c_per_h(series, p.station, "air_temperature", now_s)
        return StopCheck(trigger=Trigger.AIR, now_c=p.air_temp_c, limit_c=limit, trend_c_per_h=trend,
                         stop_ok=_judge(p.air_temp_c, limit, trend), stop_air_temp_c=stop_air_temp_c,
                         basis=StopBasis.FALLBACK_AIR, reference_station=reference_station,
                         reference_silent=reference_station is not None, driest_dew_point_c=driest_dew_point_c,
                         **common)
    limit = block.kill_10pct_c + block.margin_c
    trend = trend_c_per_h(series, p.station, "air_temperature", now_s)
    return StopCheck(trigger=Trigger.AIR, now_c=p.air_temp_c, limit_c=limit, trend_c_per_h=trend,
                     stop_ok=_judge(p.air_temp_c, limit, trend), basis=StopBasis.BLOCK_AIR, **common)
