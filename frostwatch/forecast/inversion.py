"""The inversion over a block: tower minus crop height, now and projected to the minimum."""

from __future__ import annotations

import math

import numpy as np

from frostwatch.forecast.sensors import Series, as_of
from frostwatch.models import StationState
from frostwatch.physics import windmachine


def sqrt_b_fit(elapsed_h: np.ndarray, temps_c: np.ndarray, t0_c: float) -> float | None:
    """Least-squares b of T - T0 = b sqrt(t - t0) through the anchored T0; None if too few points."""
    sel = elapsed_h > 0.05
    if sel.sum() < 3:
        return None
    x = np.sqrt(elapsed_h[sel])
    return float(np.sum(x * (temps_c[sel] - t0_c)) / np.sum(x * x))


def inversion(
    tower: StationState | None, series: Series, air_c: float, t0_s: float, now_s: float, sunrise_s: float,
    tmin_c: float, tmin_at_s: float | None, radiation: bool,
) -> tuple[float | None, float | None, str | None]:
    """(inversion now, projected at the minimum, class) from the block's tower (its own, or the
    nearest or site-wide one chosen by `frostwatch.towers`).

    The tower's own square-root curve since t0 is carried to the time of the crop minimum on a
    radiation night; otherwise the inversion is held.
    """
    if tower is None:
        return None, None, None
    inv_c = tower.latest["air_temperature"] - air_c
    proj_inv_c = inv_c
    tt, tv = series[(tower.station, "air_temperature")]
    sel = (tt >= t0_s) & (tt <= now_s)
    t_tower0 = as_of(series, tower.station, "air_temperature", t0_s, 900.0)  # as known at t0, like the crop sensor
    if radiation and t_tower0 is not None and t0_s < now_s < sunrise_s:
        b_tower = sqrt_b_fit((tt[sel] - t0_s) / 3600.0, tv[sel], t_tower0)
        if b_tower is not None:
            e_now = math.sqrt((now_s - t0_s) / 3600.0)
            e_min = math.sqrt(max(0.0, (tmin_at_s - t0_s) / 3600.0)) if tmin_at_s else e_now
            tower_min = tower.latest["air_temperature"] + min(b_tower, 0.5) * (e_min - e_now)
            proj_inv_c = tower_min - tmin_c
    return inv_c, proj_inv_c, windmachine.classify_inversion(inv_c)
