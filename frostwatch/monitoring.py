"""Is a block monitored? (pure): its crop-height sensor must be fresh and trustworthy.

The rules are the forecast's own (`forecast.station_state`: silent for `stale_after_intervals`
of the sensor's usual interval, or stuck flat for an hour; `forecast.crosscheck`: far out of line
with the farm's other thermometers), so a block the projection cannot speak
for is exactly a block reported here as not monitored. The daemon's heartbeat is the readers'
half of the rule (`frostwatch.status`): the evaluation itself is proof that the daemon runs.
"""

from __future__ import annotations

import datetime as dt
import functools

import numpy as np

from frostwatch.config import Block, Config
from frostwatch.decision import Monitoring, MonitorReason
from frostwatch.forecast import Series, carry, crosscheck, usual_interval_s
from frostwatch.forecast.sensors import series_keys
from frostwatch.sorted_times import count_up_to

_UTC_OF: dict[float, dt.datetime] = {}  # a reading time as given -> its instant (emptied when full)


def _utc(t_s: float) -> dt.datetime:
    """`_utc_ms(round(float(t_s), 3))`, kept by the time as given (its rounding to the millisecond
    is the costly part; 0.0 and -0.0 are one key and one instant, and NaN is never found)."""
    x = float(t_s)
    got = _UTC_OF.get(x)
    if got is None:
        got = _utc_ms(round(x, 3))
        if len(_UTC_OF) >= 16384:
            _UTC_OF.clear()
        _UTC_OF[x] = got
    return got


@functools.lru_cache(maxsize=16384)
def _utc_ms(t_s: float) -> dt.datetime:
    # a reading's time as a datetime, made once (every evaluation of the night asks again)
    return dt.datetime.fromtimestamp(t_s, tz=dt.UTC)


_NO_TIMES = np.empty(0)


def block_monitoring(cfg: Config, block: Block, series: Series, now_s: float, memo: dict | None = None,
                     doubts: dict | None = None) -> Monitoring:
    """The monitoring state of `block` at `now_s` from tonight's readings window (`memo`: a
    replay's `pipeline.WindowMemo` values, handed to `forecast.carry.station_state`, which keeps a
    station's state while the window and the reading's age allow and otherwise asks
    `forecast.station_state`).

    Returns
    -------
    Monitoring
        monitored when at least one crop-height station is healthy (fresh, not stuck, and not
        left out by the farm's cross-check, `forecast.crosscheck`: `doubts`, made afresh when
        None); else the reason (no crop station declared, no reading at all in the window,
        implausible, silent, stuck) and since when (the newest crop-height reading, for a silent
        sensor). The block's doubted crop-height sensors travel with it either way.
    """
    crop = cfg.stations_of(block.id, "crop")
    ids = tuple(s.id for s in crop)
    if not crop:
        return Monitoring(False, MonitorReason.NO_CROP_SENSOR, ids)
    stale = cfg.forecast.stale_after_intervals
    doubts = crosscheck.sensor_doubts(cfg, series, now_s, memo) if doubts is None else doubts
    states = tuple(crosscheck.trusted(carry.station_state(st, series, now_s, stale, memo), doubts) for st in crop)
    own = tuple(doubts[i] for i in ids if i in doubts) if doubts else ()
    if memo is not None:
        # a monitored block's state reads `now` only through its stations' states: the same
        # states (carried, `forecast.carry`) and doubts in the same window give the same Monitoring
        kept = memo.get(("monitoring", block.id))
        if kept is not None and all(a is b for a, b in zip(kept[0], states, strict=True)) and kept[2] == own:
            return kept[1]
    mon = _monitoring(crop, ids, states, series, now_s, stale, own)
    if memo is not None and mon.monitored:
        memo[("monitoring", block.id)] = (states, mon, own)
    return mon


def _monitoring(crop, ids, states, series: Series, now_s: float, stale: float, doubts: tuple = ()) -> Monitoring:
    last: float | None = None
    fresh_until: float | None = None
    healthy = False
    any_silent = False
    for st, state in zip(crop, states, strict=True):
        t = series.get((st.id, "air_temperature"), (_NO_TIMES,))[0]
        t = t[:count_up_to(t, now_s)]  # sorted: a view up to now
        if len(t) == 0:
            continue
        newest = float(t[-1])
        last = newest if last is None else max(last, newest)
        limit = newest + stale * usual_interval_s(t, st.interval_s)
        if state.healthy:
            healthy = True
            fresh_until = limit if fresh_until is None else max(fresh_until, limit)
        elif now_s > limit:
            any_silent = True
    last_utc = None if last is None else _utc(last)
    if healthy:
        return Monitoring(True, MonitorReason.OK, ids, None, last_utc, _utc(fresh_until), doubts)
    if last is None:
        return Monitoring(False, MonitorReason.NO_DATA, ids)
    if any(d.left_out for d in doubts):  # it reports, but what it says is not the air's temperature
        return Monitoring(False, MonitorReason.IMPLAUSIBLE, ids, None, last_utc, None, doubts)
    reason = MonitorReason.SILENT if any_silent else MonitorReason.STUCK
    return Monitoring(False, reason, ids, last_utc if reason is MonitorReason.SILENT else None, last_utc, None, doubts)


def inputs_utc(cfg: Config, block: Block, series: Series, now_s: float) -> dict[str, dt.datetime]:
    """{"station/quantity": time of the newest reading at or before now} for the block's stations."""
    out: dict[str, dt.datetime] = {}
    for st in cfg.stations_of(block.id):
        for key, label in _labelled_keys(st.id):  # only this station's series: the loop must not grow with the farm
            tv = series.get(key)
            if tv is None:
                continue
            t = tv[0]
            i = count_up_to(t, now_s) - 1
            if i >= 0:
                out[label] = _utc(t[i])
    return out


_LABELS: dict[str, tuple[tuple[tuple[str, str], str], ...]] = {}


def _labelled_keys(station: str) -> tuple[tuple[tuple[str, str], str], ...]:
    """((station, quantity), "station/quantity") of every quantity, made once per station."""
    got = _LABELS.get(station)
    if got is None:
        got = _LABELS[station] = tuple((key, f"{key[0]}/{key[1]}") for key in series_keys(station))
    return got
