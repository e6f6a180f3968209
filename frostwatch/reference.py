"""Reference air for the sprinkler stop rule: the wet bulb of air outside the wetted area.

Pure: config, readings and an injected `now` in. Sprinklers raise the dew point of the air they
wet, so the block's own hygrometer gives too warm a wet bulb in the morning: the published stop
rule reads the wet bulb of air upwind of the wetted area, after sunrise, rising (FAO-FP 2005 ch. 7
p. 168; UF/IFAS Circ. 348). That air is measured by the site's reference station (no `block`,
`role = "weather"`) or by a station a block names as its `reference_station` (DESIGN.md 1.4,
second round). Without one, the stop advice falls back to the block's own air temperature well
above the ice-bulb rule (`frostwatch.physics.sprinkler_timing.fallback_stop_air_temp_c`).
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass

import numpy as np

from frostwatch.config import Block, Config, Station
from frostwatch.physics import humidity

Series = Mapping[tuple[str, str], tuple[np.ndarray, np.ndarray]]
TREND_WINDOW_S = 1800.0  # the last 30 min give the wet bulb's trend, as for the other stop rules
FRESH_S = 1800.0  # a reference reading older than this says nothing about now


@dataclass(frozen=True)
class ReferenceAir:
    """The reference station's air now.

    Attributes
    ----------
    station : str
        The station's id.
    air_temp_c, dew_point_c, wet_bulb_c : float
        Its latest air temperature, dew point (over water) and wet (ice) bulb [degC].
    wet_bulb_trend_c_per_h : float or None
        Least-squares slope of its wet bulb over the last 30 min [degC h-1]; None without three
        readings spanning ten minutes.
    """

    station: str
    air_temp_c: float
    dew_point_c: float
    wet_bulb_c: float
    wet_bulb_trend_c_per_h: float | None


def reference_station_for(cfg: Config, block: Block) -> Station | None:
    """The block's declared `reference_station`, else the site's first `role = "weather"` station
    with no block, else None."""
    if block.reference_station is not None:
        return cfg.station(block.reference_station)
    return next((s for s in cfg.stations if s.role == "weather" and s.block is None), None)


def _window(series: Series, station: str, quantity: str, now_s: float, window_s: float):
    if (station, quantity) not in series:
        return None
    t, v = series[(station, quantity)]
    sel = (t > now_s - window_s) & (t <= now_s) & np.isfinite(v)
    if not sel.any():
        return None
    return np.asarray(t[sel], dtype=float), np.asarray(v[sel], dtype=float)


def _dew_points_at(series: Series, station: str, times_s: np.ndarray, air_c: np.ndarray, now_s: float):
    """The station's dew point at `times_s` (interpolated), from dew-point or humidity readings."""
    td = _window(series, station, "dew_point_temperature", now_s, TREND_WINDOW_S + FRESH_S)
    if td is not None:
        return np.interp(times_s, td[0], td[1])
    rh = _window(series, station, "relative_humidity", now_s, TREND_WINDOW_S + FRESH_S)
    if rh is not None:
        rh_at = np.clip(np.interp(times_s, rh[0], rh[1]), 1.0, 100.0)
        return np.asarray(humidity.dew_point_c_from_rel_humidity(air_c, rh_at), dtype=float)
    return None


def reference_air(series: Series, station: str, now_s: float, pressure_hpa: float) -> ReferenceAir | None:
    """The reference station's wet bulb now and its 30-min trend, or None when it has no fresh air
    temperature and humidity.

    The wet bulb is ASHRAE's (ice bulb below 0 degC, `humidity.wet_bulb_c_from_dew_point`),
    computed at each air reading with the dew point interpolated to it.
    """
    air = _window(series, station, "air_temperature", now_s, TREND_WINDOW_S + FRESH_S)
    if air is None or now_s - air[0][-1] > FRESH_S:
        return None
    t, ta = air
    td = _dew_points_at(series, station, t, ta, now_s)
    if td is None:
        return None
    td = np.minimum(td, ta)
    wb = np.asarray(humidity.wet_bulb_c_from_dew_point(ta, td, pressure_hpa), dtype=float)
    if not math.isfinite(wb[-1]):
        return None
    recent = (t > now_s - TREND_WINDOW_S) & np.isfinite(wb)
    trend = None
    if recent.sum() >= 3 and float(t[recent][-1] - t[recent][0]) >= TREND_WINDOW_S / 3:
        trend = float(np.polyfit((t[recent] - now_s) / 3600.0, wb[recent], 1)[0])
    return ReferenceAir(station, float(ta[-1]), float(td[-1]), float(wb[-1]), trend)


def driest_dew_point_c(series: Series, stations: list[str], since_s: float, now_s: float) -> float | None:
    """The lowest dew point any of `stations` measured between `since_s` and `now_s` [degC]
    (`dew_point_temperature`, or `relative_humidity` with the station's air temperature)."""
    low = math.inf
    for sid in stations:
        td = _window(series, sid, "dew_point_temperature", now_s, now_s - since_s)
        if td is not None:
            low = min(low, float(np.min(td[1])))
            continue
        rh = _window(series, sid, "relative_humidity", now_s, now_s - since_s)
        air = _window(series, sid, "air_temperature", now_s, now_s - since_s)
        if rh is not None and air is not None:
            ta = np.interp(rh[0], air[0], air[1])
            d = np.asarray(humidity.dew_point_c_from_rel_humidity(ta, np.clip(rh[1], 1.0, 100.0)), dtype=float)
            if np.isfinite(d).any():
                low = min(low, float(np.nanmin(d)))
    return None if low == math.inf else low
