"""The inversion over a block: tower minus crop height, now and projected to the minimum.

A radiation inversion builds after dusk: at sunset the tower is often hardly warmer than crop
height, hours later several degrees (frost-physics.md 3: 5-10 degC over 20 m on Niagara radiation
nights, Ker et al. 2007). So the inversion at dusk is no projection of the inversion at the
minimum. The projection to the time of the crop minimum comes from, in this order:

- ``tower-curve``: on a radiation night with at least 3 readings since t0, the inversion now plus
  its growth to the time of the minimum, from the tower's and the crop sensor's own square-root
  curves since t0 (Reuter), fitted to the same readings (so the cooling they share cancels);
- ``site-history``: before that, on a radiation night, the median inversion at the minimum of the
  site's own past clear calm nights with no protection running (`Calibration`, walk-forward: only
  nights already over), once `MIN_HISTORY_NIGHTS` are known;
- ``not-yet``: on a radiation night with neither, before the tower curve can exist: unknown, with
  the time frostwatch will know (the first evaluation with 3 tower readings since t0);
- ``held``: otherwise (a windy or cloudy night, where a radiation inversion does not build, or a
  tower curve still missing after that time): the inversion now, held.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from frostwatch.forecast.sensors import Series, as_of, usual_interval_s
from frostwatch.models import StationState
from frostwatch.physics import windmachine
from frostwatch.sorted_times import count_up_to

FIT_MIN_POINTS = 3  # tower readings after t0 before its square-root curve is fitted
FIT_MIN_ELAPSED_H = 0.05  # ... each at least this long after t0
MIN_HISTORY_NIGHTS = 3  # past clear calm nights with a tower before the site's history speaks

TOWER_CURVE, SITE_HISTORY, NOT_YET, HELD = "tower-curve", "site-history", "not-yet", "held"


@dataclass(frozen=True)
class InversionOutlook:
    """The inversion now and at the time of the minimum, and what the projection rests on.

    Attributes
    ----------
    now_c : float or None
        T(tower) - T(crop height) now [degC]; None without a healthy tower.
    projected_c : float or None
        Projected at the time of the crop minimum [degC]; None while not known yet.
    inversion_class : str or None
        The class of the inversion now (`windmachine.classify_inversion`).
    basis : str or None
        ``tower-curve``, ``site-history``, ``not-yet`` or ``held`` (module docstring).
    known_by_s : float or None
        With ``not-yet``: when the tower curve will exist [s since the epoch].
    history_nights : int or None
        With ``site-history``: how many past nights the median rests on.
    """

    now_c: float | None = None
    projected_c: float | None = None
    inversion_class: str | None = None
    basis: str | None = None
    known_by_s: float | None = None
    history_nights: int | None = None


def sqrt_b_fit(elapsed_h: np.ndarray, temps_c: np.ndarray, t0_c: float) -> float | None:
    """Least-squares b of T - T0 = b sqrt(t - t0) through the anchored T0; None if too few points."""
    sel = elapsed_h > FIT_MIN_ELAPSED_H
    if sel.sum() < FIT_MIN_POINTS:
        return None
    x = np.sqrt(elapsed_h[sel])
    return float((x * (temps_c[sel] - t0_c)).sum() / (x * x).sum())  # np.sum's values, without its wrapper


def sqrt_b_fit_sorted(elapsed_h: np.ndarray, temps_c: np.ndarray, t0_c: float) -> float | None:
    """`sqrt_b_fit` of elapsed times in ascending order (a series since t0): the readings it
    selects are a tail, taken as a slice (the same values in the same order, so the same sums)."""
    k = int(elapsed_h.searchsorted(FIT_MIN_ELAPSED_H, side="right"))  # the first elapsed > the minimum
    if len(elapsed_h) - k < FIT_MIN_POINTS:
        return None
    x = np.sqrt(elapsed_h[k:])
    return float((x * (temps_c[k:] - t0_c)).sum() / (x * x).sum())


def _since(tv: tuple[np.ndarray, np.ndarray], t0_s: float, now_s: float) -> tuple[np.ndarray, np.ndarray]:
    """The readings with t0 <= t <= now of a series sorted by time (a view: the same values as a
    mask over the whole series gives)."""
    t, v = tv
    i, j = int(t.searchsorted(t0_s, side="left")), count_up_to(t, now_s)
    return t[i:j], v[i:j]


def _curve_growth(
    series: Series, tower: str, crop: str | None, tower0_c: float, t0_s: float, now_s: float
) -> float | None:
    """How fast the inversion grows on the square-root clock since t0 [degC h^-0.5]: the tower's
    fitted b (at most +0.5: the air aloft hardly warms at night) minus the crop sensor's, both
    fitted to tonight's readings since t0 (Reuter's curve). Fitting both over the same readings
    cancels the cooling they share: a tower that cools with the crop projects no growth. None
    until both curves have `FIT_MIN_POINTS` readings."""
    tt, tv = _since(series[(tower, "air_temperature")], t0_s, now_s)
    b_tower = sqrt_b_fit_sorted((tt - t0_s) / 3600.0, tv, tower0_c)
    if b_tower is None:
        return None
    b_crop = 0.0
    if crop is not None and (crop, "air_temperature") in series:
        crop0_c = as_of(series, crop, "air_temperature", t0_s, 900.0)
        ct, cv = _since(series[(crop, "air_temperature")], t0_s, now_s)
        b = sqrt_b_fit_sorted((ct - t0_s) / 3600.0, cv, crop0_c) if crop0_c is not None else None
        if b is None:
            return None
        b_crop = b
    return min(b_tower, 0.5) - b_crop


def tower_curve_known_by_s(tower_times_s: np.ndarray, t0_s: float, step_s: float) -> float:
    """When the tower's curve since t0 can first be fitted: t0 plus the minimum elapsed time plus
    `FIT_MIN_POINTS` of the tower's usual reporting intervals, rounded up to the next evaluation
    (`step_s` apart on whole multiples, as the daemon runs them)."""
    interval_s = usual_interval_s(tower_times_s[tower_times_s <= t0_s], None)
    at = t0_s + FIT_MIN_ELAPSED_H * 3600.0 + FIT_MIN_POINTS * interval_s
    return math.ceil(at / step_s) * step_s if step_s > 0 else at


def inversion_outlook(
    tower: StationState | None, series: Series, air_c: float, t0_s: float, now_s: float, sunrise_s: float,
    tmin_at_s: float | None, radiation: bool, *, crop_station: str | None = None, history_c: float | None = None,
    history_nights: int = 0, step_s: float = 0.0, dusk_s: float | None = None,
) -> InversionOutlook:
    """The inversion now and projected to the time of the crop minimum (module docstring).

    Parameters
    ----------
    tower : StationState or None
        The block's tower (its own, or the nearest or site-wide one, `frostwatch.towers`).
    series : mapping
        Readings ``{(station, quantity): (t_s, values)}`` up to `now_s`.
    air_c : float
        Crop-height air now [degC].
    t0_s, now_s, sunrise_s : float
        t0 (sunset + 2 h), now and sunrise [s since the epoch].
    tmin_at_s : float or None
        Time of the projected crop minimum [s since the epoch].
    radiation : bool
        True on a clear calm night (the regime of the projection).
    crop_station : str, optional
        The crop-height sensor `air_c` is from (its curve since t0 is paired with the tower's).
    history_c : float, optional
        The median inversion at the minimum of the site's past clear calm nights [degC].
    history_nights : int, optional
        How many nights `history_c` rests on; it speaks from `MIN_HISTORY_NIGHTS`.
    step_s : float, optional
        The evaluation interval [s], to say when the tower curve will be known.
    dusk_s : float, optional
        Tonight's t0 [s since the epoch] when `t0_s` is still `now_s` (before dusk): the tower
        curve starts there.

    Returns
    -------
    InversionOutlook
    """
    if tower is None:
        return InversionOutlook()
    inv_c = tower.latest["air_temperature"] - air_c
    cls = windmachine.classify_inversion(inv_c)
    held = InversionOutlook(inv_c, inv_c, cls, HELD)
    if not radiation or now_s >= sunrise_s:
        return held
    tt, tv = series[(tower.station, "air_temperature")]
    t_tower0 = as_of(series, tower.station, "air_temperature", t0_s, 900.0)  # as known at t0, like the crop sensor
    if t_tower0 is not None and t0_s < now_s:
        grow = _curve_growth(series, tower.station, crop_station, t_tower0, t0_s, now_s)
        if grow is not None:
            e_now = math.sqrt((now_s - t0_s) / 3600.0)
            e_min = math.sqrt(max(0.0, (tmin_at_s - t0_s) / 3600.0)) if tmin_at_s else e_now
            return InversionOutlook(inv_c, inv_c + grow * max(0.0, e_min - e_now), cls, TOWER_CURVE)
    if history_c is not None and history_nights >= MIN_HISTORY_NIGHTS:
        return InversionOutlook(inv_c, history_c, cls, SITE_HISTORY, history_nights=history_nights)
    known_by_s = tower_curve_known_by_s(tt[tt <= now_s], max(t0_s, dusk_s or t0_s), step_s)
    if now_s < known_by_s:
        return InversionOutlook(inv_c, None, cls, NOT_YET, known_by_s=known_by_s)
    return held

