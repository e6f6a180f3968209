"""Does a thermometer read consistently warm or cold against the farm's others? (pure): the slow,
small bias of a broken radiation shield, a drifted probe or a sensor never checked in an ice bath,
found from stored history (grower-needs B5, E4).

frostwatch lets the coldest healthy crop-height sensor speak for a block; a block whose only crop
sensor reads 1.5 K warm raises its alarms late, silently. `forecast.crosscheck` leaves out a
thermometer that is grossly out of line at one instant (>= 15 K: °F sent as °C); this module finds
the bias of a few tenths to a few kelvin that no single instant shows.

    hourly = reports.hourly_means(store, start, end)      # one SQL aggregate
    check = sensor_offsets(hourly, air_roles, tz)         # OffsetCheck

The rule (station-network quality control calls it a spatial consistency check; the thresholds
are judgement, figures from memory):

- Only well-mixed hours count: hours whose farm wind (the hourly mean of the farm's wind sensors)
  is at least MIXED_WIND_M_S = 3 m/s. In stirred air the night inversion and cold-air pockets are
  gone; what is left between sensors of one farm is the dry-adiabatic lapse (9.8 K/km: a 10 m tower
  ~0.1 K cooler than crop height) and the blocks' elevation differences (a few tenths). In calm
  hours a cold pocket or an inversion of several K is weather, not a fault, so calm hours never
  count, and neither do hours with no wind measured (mixing is never assumed).
- Peers: the farm's air thermometers (crop-height, tower and weather stations, the roles the
  cross-check compares); an hour counts for a sensor when at least MIN_OTHERS = 2 others have a
  reading in it. A sensor's offset in an hour is its hourly mean minus the median of the others'
  hourly means (the median stands when one other is off too).
- A sensor's offset is the median over its mixed hours. It is flagged when |offset| >=
  FLAG_OFFSET_K = 1.0 K over at least FLAG_MIN_HOURS = 6 hours on FLAG_MIN_DAYS = 2 days: 1 K is
  several times what the lapse and elevation leave under mixing, and about the stated accuracy of a
  good crop-height thermometer's whole error budget (0.2-0.5 K, from memory); several hours on two
  days keep one odd afternoon (a sunlit patch, a passing shower on one block) from flagging.
- The usual fix is an ice-bath check of the probe and a look at its radiation shield (common
  practice).

Limits: a farm with fewer than three air thermometers has nothing to compare a sensor with (with
two, either could be the wrong one); a farm with no wind sensor is never judged; when most of a
farm's sensors share one bias the odd (right) one is the one flagged. A crop sensor inside a
running sprinkler's spray reads the ice (about 0 °C), not the air: hours when a block's running
sensor says its protection ran leave the block's thermometers out; a block that runs its
sprinklers with no running sensor is not known to, and reads warm in those hours. The check advises; it never changes which sensor speaks for a block.
"""

from __future__ import annotations

import datetime as dt
from collections import defaultdict
from collections.abc import Iterable
from dataclasses import dataclass

import numpy as np

from frostwatch.forecast import settings
from frostwatch.forecast.crosscheck import AIR_ROLES  # the thermometers compared: the cross-check's own

MIXED_WIND_M_S = 3.0  # hourly mean farm wind at or above which the air counts as well mixed (judgement)
MIN_OTHERS = 2  # other thermometers an hour needs before a sensor is compared in it
FLAG_OFFSET_K = 1.0  # |median offset| at or above which a sensor is named to check (judgement)
FLAG_MIN_HOURS = 6  # mixed hours that must back a flag
FLAG_MIN_DAYS = 2  # on at least this many (local) days
# why nothing could be judged (OffsetCheck.not_judged); reports word them in the grower's units
TOO_FEW_THERMOMETERS, NO_WIND, NO_WINDY_HOUR, TOO_FEW_WINDY_HOURS = (
    "too few thermometers", "no wind measured", "no windy hour", "too few windy hours")


@dataclass(frozen=True)
class SensorOffset:
    station: str
    role: str
    offset_k: float | None  # median of (its hourly mean - the others' median) in mixed hours; None: no such hour
    hours: int  # mixed hours it was compared in
    days: int  # local days those hours fall on

    @property
    def judged(self) -> bool:
        """Enough mixed hours on enough days to say anything."""
        return self.hours >= FLAG_MIN_HOURS and self.days >= FLAG_MIN_DAYS

    @property
    def flagged(self) -> bool:
        return self.judged and self.offset_k is not None and abs(self.offset_k) >= FLAG_OFFSET_K


@dataclass(frozen=True)
class OffsetCheck:
    start_utc: dt.datetime
    end_utc: dt.datetime
    wind_hours: int  # hours with a wind reading
    mixed_hours: int  # of those, hours with wind >= MIXED_WIND_M_S and at least 3 thermometers
    sensors: tuple[SensorOffset, ...]
    air_count: int  # air thermometers configured
    not_judged: str | None  # why no sensor could be judged (one of the four above); None when some were

    @property
    def flagged(self) -> list[SensorOffset]:
        return [s for s in self.sensors if s.flagged]


def _median_without(values: np.ndarray, i: int) -> float:
    return float(np.median(np.delete(values, i)))


def sensor_offsets(
    hourly: Iterable[tuple[int, str, str, float]],
    air_roles: dict[str, str],
    tz: dt.tzinfo,
    start_utc: dt.datetime,
    end_utc: dt.datetime,
    block_of: dict[str, str | None] | None = None,
) -> OffsetCheck:
    """Each air thermometer's offset against the farm's others in well-mixed hours.

    Parameters
    ----------
    hourly : iterable of (hour_index, station, quantity, mean)
        Hourly means: hour_index = ms since 1970 UTC // 3 600 000; quantity "air_temperature"
        [degC] or "wind_speed" [m/s]; other quantities and stations are ignored.
    air_roles : dict
        Station id -> role of the farm's air thermometers (roles in AIR_ROLES).
    tz : tzinfo
        The site's time zone (days are counted in local dates).
    start_utc, end_utc : datetime
        The window the hourly means came from (reported back).
    block_of : dict, optional
        Station id -> its block. An hour in which a station of a block reports its protection
        running (a settings.PROTECTION_QUANTITIES mean above 0) leaves that block's thermometers out: they
        read the protected air (a sprinkled sensor reads the ice, about 0 degC), not the farm's.

    Returns
    -------
    OffsetCheck, with one SensorOffset per air thermometer, in the order of `air_roles`.
    """
    air = {k: v for k, v in air_roles.items() if v in AIR_ROLES}
    wind: dict[int, list[float]] = defaultdict(list)
    temps: dict[int, dict[str, float]] = defaultdict(dict)
    protected: dict[int, set[str]] = defaultdict(set)
    for hour, station, quantity, mean in hourly:
        if mean is None or mean != mean:
            continue
        if quantity == "wind_speed":
            wind[hour].append(float(mean))
        elif quantity in settings.PROTECTION_QUANTITIES and mean > 0 and block_of and block_of.get(station):
            protected[hour].add(block_of[station])
        elif quantity == "air_temperature" and station in air:
            temps[hour][station] = float(mean)
    diffs: dict[str, list[float]] = defaultdict(list)
    days: dict[str, set[dt.date]] = defaultdict(set)
    mixed = 0
    for hour in sorted(wind):
        ran = protected.get(hour, set())
        ids = [s for s in temps.get(hour, {}) if not (ran and block_of and block_of.get(s) in ran)]
        if float(np.mean(wind[hour])) < MIXED_WIND_M_S or len(ids) < MIN_OTHERS + 1:
            continue
        mixed += 1
        values = np.array([temps[hour][s] for s in ids])
        day = dt.datetime.fromtimestamp(hour * 3600, dt.UTC).astimezone(tz).date()
        for i, s in enumerate(ids):
            diffs[s].append(float(values[i]) - _median_without(values, i))
            days[s].add(day)
    sensors = tuple(
        SensorOffset(s, role, float(np.median(diffs[s])) if diffs[s] else None, len(diffs[s]), len(days[s]))
        for s, role in air.items()
    )
    reason = None
    if len(air) < MIN_OTHERS + 1:
        reason = TOO_FEW_THERMOMETERS
    elif not wind:
        reason = NO_WIND
    elif not mixed:
        reason = NO_WINDY_HOUR
    elif not any(x.judged for x in sensors):
        reason = TOO_FEW_WINDY_HOURS
    return OffsetCheck(start_utc, end_utc, len(wind), mixed, sensors, len(air), reason)
