"""Which night an instant belongs to, and that night's sunset, dusk point and sunrise (pure).

A night is named by the local date of its evening (DESIGN.md 1.4). Local noon separates nights.
"""

from __future__ import annotations

import datetime as dt
from dataclasses import dataclass
from zoneinfo import ZoneInfo

from frostwatch.physics.sun import night_window_utc, night_windows_utc

DUSK_OFFSET = dt.timedelta(hours=2)  # FAO-FP ch. 5: the forecast is issued 2 h after sunset


@dataclass(frozen=True)
class Night:
    """One night at the site: evening date, sunset, dusk point (sunset + 2 h) and next sunrise."""

    date: dt.date
    sunset_utc: dt.datetime
    sunrise_utc: dt.datetime

    @property
    def dusk_utc(self) -> dt.datetime:
        return self.sunset_utc + DUSK_OFFSET

    @property
    def length_h(self) -> float:
        return (self.sunrise_utc - self.sunset_utc).total_seconds() / 3600.0

    def hours_to_sunrise(self, t: dt.datetime) -> float:
        return (self.sunrise_utc - t).total_seconds() / 3600.0

    def contains(self, t: dt.datetime, before_h: float = 1.0, after_h: float = 2.0) -> bool:
        """True from `before_h` before sunset to `after_h` after sunrise: the watch window."""
        return (
            self.sunset_utc - dt.timedelta(hours=before_h)
            <= t
            <= self.sunrise_utc + dt.timedelta(hours=after_h)
        )


def night_of_date(latitude: float, longitude: float, tz: ZoneInfo, evening: dt.date) -> Night:
    sunset, sunrise = night_window_utc(latitude, longitude, evening, tz)
    return Night(evening, sunset, sunrise)


def nights_of_dates(latitude: float, longitude: float, tz: ZoneInfo, evenings: list[dt.date]) -> list[Night]:
    """`night_of_date` of many evenings at once (a season's sun times in one pass), the same nights."""
    windows = night_windows_utc(latitude, longitude, evenings, tz)
    return [Night(d, sunset, sunrise) for d, (sunset, sunrise) in zip(evenings, windows, strict=True)]


def evening_date(t_utc: dt.datetime, tz: ZoneInfo) -> dt.date:
    """The local date of the evening that the instant's night began on (noon to noon)."""
    local = t_utc.astimezone(tz)
    return local.date() if local.hour >= 12 else local.date() - dt.timedelta(days=1)


def night_at(latitude: float, longitude: float, tz: ZoneInfo, t_utc: dt.datetime) -> Night:
    return night_of_date(latitude, longitude, tz, evening_date(t_utc, tz))
