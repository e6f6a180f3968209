"""The physical floor under a block's projection on a radiation night (`physics.cooling_floor`):
where it lies tonight, and the projection held at it with a note that says why. Pure functions
of the readings; `projection.project_block` wires them."""

from __future__ import annotations

import math

import numpy as np

from frostwatch.physics import cooling_floor


def radiative_floor_c(t_air: np.ndarray, v_air: np.ndarray, sunset_s: float, now_s: float, sunrise_s: float,
                      air_c: float, td_c: float | None) -> tuple[float, bool]:
    """(the coldest the air can be at sunrise on a clear night, whether the air now is already
    colder than a clear night allows): the larger of two physical floors, at most the air now
    (`physics.cooling_floor`), from the air now over the hours left and from the last reading at
    or before sunset over the hours from it to sunrise, and the air now against the second's fall
    so far. NaN and False when the floor cannot be worked out."""
    floor_c = cooling_floor.radiative_cooling_floor_f(air_c, td_c, (sunrise_s - now_s) / 3600.0)
    below = False
    i = int(t_air.searchsorted(sunset_s, side="right")) - 1
    if sunset_s <= now_s and 0 <= i < len(t_air):
        t_r, v_r = float(t_air[i]), float(v_air[i])
        td_r = None if td_c is None else min(td_c, v_r)
        from_sunset_c = cooling_floor.radiative_cooling_floor_f(v_r, td_r, (sunrise_s - t_r) / 3600.0)
        floor_c = max(floor_c, from_sunset_c) if math.isfinite(floor_c) else from_sunset_c
        below = air_c < cooling_floor.radiative_cooling_floor_f(v_r, td_r, (now_s - t_r) / 3600.0)
    return min(floor_c, air_c), below  # a sensor already below the floor: no minimum above the air now


def held_at_floor(t_air: np.ndarray, v_air: np.ndarray, sunset_s: float, now_s: float, sunrise_s: float,
                  anchor_c: float, td_c: float | None, tp_c: float, band_at_c: float, cold_edge_c: float,
                  ) -> tuple[float, float, float | None, float | None, str | None]:
    """(minimum, the band's centre, the floor where it bounds the band's cold edge, the floor where
    the grower is told, the note): the projection `tp_c`, its band's centre and cold edge held at
    the floor (`radiative_floor_c`), and a note when the air or the projection went past it."""
    floor_c, reading_below = radiative_floor_c(t_air, v_air, sunset_s, now_s, sunrise_s, anchor_c, td_c)
    told_c = note = None
    if reading_below or tp_c < floor_c:
        what = (f"the air fell faster than a clear night can cool it (now {anchor_c:.1f} °C)" if reading_below
                else f"the projected minimum {tp_c:.1f} °C is below the coldest a clear night can reach by sunrise")
        note = f"cooling faster than physics allows: {what}; projection held at {floor_c:.1f} °C or above: check the sensor"
        told_c = round(floor_c, 2)
    if floor_c > min(tp_c, cold_edge_c):  # NaN: never
        return max(tp_c, floor_c), max(band_at_c, floor_c), floor_c, told_c, note
    return tp_c, band_at_c, None, told_c, note
