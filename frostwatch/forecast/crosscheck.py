"""Does a thermometer agree with the rest of the farm? (pure): the cross-check that keeps a sensor
reading in the wrong unit from speaking for a block.

A bare MQTT number is taken in the canonical unit (DESIGN.md 1.2: degC). A sensor set to send °F
then stores 38.5 for what is 3.6 °C: inside the plausible range (-60..60 °C), so ingest cannot
refuse it, and a block whose crop-height sensor it is reads warm on a freezing night. °F read as
°C is off by 0.8 T + 32 K (T the true °C): 24 K at -10 °C, 32 K at 0 °C, 40 K at +10 °C.

    doubts = sensor_doubts(cfg, series, now_s, memo)   # {station: SensorDoubt}, made once an instant
    state = trusted(state, doubts)                      # a left-out sensor's state: not healthy

The rules (judgement from the physics of night air and the common practice of station-network
quality control, which compares each station with its neighbours at the same time, "spatial
consistency", and with its own last value, a "step" test; the figures are from memory):

- Peers: the farm's other air thermometers (crop-height, tower and weather stations) that are
  fresh and not stuck at this instant (`forecast.station_state`'s own rules), compared through
  their latest readings.
- NOT_WEATHER_K = 15 K from the median of the others is not weather. On one farm at one instant
  the night inversion puts a 10 m tower 1-5 K above crop height (strong nights 5-8 K, rarely
  ~10 K), a cold-air pocket lies several K (5-8) below the slopes, a sunlit sensor reads a few K
  high. 15 K is beyond those together, and below the smallest °F error over the frost band
  (0.8 T + 32 >= 15 K for every T above -21 °C). The median of the others stands when one other
  sensor is wrong too.
- Warm and cold are treated differently on purpose. A warm outlier is left out: it could hide
  frost (a block with no other crop-height sensor is then not monitored, loud, never green). A
  cold outlier is reported and still used: it can only make a block louder, and a real frost
  pocket must never be silenced. A cold outlier is judged only against two or more trusted
  others (against one, either could be the wrong one; the warmer of two is the one left out).
- Alone (no fresh peer at all): nothing to compare with, so only the sensor's own readings. A rise
  of NOT_WEATHER_K or more between two readings at most JUMP_MAX_GAP_S apart is not weather
  (mixing by a wind machine or a gust brings down at most the inversion, a few K; a sensor
  switched to °F jumps by 24-40 K); the sensor is left out while it stays more than half of that
  above its level before the jump, within the readings window (tonight's, at most
  JUMP_LOOKBACK_S back). Limits, said plainly in the README: a lone sensor that sent °F from its
  first reading, or since an earlier night, shows no jump and cannot be told from the weather;
  when most of a farm's thermometers send °F, the one right sensor is the one reported (cold).

The same function serves the daemon, `replay` and `backtest` (through the projection, the
monitoring state and the night records), so every screen shows one decision.
"""

from __future__ import annotations

import dataclasses
import datetime as dt

import numpy as np

from frostwatch.config import Config, Station
from frostwatch.forecast import carry
from frostwatch.forecast.sensors import Series, usual_interval_s
from frostwatch.models import SensorDoubt, StationState
from frostwatch.sorted_times import count_up_to

NOT_WEATHER_K = 15.0  # from the median of the farm's other thermometers, or one step of a lone one
JUMP_MAX_GAP_S = 1800.0  # a step test between readings at most this far apart (a 5-min sensor: 6 intervals)
JUMP_LOOKBACK_S = 24 * 3600.0  # a lone sensor's jump counts this long at most, and only inside the readings window
FAHRENHEIT_FITS_K = 5.0  # a warm outlier read as °F within this of the others' median: "is it sending °F?"
AIR_ROLES = ("crop", "tower", "weather")
WARM, COLD, JUMP = "warm", "cold", "jump"


def _median_without(values: list[float], i: int) -> float:
    """The median of sorted `values` with the one at index `i` left out (len(values) >= 2)."""
    n = len(values) - 1
    at = lambda j: values[j] if j < i else values[j + 1]  # noqa: E731 - the list without index i
    return at(n // 2) if n % 2 else (at(n // 2 - 1) + at(n // 2)) / 2.0


def peer_doubts(air_c: dict[str, float]) -> dict[str, SensorDoubt]:
    """The thermometers that disagree with the rest of the farm at one instant.

    Parameters
    ----------
    air_c : dict
        Station id -> its latest air temperature [degC], fresh sensors only.

    Returns
    -------
    dict
        Station id -> `SensorDoubt`: "warm" (left out) for each reading NOT_WEATHER_K or more
        above the median of the others (one other is enough); "cold" (kept) for each trusted
        reading NOT_WEATHER_K or more below the median of two or more trusted others.
    """
    if len(air_c) < 2:
        return {}
    pairs = sorted(((sid, round(v, 2)) for sid, v in air_c.items()), key=lambda kv: kv[1])  # as decisions store them
    vals = [v for _, v in pairs]
    warm = {sid for i, (sid, v) in enumerate(pairs) if v - _median_without(vals, i) >= NOT_WEATHER_K}
    kept = [(sid, v) for sid, v in pairs if sid not in warm]  # the coldest is never warm: never empty
    out: dict[str, SensorDoubt] = {}
    for sid, v in pairs:
        if sid in warm:
            out[sid] = SensorDoubt(sid, v, WARM, True, kept[0][1], kept[-1][1], len(kept))
    if len(kept) >= 3:
        kv = [v for _, v in kept]
        for j, (sid, v) in enumerate(kept):
            if _median_without(kv, j) - v >= NOT_WEATHER_K:
                others = kv[:j] + kv[j + 1:]
                out[sid] = SensorDoubt(sid, v, COLD, False, others[0], others[-1], len(others))
    return out


def jump_doubt(station: str, t_s: np.ndarray, air_c: np.ndarray, now_s: float) -> SensorDoubt | None:
    """A lone sensor's step test over its readings up to `now_s` (at most JUMP_LOOKBACK_S back):
    the last rise of NOT_WEATHER_K or more between readings at most JUMP_MAX_GAP_S apart, while the
    latest reading stays more than NOT_WEATHER_K / 2 above the reading before it; else None.

    Parameters
    ----------
    t_s : ndarray
        Reading times [s since the epoch], sorted.
    air_c : ndarray
        The readings [degC].
    """
    j = count_up_to(t_s, now_s)
    i = int(t_s.searchsorted(now_s - JUMP_LOOKBACK_S, side="left"))
    if j - i < 2:
        return None
    t, v = t_s[i:j], air_c[i:j]
    up = np.flatnonzero((np.diff(v) >= NOT_WEATHER_K) & (np.diff(t) <= JUMP_MAX_GAP_S))
    if not len(up):
        return None
    k = int(up[-1]) + 1  # the first reading after the jump
    before, latest = round(float(v[k - 1]), 2), round(float(v[-1]), 2)
    if latest - before <= NOT_WEATHER_K / 2.0:
        return None  # it came back: the jump was a passing one
    return SensorDoubt(station, latest, JUMP, True, jump_from_c=before,
                       jump_at_utc=dt.datetime.fromtimestamp(float(t[k]), tz=dt.UTC))


def _fresh_air(st: Station, state: StationState, series: Series, now_s: float, stale: float) -> bool:
    """Whether the station's air temperature is one to compare with now: a crop or tower sensor
    healthy by the forecast's rules (fresh, not stuck); a weather station's newest reading within
    `stale` of its usual intervals."""
    if "air_temperature" not in state.latest:
        return False
    if st.role in ("crop", "tower"):
        return state.healthy
    t = series[(st.id, "air_temperature")][0]
    t = t[:count_up_to(t, now_s)]
    return len(t) > 0 and now_s - float(t[-1]) <= stale * usual_interval_s(t, st.interval_s)


_KEPT: list = [None, None, None, None, {}]  # (series, now, config, the air series seen, the doubts): one instant


def sensor_doubts(cfg: Config, series: Series, now_s: float, memo: dict | None = None) -> dict[str, SensorDoubt]:
    """Every air thermometer of the farm the cross-check doubts at `now_s` (see the module
    docstring), from readings up to `now_s` only. Made once per series and instant (the
    projection of every block and the monitoring state ask again); `memo` is a replay's
    `pipeline.WindowMemo` values, handed to `forecast.carry.station_state`."""
    stations = [st for st in cfg.stations if st.role in AIR_ROLES]
    seen = tuple(series.get((st.id, "air_temperature")) for st in stations)
    held, at, kept_cfg, kept_seen, doubts = _KEPT
    if held is series and at == now_s and kept_cfg is cfg and len(seen) == len(kept_seen) \
            and all(a is b for a, b in zip(seen, kept_seen, strict=True)):
        return doubts
    stale = cfg.forecast.stale_after_intervals
    air_c: dict[str, float] = {}
    for st, tv in zip(stations, seen, strict=True):
        if tv is None:
            continue
        state = carry.station_state(st, series, now_s, stale, memo)
        if _fresh_air(st, state, series, now_s, stale):
            air_c[st.id] = state.latest["air_temperature"]
    if len(air_c) == 1:
        sid = next(iter(air_c))
        t, v = series[(sid, "air_temperature")]
        lone = jump_doubt(sid, t, v, now_s)
        doubts = {} if lone is None else {sid: lone}
    else:
        doubts = peer_doubts(air_c)
    _KEPT[:] = [series, now_s, cfg, seen, doubts]
    return doubts


_TRUSTED: dict[str, tuple[StationState, SensorDoubt, StationState]] = {}


def trusted(state: StationState, doubts: dict[str, SensorDoubt]) -> StationState:
    """`state`, or, for a sensor the cross-check leaves out, the same state not healthy, without its
    temperatures, with the reason among its problems (the same object for the same state and doubt: the monitoring
    memo compares states by identity)."""
    d = doubts.get(state.station)
    if d is None or not d.left_out or not state.healthy:
        return state
    got = _TRUSTED.get(state.station)
    if got is not None and got[0] is state and got[1] == d:
        return got[2]
    if d.kind == JUMP:
        why = f"air temperature jumped from {d.jump_from_c:g} to {d.air_temp_c:g} degC, no other thermometer to compare"
    else:
        why = (f"air temperature {d.air_temp_c:g} degC, the farm's other thermometers "
               f"{d.peers_low_c:g} to {d.peers_high_c:g} degC")
    # its temperatures go with it (a sensor sending °F sends its dew point in °F too): no dew point is
    # made from its air temperature, and nothing that looks for one finds it
    latest = {q: v for q, v in state.latest.items() if not q.endswith("_temperature")}
    new = dataclasses.replace(state, healthy=False, latest=latest,
                              problems=(*state.problems, f"{state.station}: {why}; left out"))
    if len(_TRUSTED) > 4096:
        _TRUSTED.clear()
    _TRUSTED[state.station] = (state, d, new)
    return new


def left_out(doubts: dict[str, SensorDoubt]) -> frozenset[str]:
    """The stations whose readings no one may use now (the warm and jump doubts)."""
    return frozenset(sid for sid, d in doubts.items() if d.left_out) if doubts else frozenset()


def fahrenheit_fits(d: SensorDoubt) -> bool:
    """Whether a warm outlier's reading, taken as °F, falls in line with the farm (within
    FAHRENHEIT_FITS_K of the others' range): then the likely cause is a sensor sending °F."""
    as_c = (d.air_temp_c - 32.0) / 1.8
    lo = d.jump_from_c if d.kind == JUMP else d.peers_low_c
    hi = d.jump_from_c if d.kind == JUMP else d.peers_high_c
    return lo is not None and hi is not None and lo - FAHRENHEIT_FITS_K <= as_c <= hi + FAHRENHEIT_FITS_K
