"""What an evaluation may carry to the next while the readings window stays the same (a replay).

A replay hands its evaluations one fixed window until the next reading comes
(`pipeline.WindowMemo`: an hourly log gives 30 evaluations at the 2-minute cadence between two
readings), and only `now` moves. Some of what an evaluation works out reads `now` only through a
comparison with the readings' times: a station's health (its newest reading's age against the
silence limit, the stuck-sensor hour's first reading) and the means of the last hour (the
readings inside (now - window, now]). Each is kept here with the span of `now` over which that
comparison comes out the same, so within the span it is the same value, not a recomputation.

    state = station_state(st, window, now_s, stale_after_intervals, memo)   # memo None: sensors'
    wind = mean_as_of(window, stations, "wind_speed", now_s, window_s, memo)

`memo` is the window's `WindowMemo.values` (emptied when the window changes, so a new reading or a
new night starts afresh; a config change makes a new `Evaluator` and with it a new memo).
tests/test_window_carry.py holds every carried value to the one made afresh.
"""

from __future__ import annotations

import math

from frostwatch.config import Station
from frostwatch.forecast import sensors
from frostwatch.forecast.sensors import STUCK_WINDOW_S, Series, usual_interval_s
from frostwatch.models import StationState


def station_state(st: Station, series: Series, now_s: float, stale_after_intervals: float,
                  memo: dict | None = None) -> StationState:
    """`sensors.station_state`, carried from one evaluation to the next with a replay's `memo`
    while `now` stays inside the state's span (`_state_span`); made again outside it."""
    if memo is None:
        return sensors.station_state(st, series, now_s, stale_after_intervals)
    key = ("state", st.id, stale_after_intervals)
    kept = memo.get(key)
    if kept is not None and kept[0] is st:  # the same station's settings (a config reload makes new ones)
        _, state, newest_s, limit_s, before_s, after_s = kept
        stuck_from_s = now_s - STUCK_WINDOW_S
        if not now_s - newest_s > limit_s and before_s < stuck_from_s <= after_s:
            return state
    state = sensors.station_state(st, series, now_s, stale_after_intervals, memo)
    span = _state_span(st, series, now_s, stale_after_intervals, state)
    if span is not None:
        memo[key] = (st, state, *span)
    return state


def _state_span(st: Station, series: Series, now_s: float, stale_after_intervals: float,
                state: StationState) -> tuple[float, float, float, float] | None:
    """Over a window that ends at `now_s`, what `sensors._station_state` compares `now` with:
    (the newest reading's time, the silence limit, and the reading times either side of
    now - STUCK_WINDOW_S), by the same expressions. None where the state's words depend on `now`
    itself (a silent sensor's age in minutes)."""
    t = series.get((st.id, "air_temperature"), (None,))[0]
    if st.role not in ("crop", "tower") or t is None or "air_temperature" not in state.latest:
        return (math.inf, math.inf, -math.inf, math.inf)  # no health rule here that reads the clock
    t = t[: int(t.searchsorted(now_s, side="right"))]
    limit_s = stale_after_intervals * usual_interval_s(t, st.interval_s)
    if now_s - t[-1] > limit_s:
        return None
    i = int(t.searchsorted(now_s - STUCK_WINDOW_S, side="left"))  # the stuck check's first reading
    return (float(t[-1]), limit_s, float(t[i - 1]) if i > 0 else -math.inf, float(t[i]) if i < len(t) else math.inf)


def mean_as_of(series: Series, stations: list[str], quantity: str, t_s: float, window_s: float,
               memo: dict | None = None) -> float | None:
    """`sensors.mean_as_of` at `t_s`, the end of a replay's window, carried with `memo` while each
    station's first reading in (t_s - window_s, t_s] stays the same one; without `memo`, or when
    a station has no reading in that hour (the older reading's age then reads the clock),
    `sensors.mean_as_of` itself."""
    if memo is None:
        return sensors.mean_as_of(series, stations, quantity, t_s, window_s)
    key = ("mean", tuple(stations), quantity, window_s)
    kept = memo.get(key)
    from_s = t_s - window_s
    if kept is not None and kept[1] <= from_s < kept[2]:
        return kept[0]
    value = sensors.mean_as_of(series, stations, quantity, t_s, window_s)
    span = _mean_span(series, stations, quantity, t_s, from_s)
    if span is not None:
        memo[key] = (value, *span)
    return value


def _mean_span(series: Series, stations: list[str], quantity: str, t_s: float, from_s: float) -> tuple | None:
    """The span of t_s - window_s over which every station's readings in the window start at the
    same one, as `sensors.mean_as_of` cuts them ([lo, hi)); None when a station with readings
    has none in the window (its fallback compares their age with `t_s` itself)."""
    lo, hi = -math.inf, math.inf
    have = sensors.stations_with(series, quantity)
    for sid in stations:
        if sid not in have:
            continue
        t = series[(sid, quantity)][0]
        j = int(t.searchsorted(t_s, side="right"))
        i = int(t.searchsorted(from_s, side="right"))
        if j <= i:
            if j > 0:
                return None
            continue
        if j != len(t):
            return None  # not a window that ends at t_s
        if i > 0:
            lo = max(lo, float(t[i - 1]))
        hi = min(hi, float(t[i]))
    return lo, hi
