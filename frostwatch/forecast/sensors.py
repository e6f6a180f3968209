"""Which sensor speaks for a block, and what the readings say at an instant, from readings up to
that instant only. Pure: series in, values out.
"""

from __future__ import annotations

import datetime as dt
import functools
import math
import operator
from dataclasses import dataclass

import numpy as np

from frostwatch.config import Config, Station
from frostwatch.models import StationState
from frostwatch.physics import humidity
from frostwatch.physics.dew_point_floats import dew_point_c_f
from frostwatch.sorted_times import count_up_to
from frostwatch.units import QUANTITIES

Series = dict[tuple[str, str], tuple[np.ndarray, np.ndarray]]

MIN_INTERVAL_S = 60.0  # a sensor is never expected more often than once a minute
DEFAULT_INTERVAL_S = 300.0  # assumed when a sensor has too few readings to tell
STUCK_WINDOW_S = 3600.0  # a crop-height air sensor flat to the last digit this long is suspect
STUCK_MIN_READINGS = 10  # a 5-min sensor gives 12-13 readings an hour
EXTRAPOLATE_AFTER_S = 600.0  # a value older than this is carried along the last slope
INPUT_WINDOW_S = 3600.0  # wind and cloud at an instant: the mean of the last hour (or one interval)
WIND_TREND_S = 3 * 3600.0  # the dusk wind (and pressure) trend: value at t0 minus this long before
ASSUMED_DEPRESSION_C = 6.0  # dew-point depression assumed with no humidity sensor


def usual_interval_s(t_s: np.ndarray, configured_s: float | None) -> float:
    """A station's usual reporting interval: the config's, or the median gap of its last readings."""
    if configured_s:
        return float(configured_s)
    if len(t_s) < 3:
        return DEFAULT_INTERVAL_S
    tail = t_s[-20:].tolist()
    gaps = sorted(b - a for a, b in zip(tail, tail[1:], strict=False) if b > a)
    if not gaps:
        return DEFAULT_INTERVAL_S
    n = len(gaps)  # the median, as np.median takes it (the mean of the middle two of an even count)
    median = gaps[n // 2] if n % 2 else (gaps[n // 2 - 1] + gaps[n // 2]) / 2.0
    return max(MIN_INTERVAL_S, float(median))


@functools.lru_cache(maxsize=4096)
def dew_point_c_from_rel_humidity(air_c: float, rh_pct: float) -> float:
    """`physics.humidity.dew_point_c_from_rel_humidity` of one reading, solved once: the same
    reading is asked for at every evaluation until a newer one comes (and the dusk's all night).
    Floats are solved on plain floats (`physics.dew_point_floats`, the same bits)."""
    if type(air_c) is float and type(rh_pct) is float:
        return dew_point_c_f(air_c, rh_pct)
    return float(humidity.dew_point_c_from_rel_humidity(air_c, rh_pct))


@functools.lru_cache(maxsize=16384)
def _utc_at(t_s: float) -> dt.datetime:
    # a reading's time as a datetime, made once (every evaluation of the night asks again)
    return dt.datetime.fromtimestamp(t_s, tz=dt.UTC)


_STATES: tuple = (None, None, {})  # (the series, the instant, {(station id, stale): (station, its series, state)})
_KEYS: dict[str, tuple[tuple[str, str], ...]] = {}  # a station's series keys, one per quantity


def series_keys(station: str) -> tuple[tuple[str, str], ...]:
    """The series keys (station, quantity) of every quantity, in `QUANTITIES`' order, made once."""
    keys = _KEYS.get(station)
    if keys is None:
        keys = _KEYS[station] = tuple((station, q) for q in QUANTITIES)
    return keys


def station_state(st: Station, series: Series, now_s: float, stale_after_intervals: float,
                  memo: dict | None = None) -> StationState:
    """Latest values of a station and whether its air temperature can be trusted now.

    Made once per series and instant: an evaluation asks for the same station from the
    projection, the monitoring state and the tower choice. A station's series replaced in the
    dict since (a caller editing its own series) is seen, and the state made again. `memo` (a
    replay's `pipeline.WindowMemo` values; `series` its window, which ends at `now_s`) keeps the
    latest values while the window is the same; only the health depends on the instant."""
    global _STATES
    held, at, states = _STATES
    if held is not series or at != now_s:
        states = {}
        _STATES = (series, now_s, states)
    own = tuple(map(series.get, series_keys(st.id)))
    key = (st.id, stale_after_intervals)  # the station itself is told by identity (no dataclass hash)
    got = states.get(key)
    if got is not None and got[0] is st and all(map(operator.is_, got[1], own)):  # the same series objects
        return got[2]
    state = _station_state(st, series, now_s, stale_after_intervals, memo)
    states[key] = (st, own, state)
    return state


def _latest_values(st: Station, series: Series, now_s: float) -> tuple[dict[str, float], dict[str, dt.datetime]]:
    latest: dict[str, float] = {}
    latest_at: dict[str, dt.datetime] = {}
    for key in series_keys(st.id):  # only this station's series: the loop must not grow with the farm
        tv = series.get(key)
        if tv is None:
            continue
        t, v = tv
        q = key[1]
        idx = count_up_to(t, now_s) - 1
        if idx < 0:
            continue
        latest[q] = float(v[idx])
        latest_at[q] = _utc_at(float(t[idx]))
    return latest, latest_at


def _station_state(st: Station, series: Series, now_s: float, stale_after_intervals: float,
                   memo: dict | None = None) -> StationState:
    if memo is None:
        latest, latest_at = _latest_values(st, series, now_s)
    else:
        kept = memo.get(("latest", st.id))
        if kept is None:
            kept = memo[("latest", st.id)] = _latest_values(st, series, now_s)
        latest, latest_at = dict(kept[0]), dict(kept[1])
    problems: list[str] = []
    healthy = True
    key = (st.id, "air_temperature")
    if st.role in ("crop", "tower"):
        if key not in series or "air_temperature" not in latest:
            healthy = False
            problems.append(f"{st.id}: no air temperature reading")
        else:
            t, v = series[key]
            j = count_up_to(t, now_s)  # sorted: views up to now, no copies
            t, v = t[:j], v[:j]
            interval = usual_interval_s(t, st.interval_s)
            age = now_s - t[-1]
            if age > stale_after_intervals * interval:
                healthy = False
                problems.append(
                    f"{st.id}: silent for {age / 60:.0f} min (usual interval {interval / 60:.0f} min); left out"
                )
            recent = v[int(t.searchsorted(now_s - STUCK_WINDOW_S, side="left")):]
            # a sensor whose newest reading differs from the hour's first is not stuck: told
            # without an array operation (np.all(recent == recent[0]) is then False)
            if len(recent) >= STUCK_MIN_READINGS and recent[-1] == recent[0] and np.all(recent == recent[0]):
                healthy = False
                problems.append(f"{st.id}: air temperature stuck at {recent[0]:g} degC for an hour; left out")
    return StationState(st.id, st.height_m, st.role, latest, latest_at, healthy, tuple(problems))


def speaking_station(states: list[StationState]) -> StationState | None:
    """The coldest healthy crop-height sensor (grower-needs E4/F1: never a stale value)."""
    ok = [s for s in states if s.role == "crop" and s.healthy and "air_temperature" in s.latest]
    return min(ok, key=lambda s: s.latest["air_temperature"]) if ok else None


def dew_point_of(state: StationState | None, site_states: list[StationState]) -> float | None:
    """Dew point at crop height: measured, or from relative humidity (liquid-water convention)."""
    for s in ([state] if state else []) + site_states:
        if s is None:
            continue
        if "dew_point_temperature" in s.latest:
            return s.latest["dew_point_temperature"]
        if "relative_humidity" in s.latest and "air_temperature" in s.latest:
            rh = max(1.0, min(100.0, s.latest["relative_humidity"]))
            return dew_point_c_from_rel_humidity(s.latest["air_temperature"], rh)
    return None


def as_of(
    series: Series, station: str, quantity: str, t_s: float, max_age_s: float, extrapolate: bool = True
) -> float | None:
    """The value at `t_s` from readings up to `t_s` only (what a forecast issued then could know).

    The latest reading; with `extrapolate`, carried forward along the slope of the last two
    readings when it is older than `EXTRAPOLATE_AFTER_S` (an hourly log's last air temperature can
    be most of an hour old at the dusk point; the evening fall then is steady). Humidity is not
    extrapolated: its hour-to-hour steps are noise as often as trend. None if the latest reading is
    older than `max_age_s`.
    """
    key = (station, quantity)
    if key not in series:
        return None
    t, v = series[key]
    i = count_up_to(t, t_s) - 1
    if i < 0 or t_s - t[i] > max_age_s:
        return None
    val = float(v[i])
    age = t_s - float(t[i])
    if extrapolate and age > EXTRAPOLATE_AFTER_S and i >= 1:
        gap = float(t[i] - t[i - 1])
        if 0 < gap <= 2.0 * max(age, EXTRAPOLATE_AFTER_S):
            val += (val - float(v[i - 1])) / gap * age
    return val


_INDEX: list = [None, {}]  # (the series last indexed, {quantity: set of stations}); one entry


def stations_with(series: Series, quantity: str) -> set[str]:
    """The stations that have `quantity` in `series` (indexed once per series object: a farm's
    evaluation asks for every block, and must not loop over every station each time)."""
    if _INDEX[0] is not series:
        index: dict[str, set[str]] = {}
        for sid, q in series:
            index.setdefault(q, set()).add(sid)
        _INDEX[0], _INDEX[1] = series, index
    return _INDEX[1].get(quantity, set())


def mean_as_of(series: Series, stations: list[str], quantity: str, t_s: float, window_s: float) -> float | None:
    """Mean of the readings in (t_s - window, t_s]; if none, the latest one within two windows."""
    parts, last = [], None
    have = stations_with(series, quantity)
    for sid in stations:
        if sid not in have:
            continue
        t, v = series[(sid, quantity)]
        j = count_up_to(t, t_s)
        i = int(t.searchsorted(t_s - window_s, side="right"))
        if j > i:
            parts.append(v[i:j])
        elif j > 0 and t_s - t[j - 1] <= 2.0 * window_s:
            last = float(v[j - 1])
    if parts:
        return _mean(parts[0] if len(parts) == 1 else np.concatenate(parts))
    return last


def _mean(values: np.ndarray) -> float:
    # np.mean's own sum (pairwise, float64) over its own count, bit for bit, without its
    # wrapper's cost: an evaluation takes a few of these for every block
    return float(np.add.reduce(values, dtype=float)) / len(values)


def means_as_of(series: Series, stations: list[str], quantity: str, times_s: np.ndarray, window_s: float) -> np.ndarray:
    """`mean_as_of` at many instants at once (NaN where nothing is known): for training samples."""
    times_s = np.asarray(times_s, dtype=float)
    total = np.zeros(len(times_s))
    count = np.zeros(len(times_s))
    seen = []
    for sid in stations:
        if (sid, quantity) not in series:
            continue
        t, v = series[(sid, quantity)]
        if not len(t):
            continue
        csum = np.concatenate([[0.0], np.cumsum(v)])
        j = np.searchsorted(t, times_s, side="right")
        i = np.searchsorted(t, times_s - window_s, side="right")
        total += csum[j] - csum[i]
        count += j - i
        seen.append((t, v, j))
    mean = total / np.maximum(count, 1)  # never a zero divisor
    if count.all():  # a reading in every window: no instant falls back on an older one
        return mean
    last = np.full(len(times_s), np.nan)
    for t, v, j in seen:  # the first station's latest reading within two windows
        has = (j > 0) & (times_s - t[np.maximum(j - 1, 0)] <= 2.0 * window_s)
        last = np.where(np.isnan(last) & has, v[np.maximum(j - 1, 0)], last)
    return np.where(count > 0, mean, last)


def wind_station_ids(series: Series, own_ids: list[str]) -> list[str]:
    """The stations whose wind speaks for a block: its own and the site-wide ones, or, with no
    anemometer among them, every station with one (the farm's wind)."""
    if stations_with(series, "wind_speed").intersection(own_ids):
        return own_ids
    return sorted(stations_with(series, "wind_speed"))


def window_stat(series: Series, stations: list[str], quantity: str, start_s: float, end_s: float, stat) -> float | None:
    """`stat` over the stations' readings in [start, end], or None."""
    vals = []
    for sid in stations:
        if (sid, quantity) in series:
            t, v = series[(sid, quantity)]
            i, j = int(np.searchsorted(t, start_s, side="left")), int(np.searchsorted(t, end_s, side="right"))
            vals.extend(v[i:j].tolist())
    return float(stat(vals)) if vals else None


def cloud_frac_now(series: Series, cfg: Config, now_s: float, air_temp_c: float, dew_point_c: float | None,
                   mean=None) -> float | None:
    """Cloud fraction from a cloud sensor, or from an infrared sky sensor; None when neither exists.
    `mean`: `mean_as_of` or one with its arguments (`forecast.carry.mean_as_of` with a memo)."""
    mean = mean or mean_as_of
    measured = mean(series, sorted(stations_with(series, "cloud_area_fraction")), "cloud_area_fraction", now_s, INPUT_WINDOW_S)
    if measured is not None:
        return measured
    sky = mean(series, [s.id for s in cfg.stations_with_role("sky")], "surface_temperature", now_s, INPUT_WINDOW_S)
    if sky is None or dew_point_c is None:
        return None
    from frostwatch.physics import cloud_cover

    e = humidity.vapour_pressure_hpa_from_dew_point(dew_point_c)
    return float(cloud_cover.cloud_frac_from_sky_temperature(sky, air_temp_c, e))


@dataclass(frozen=True)
class DuskInputs:
    """What is known at the dusk point t0 (sunset + 2 h) from readings up to t0."""

    station: str
    temp_c: float
    dew_point_c: float | None
    wind_m_s: float | None
    cloud_frac: float | None
    wind_trend_m_s: float | None = None
    pressure_trend_hpa: float | None = None


def _times_up_to(t_s: np.ndarray, end_s: float) -> np.ndarray:
    """The reading times at or before `end_s` (a series is sorted by time)."""
    return t_s[: int(t_s.searchsorted(end_s, side="right"))]


def dusk_inputs(cfg: Config, series: Series, station: str, block_stations: list[Station], t0_s: float) -> DuskInputs | None:
    """Temperature, dew point, wind and cloud at t0 for `station`, from readings up to t0 only."""
    site = cfg.stations_of(None)
    st = next((s for s in block_stations if s.id == station), None)
    interval = st.interval_s if st and st.interval_s else None
    if interval is None and (station, "air_temperature") in series:
        interval = usual_interval_s(_times_up_to(series[(station, "air_temperature")][0], t0_s), None)
    max_age = cfg.forecast.stale_after_intervals * (interval or DEFAULT_INTERVAL_S)
    t0_c = as_of(series, station, "air_temperature", t0_s, max_age)
    if t0_c is None:
        return None
    others = [station] + [s.id for s in block_stations if s.id != station] + [s.id for s in site]

    def age_limit(sid: str, quantity: str) -> float:
        # each series is judged by its own usual interval (humidity often reports less often than air)
        if (sid, quantity) not in series:
            return max_age
        usual_s = usual_interval_s(_times_up_to(series[(sid, quantity)][0], t0_s), None)
        return max(max_age, cfg.forecast.stale_after_intervals * usual_s)

    td = None
    for sid in others:
        td = as_of(series, sid, "dew_point_temperature", t0_s, age_limit(sid, "dew_point_temperature"), extrapolate=False)
        if td is None:
            rh = as_of(series, sid, "relative_humidity", t0_s, age_limit(sid, "relative_humidity"), extrapolate=False)
            ta = t0_c if sid == station else as_of(series, sid, "air_temperature", t0_s, age_limit(sid, "air_temperature"))
            if rh is not None and ta is not None:
                td = dew_point_c_from_rel_humidity(ta, max(1.0, min(100.0, rh)))
        if td is not None:
            break
    if td is not None:
        td = min(td, t0_c)
    window = max(INPUT_WINDOW_S, interval or 0.0)
    ids = wind_station_ids(series, [s.id for s in block_stations] + [s.id for s in site])
    wind = mean_as_of(series, ids, "wind_speed", t0_s, window)
    wind_then = mean_as_of(series, ids, "wind_speed", t0_s - WIND_TREND_S, window)
    wind_trend = None if wind is None or wind_then is None else wind - wind_then
    cloud = mean_as_of(series, sorted(stations_with(series, "cloud_area_fraction")), "cloud_area_fraction", t0_s, window)
    if cloud is None and td is not None:
        sky = mean_as_of(series, [s.id for s in cfg.stations_with_role("sky")], "surface_temperature", t0_s, window)
        if sky is not None:
            from frostwatch.physics import cloud_cover

            e = humidity.vapour_pressure_hpa_from_dew_point(td)
            cloud = float(cloud_cover.cloud_frac_from_sky_temperature(sky, t0_c, e))
    baro = sorted(stations_with(series, "air_pressure"))  # one barometer serves the farm
    p_now = mean_as_of(series, baro, "air_pressure", t0_s, window)
    p_then = mean_as_of(series, baro, "air_pressure", t0_s - WIND_TREND_S, window)
    p_trend = None if p_now is None or p_then is None else p_now - p_then
    return DuskInputs(station, t0_c, td, wind, None if cloud is None else max(0.0, min(1.0, cloud)), wind_trend, p_trend)


def finite_or(x: float | None, default: float) -> float:
    return default if x is None or not math.isfinite(x) else float(x)
