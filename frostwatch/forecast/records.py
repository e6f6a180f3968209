"""What a finished night did at a block (`night_record`, `night_records`): its inputs at t0 = sunset
+ 2 h as a forecast issued then saw them, and the observed minimum, for the calibration
(`forecast.learner`) and the backtest. Pure: readings, config and the night in, a `NightRecord` out.
The physics prior of each record is `forecast.projection`'s (worked out for a season in one pass).
"""

from __future__ import annotations

import numpy as np

from frostwatch import towers as towers_mod
from frostwatch.config import Block, Config, Station
from frostwatch.forecast import crosscheck
from frostwatch.forecast.curves import _utc, evening_curve_c
from frostwatch.forecast.features import feature_vector
from frostwatch.forecast.nowcast import fall_before_min_c, training_samples_many
from frostwatch.forecast.past_night import NightRecord
from frostwatch.forecast.projection import prime_priors, prior_c
from frostwatch.forecast.sensors import (
    Series,
    as_of,
    dusk_inputs,
    speaking_station,
    station_state,
    usual_interval_s,
    wind_station_ids,
    window_stat,
)
from frostwatch.forecast.settings import PROTECTION_QUANTITIES
from frostwatch.night import Night
from frostwatch.physics import humidity

RADIATION_NIGHT_WIND_M_S = 2.0  # a past night is a radiation night if its mean wind was below this
RADIATION_NIGHT_CLOUD_FRAC = 0.3  # ... and its cloud never above this (FAO-FP ch. 5 usage)


def _protected(series: Series, stations: list[Station], start_s: float, end_s: float) -> bool:
    """True when any running flag of the block's stations reads on in [start, end]."""
    for s in stations:
        for q in PROTECTION_QUANTITIES:
            if (s.id, q) in series:
                t, v = series[(s.id, q)]
                i, j = int(np.searchsorted(t, start_s, side="left")), int(np.searchsorted(t, end_s, side="right"))
                if np.any(v[i:j] >= 0.5):
                    return True
    return False


def night_record(
    block: Block, cfg: Config, series: Series, night: Night, pressure_hpa: float | None = None
) -> NightRecord | None:
    """What a finished night did at a block's speaking sensor: its inputs at t0, as a forecast
    issued then saw them (readings up to t0 only), and the observed minimum from t0 to one hour
    after sunrise. None when the night is not covered: no healthy crop-height sensor at t0, or a
    gap of more than `stale_after_intervals` intervals in its readings over the window.
    """
    return night_records(block, cfg, [(series, night)], pressure_hpa)[0]


def night_records(
    block: Block, cfg: Config, nights: list[tuple[Series, Night]], pressure_hpa: float | None = None
) -> list[NightRecord | None]:
    """`night_record` of many nights, each with its own readings (a season's, for a backtest):
    the physics priors of all of them worked out in one pass (`prime_priors`), and the nowcast's
    training points of all of them at once (`nowcast.training_samples_many`)."""
    p_hpa = pressure_hpa or float(humidity.pressure_hpa_from_elevation(cfg.site.elevation_m))
    found = [_night_record_fields(block, cfg, series, night, p_hpa) for series, night in nights]
    jobs = [f[0]["nowcast_samples"] for f in found if f is not None]
    for f, samples in zip([f for f in found if f is not None], training_samples_many(cfg, cfg.stations_of(block.id), jobs), strict=True):
        f[0]["nowcast_samples"] = samples
    prime_priors([f[1] for f in found if f is not None])
    return [None if f is None else NightRecord(**f[0], prior_c=prior_c(*f[1])) for f in found]


def _night_record_fields(block: Block, cfg: Config, series: Series, night: Night, p_hpa: float) -> tuple[dict, tuple] | None:
    """A night's record without its physics prior, and the prior's inputs; its nowcast samples
    are what `nowcast.training_samples_many` takes to work them out."""
    dusk_s = night.dusk_utc.timestamp()
    sunset_s = night.sunset_utc.timestamp()
    sunrise_s = night.sunrise_utc.timestamp()
    end_s = sunrise_s + 3600.0
    stations = cfg.stations_of(block.id)
    site = [s for s in cfg.stations if s.block is None]
    doubts = crosscheck.sensor_doubts(cfg, series, dusk_s)  # the projection's own cross-check at dusk
    states = [crosscheck.trusted(station_state(s, series, dusk_s, cfg.forecast.stale_after_intervals), doubts)
              for s in stations]
    speaker = speaking_station(states)
    if speaker is None:
        return None
    t, v = series[(speaker.station, "air_temperature")]
    st = next(s for s in stations if s.id == speaker.station)
    max_gap = cfg.forecast.stale_after_intervals * usual_interval_s(t[t <= dusk_s], st.interval_s)
    i0, i1 = int(np.searchsorted(t, dusk_s, side="left")), int(np.searchsorted(t, end_s, side="right"))
    tw, vw = t[i0:i1], v[i0:i1]
    if len(tw) < 3 or tw[0] - dusk_s > max_gap or sunrise_s - tw[-1] > max_gap or np.any(np.diff(tw) > max_gap):
        return None
    di = dusk_inputs(cfg, series, speaker.station, stations, dusk_s)
    if di is None:
        return None
    i = int(np.argmin(vw))
    inv_at_min = _inversion_at_s(block, cfg, series, float(tw[i]), float(vw[i]))
    ids = wind_station_ids(series, [s.id for s in stations + site])  # the farm's wind where the block has none
    wind = window_stat(series, ids, "wind_speed", sunset_s, sunrise_s, np.mean)
    cloud = window_stat(series, [s.id for s in cfg.stations], "cloud_area_fraction", sunset_s, sunrise_s, np.max)
    if cloud is None and di.cloud_frac is not None:
        cloud = di.cloud_frac  # a sky sensor: its estimate at t0
    h = night.hours_to_sunrise(night.dusk_utc)
    x = feature_vector(di.temp_c, di.dew_point_c, di.cloud_frac, di.wind_m_s, di.wind_trend_m_s, di.pressure_trend_hpa)
    radiation = (wind is None or wind < RADIATION_NIGHT_WIND_M_S) and (cloud is None or cloud <= RADIATION_NIGHT_CLOUD_FRAC)
    return dict(
        night=night.date,
        station=speaker.station,
        t0_temp_c=di.temp_c,
        t0_dew_point_c=di.dew_point_c,
        hours_to_sunrise=h,
        observed_min_c=float(vw[i]),
        observed_min_at_utc=_utc(float(tw[i])),
        mean_wind_m_s=wind,
        max_cloud_frac=cloud,
        radiation_night=radiation,
        t0_wind_m_s=di.wind_m_s,
        t0_cloud_frac=di.cloud_frac,
        t0_wind_trend_m_s=di.wind_trend_m_s,
        t0_pressure_trend_hpa=di.pressure_trend_hpa,
        evening_curve_c=evening_curve_c(t, v, sunset_s, dusk_s, di.temp_c, sunrise_s),
        nowcast_samples=(series, speaker.station, t, v, dusk_s, di.temp_c, sunrise_s, end_s),
        protected=_protected(series, stations, dusk_s - 3600.0, end_s),
        inversion_at_min_c=inv_at_min,
        fall_before_min_c=fall_before_min_c(t, v, float(tw[i]), float(vw[i]), dusk_s),
        min_hours_left=(sunrise_s - float(tw[i])) / 3600.0,
    ), (di.temp_c, x[1], h, x[3], x[2], p_hpa)


def _inversion_at_s(block: Block, cfg: Config, series: Series, t_s: float, air_c: float) -> float | None:
    """Tower minus crop-height air at `t_s` (a past night's minimum), on the tower the block's
    projection would use then (`frostwatch.towers`); None without a healthy tower reading."""
    doubts = crosscheck.sensor_doubts(cfg, series, t_s)
    states = {s.id: crosscheck.trusted(station_state(s, series, t_s, cfg.forecast.stale_after_intervals), doubts)
              for s in cfg.stations if s.role == "tower"}
    choice = towers_mod.tower_for_block(cfg, block, states)
    if choice is None:
        return None
    tower_c = as_of(series, choice.station, "air_temperature", t_s, 900.0, extrapolate=False)
    return None if tower_c is None else round(tower_c - air_c, 2)
