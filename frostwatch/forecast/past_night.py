"""What one past night did at a block's speaking sensor (`NightRecord`), as the calibration learns
it; made by `forecast.records` from the readings. A frozen record; no I/O.
"""

from __future__ import annotations

import datetime as dt
from dataclasses import dataclass

from frostwatch.forecast.features import feature_vector


@dataclass(frozen=True)
class NightRecord:
    """What one past night did at a block's speaking sensor: the dusk values and the minimum.

    The `t0_*` values are as the forecast saw them at its issue time (readings up to t0 only), so
    that the regression is fitted on the same inputs it is later applied to. `nowcast_samples`
    holds (features, fall still to come) at half-hourly points of the night, features as known
    then. `protected` is True when sprinklers or wind machines ran during the night.
    """

    night: dt.date
    station: str
    t0_temp_c: float
    t0_dew_point_c: float | None
    hours_to_sunrise: float
    observed_min_c: float
    observed_min_at_utc: dt.datetime
    mean_wind_m_s: float | None
    max_cloud_frac: float | None
    prior_c: float
    radiation_night: bool
    t0_wind_m_s: float | None = None
    t0_cloud_frac: float | None = None
    t0_wind_trend_m_s: float | None = None
    nowcast_samples: tuple[tuple[tuple[float, ...], float], ...] = ()
    protected: bool = False
    t0_pressure_trend_hpa: float | None = None
    evening_curve_c: float | None = None
    inversion_at_min_c: float | None = None  # tower minus crop height at the observed minimum
    fall_before_min_c: float | None = None  # the reading 2 h before the observed minimum, minus it
    min_hours_left: float | None = None  # hours from the observed minimum to sunrise (< 0: after it)

    @property
    def features(self) -> tuple[float, ...]:
        return feature_vector(self.t0_temp_c, self.t0_dew_point_c, self.t0_cloud_frac, self.t0_wind_m_s,
                              self.t0_wind_trend_m_s, self.t0_pressure_trend_hpa)
