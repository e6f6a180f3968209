"""The morning stop rules (pure): when protection may stop after sunrise.

Sprinklers may stop only after sunrise once the wet bulb is above T10 and rising and the ice is
melting (FAO-FP 2005 p. 168; UF/IFAS Circ. 348); fans and heaters once crop-height air is above
T10 + margin and rising. A rise is judged from the least-squares slope of the last 30 min.
"""

from __future__ import annotations

from collections.abc import Mapping

import numpy as np

from frostwatch.advice.plan import Method, StopCheck, Trigger
from frostwatch.config import Block
from frostwatch.models import Projection
from frostwatch.physics import humidity

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


def wet_bulb_trend_c_per_h(series: Series | None, station: str | None, dew_point_c: float | None,
                           now_s: float, pressure_hpa: float) -> float | None:
    """Slope of the wet bulb over the window [degC h-1], from the air readings and tonight's dew point."""
    if dew_point_c is None:
        return None
    w = _window(series, station, "air_temperature", now_s, TREND_WINDOW_S)
    if w is None:
        return None
    t, v = w
    wb = np.asarray(humidity.wet_bulb_c_from_dew_point(v, np.minimum(dew_point_c, v), pressure_hpa), dtype=float)
    ok = np.isfinite(wb)
    if ok.sum() < 3:
        return None
    return float(np.polyfit((t[ok] - now_s) / 3600.0, wb[ok], 1)[0])


def stop_check(p: Projection, block: Block, now_s: float, series: Series | None, pressure_hpa: float,
               stop_air_temp_c: float | None) -> StopCheck:
    """The stop rule of the block's method, judged now.

    Returns
    -------
    StopCheck
        `stop_ok` True when the trigger temperature is above its limit and rising, False when it
        is not (or unknown for sprinklers), None when it is above the limit but there is no recent
        trend to confirm the rise.

    References
    ----------
    FAO Frost Protection (2005) p. 168 and UF/IFAS Circular 348: sprinklers stop after sunrise
    once the wet bulb is above the critical temperature and the ice is melting.
    """
    method = Method(block.protection)
    if method.is_sprinkler:
        limit = block.kill_10pct_c
        now_c = p.wet_bulb_c
        trend = wet_bulb_trend_c_per_h(series, p.station, p.dew_point_c, now_s, pressure_hpa)
        trigger = Trigger.WET_BULB
    else:
        limit = block.kill_10pct_c + block.margin_c
        now_c = p.air_temp_c
        trend = trend_c_per_h(series, p.station, "air_temperature", now_s)
        trigger = Trigger.AIR
    if now_c is None or now_c <= limit:
        ok: bool | None = False
    elif trend is None:
        ok = None
    else:
        ok = trend > 0
    return StopCheck(trigger=trigger, now_c=now_c, limit_c=limit, trend_c_per_h=trend, stop_ok=ok,
                     stop_air_temp_c=stop_air_temp_c if method.is_sprinkler else None)
