"""Which night an instant belongs to, and that night's sunset, dusk point and sunrise (pure).

A night is named by the local date of its evening (DESIGN.md 1.4). Local noon separates nights.
Where the Sun does not set or rise (a site in the Arctic or Antarctic), the night keeps clear
stand-in instants (physics/sun.py) and says so: `sun_times_words` puts it in plain words.
"""

from __future__ import annotations

import datetime as dt
from collections.abc import Callable
from dataclasses import dataclass
from zoneinfo import ZoneInfo

from frostwatch.physics.sun import POLAR_DAY, POLAR_NIGHT, sun_night_utc
from frostwatch.physics.sun_season import sun_nights_utc
from frostwatch.sorted_times import count_before, count_up_to

DUSK_OFFSET = dt.timedelta(hours=2)  # FAO-FP ch. 5: the forecast is issued 2 h after sunset
LOOKBACK = dt.timedelta(hours=6)  # an evaluation reads readings from this long before sunset


def slice_series(series: dict, start_s: float, end_s: float) -> dict:
    """The part of each series {(station, quantity): (t_s, values)} with start <= t <= end
    (arrays are sorted by time): a night's readings, as views."""
    out = {}
    for key, (t, v) in series.items():
        i, j = count_before(t, start_s), count_up_to(t, end_s)
        if j > i:
            out[key] = (t[i:j], v[i:j])
    return out


@dataclass(frozen=True)
class Night:
    """One night at the site: evening date, sunset, dusk point (sunset + 2 h) and next sunrise.

    `no_sunset` / `no_sunrise` are "" when the Sun sets that evening / rises next morning, else
    why not (physics.sun.POLAR_DAY: it stays up; POLAR_NIGHT: it stays down); the instants are
    then stand-ins (the solar midnight of a midnight sun, the solar noons of a polar night).
    """

    date: dt.date
    sunset_utc: dt.datetime
    sunrise_utc: dt.datetime
    no_sunset: str = ""
    no_sunrise: str = ""

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
    sun = sun_night_utc(latitude, longitude, evening, tz)
    return Night(evening, sun.sunset_utc, sun.sunrise_utc, sun.no_sunset, sun.no_sunrise)


def nights_of_dates(latitude: float, longitude: float, tz: ZoneInfo, evenings: list[dt.date]) -> list[Night]:
    """`night_of_date` of many evenings at once (a season's sun times in one pass), the same nights."""
    suns = sun_nights_utc(latitude, longitude, evenings, tz)
    return [Night(d, sun.sunset_utc, sun.sunrise_utc, sun.no_sunset, sun.no_sunrise)
            for d, sun in zip(evenings, suns, strict=True)]


def evening_date(t_utc: dt.datetime, tz: ZoneInfo) -> dt.date:
    """The local date of the evening that the instant's night began on (noon to noon)."""
    local = t_utc.astimezone(tz)
    return local.date() if local.hour >= 12 else local.date() - dt.timedelta(days=1)


_NOON = dt.time(12)
_CHECK_STEP = dt.timedelta(minutes=15)


def evening_span_s(evening: dt.date, tz: ZoneInfo) -> tuple[float, float] | None:
    """[start, end) in UTC seconds: the instants whose `evening_date` is `evening`, from its local
    noon to the next day's, when the zone's UTC offset is the same at both noons and at every
    quarter hour between (no clock change that day: local time then runs with UTC, so the date
    cannot move inside); None otherwise (the caller works each instant out by `evening_date`)."""
    lo = dt.datetime.combine(evening, _NOON, tz).astimezone(dt.UTC)
    hi = dt.datetime.combine(evening + dt.timedelta(days=1), _NOON, tz).astimezone(dt.UTC)
    if hi - lo != dt.timedelta(days=1) or lo.astimezone(tz).time() != _NOON or hi.astimezone(tz).time() != _NOON:
        return None  # a clock change between the two noons, or a noon that does not exist
    offset = lo.astimezone(tz).utcoffset()
    t = lo
    while t < hi:
        t += _CHECK_STEP
        if t.astimezone(tz).utcoffset() != offset:
            return None
    return lo.timestamp(), hi.timestamp()


def night_at(latitude: float, longitude: float, tz: ZoneInfo, t_utc: dt.datetime) -> Night:
    return night_of_date(latitude, longitude, tz, evening_date(t_utc, tz))


def sun_times_words(night: Night, time_words: Callable[[dt.datetime], str]) -> str:
    """The night's sunset and sunrise for a page, in plain words where the Sun does not set or rise.

    "sunset 20:12, sunrise 05:58"; "sun up all night (no sunset, no sunrise)"; "no sunrise today
    (the sun stays below the horizon)"; or one event and the other's absence. `time_words` writes
    an instant in the site's clock (Display.time).
    """
    if night.no_sunset == POLAR_DAY and night.no_sunrise == POLAR_DAY:
        return "sun up all night (no sunset, no sunrise)"
    if night.no_sunset == POLAR_NIGHT and night.no_sunrise == POLAR_NIGHT:
        return "no sunrise today (the sun stays below the horizon)"
    evening = {"": f"sunset {time_words(night.sunset_utc)}", POLAR_DAY: "no sunset (sun up all evening)",
               POLAR_NIGHT: "no sunset (the sun did not rise)"}[night.no_sunset]
    morning = {"": f"sunrise {time_words(night.sunrise_utc)}", POLAR_DAY: "no sunrise (sun up all morning)",
               POLAR_NIGHT: "no sunrise in the morning (the sun stays below the horizon)"}[night.no_sunrise]
    return f"{evening}, {morning}"
