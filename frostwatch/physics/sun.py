"""Sunrise, sunset and solar elevation of a site, computed by astral (NOAA Solar Calculator).

astral does the astronomy (the NOAA equations after Meeus); this module says what "the sunrise
and sunset of a local date" are at any site and in any time zone, and gives a clear result where
the Sun does not rise or set (polar day, polar night) instead of raising.

Pure: no clock is read; every instant is a timezone-aware ``datetime`` passed in. Longitude is
east-positive. Sunrise and sunset are when the Sun's centre is 0.833 degrees below a flat
sea-level horizon (34' of standard refraction plus 16' of semidiameter), geometric: the same
definition as the NOAA Solar Calculator. A season's dates at once, the same instants: physics/sun_season.py.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from datetime import UTC, date, datetime, time, timedelta, tzinfo
from zoneinfo import ZoneInfo

import astral
import astral.sun

SUNRISE_SUNSET_ELEVATION_DEG = -0.833  # [deg] NOAA Solar Calculator / Meeus (1998) ch. 15
_HALF_DAY = timedelta(hours=12)
_ONE_SECOND = timedelta(seconds=1)
POLAR_DAY = "polar day"  # the Sun stays above the horizon: no sunset (or no sunrise) that day
POLAR_NIGHT = "polar night"  # the Sun stays below the horizon: no sunrise and no sunset


@dataclass(frozen=True)
class SunDay:
    """The Sun's day at a site around the solar noon of one local date (UTC instants).

    ``sunrise_utc`` or ``sunset_utc`` is None when that event does not happen; ``polar`` then
    says why (:data:`POLAR_DAY` or :data:`POLAR_NIGHT`), else it is the empty string.
    """

    solar_noon_utc: datetime
    sunrise_utc: datetime | None
    sunset_utc: datetime | None
    polar: str


def _zone(tz: tzinfo | str) -> tzinfo:
    if isinstance(tz, str):
        return ZoneInfo(tz)
    return tz


def _check_site(latitude_deg: float, longitude_deg: float) -> None:
    if not (math.isfinite(latitude_deg) and -90.0 <= latitude_deg <= 90.0):
        raise ValueError(f"latitude_deg {latitude_deg!r} is out of range; expected -90 to 90")
    if not (math.isfinite(longitude_deg) and -180.0 <= longitude_deg <= 180.0):
        raise ValueError(
            f"longitude_deg {longitude_deg!r} is out of range; expected -180 to 180, east positive"
        )


def _check_aware(when_utc: datetime) -> None:
    if when_utc.tzinfo is None or when_utc.utcoffset() is None:
        raise ValueError(
            f"when_utc {when_utc.isoformat()} is naive; expected a timezone-aware datetime"
        )


def _solar_noon_near_utc(observer: astral.Observer, near_utc: datetime) -> datetime:
    """The solar noon closest to an instant (astral gives one per UTC date, in a row)."""
    day = near_utc.date()
    noons = [astral.sun.noon(observer, day + timedelta(days=k)) for k in (-1, 0, 1)]
    return min(noons, key=lambda noon: abs(noon - near_utc))


def _above_horizon_deg(observer: astral.Observer, when_utc: datetime) -> float:
    """How far the Sun's centre is above the sunrise-sunset altitude [deg] (negative: below)."""
    elevation_deg = astral.sun.elevation(observer, when_utc, with_refraction=False)
    return elevation_deg - SUNRISE_SUNSET_ELEVATION_DEG


def _crossing_utc(observer: astral.Observer, start_utc: datetime, end_utc: datetime) -> datetime:
    """The instant between two, on opposite sides of the horizon, where the Sun crosses it.

    Bisection to a second on astral's elevation (which reads whole seconds), then a straight
    line between the two seconds. From solar midnight to noon the elevation only rises, and
    from noon to midnight it only falls, so there is one crossing in each half day.
    """
    start_deg = _above_horizon_deg(observer, start_utc)
    end_deg = _above_horizon_deg(observer, end_utc)
    while end_utc - start_utc > _ONE_SECOND:
        middle_utc = start_utc + _ONE_SECOND * ((end_utc - start_utc) // (2 * _ONE_SECOND))
        middle_deg = _above_horizon_deg(observer, middle_utc)
        if (middle_deg < 0.0) == (start_deg < 0.0):
            start_utc, start_deg = middle_utc, middle_deg
        else:
            end_utc, end_deg = middle_utc, middle_deg
    fraction = start_deg / (start_deg - end_deg) if start_deg != end_deg else 0.5
    return start_utc + (end_utc - start_utc) * fraction


def _observer(latitude_deg: float, longitude_deg: float) -> astral.Observer:
    _check_site(latitude_deg, longitude_deg)
    return astral.Observer(latitude=latitude_deg, longitude=longitude_deg, elevation=0.0)


def sun_day_utc(
    latitude_deg: float, longitude_deg: float, local_date: date, tz: tzinfo | str
) -> SunDay:
    """Solar noon, sunrise and sunset of a local calendar date, with polar days named.

    Parameters
    ----------
    latitude_deg : float
        Latitude [deg], north positive.
    longitude_deg : float
        Longitude [deg], east positive.
    local_date : datetime.date
        Calendar date in the site's time zone.
    tz : zoneinfo.ZoneInfo or str
        The site's time zone, e.g. ``"America/Los_Angeles"``; any offset, including zones far
        from the site's solar time.

    Returns
    -------
    SunDay
        The solar noon closest to 12:00 local time on ``local_date``, and the sunrise and sunset
        either side of it [UTC, timezone-aware]. Where the Sun does not rise or set, the event is
        None and ``polar`` says why. The sunset of a western site is often on the next UTC date.

    Raises
    ------
    ValueError
        For a latitude or longitude out of range (never for polar day or night).

    Notes
    -----
    Sunrise and sunset are when the Sun's centre is at geometric altitude -0.833 deg, found to
    the second in the half day before and after solar noon on astral's solar elevation (NOAA
    declination and equation of time at the instant itself), not from astral's per-UTC-date
    sunrise, which skips an event falling near 00:00 UTC (South Asia in spring). No crossing
    in a half day means polar day or night. NOAA quotes about 1 min accuracy within 72 deg of
    the equator, worse towards the poles. Flat, sea-level horizon; valley walls delay the
    effective sunrise.

    References
    ----------
    Meeus, J. (1998), Astronomical Algorithms, 2nd ed., Willmann-Bell, ch. 15, 25 and 28.
    NOAA Global Monitoring Laboratory, Solar Calculator and its spreadsheet equations, as
    implemented by astral 3 (``astral.sun.noon`` and ``astral.sun.elevation``, refraction off).
    """
    observer = _observer(latitude_deg, longitude_deg)
    local_noon_utc = datetime.combine(local_date, time(12, 0), tzinfo=_zone(tz)).astimezone(UTC)
    noon = _solar_noon_near_utc(observer, local_noon_utc)
    midnight_before, midnight_after = noon - _HALF_DAY, noon + _HALF_DAY
    if _above_horizon_deg(observer, noon) < 0.0:
        return SunDay(noon, None, None, POLAR_NIGHT)
    sunrise = sunset = None
    if _above_horizon_deg(observer, midnight_before) < 0.0:
        sunrise = _crossing_utc(observer, midnight_before, noon)
    if _above_horizon_deg(observer, midnight_after) < 0.0:
        sunset = _crossing_utc(observer, noon, midnight_after)
    polar = POLAR_DAY if sunrise is None or sunset is None else ""
    return SunDay(noon, sunrise, sunset, polar)


def _event_or_stand_in_utc(event_utc: datetime | None, day: SunDay, solar_midnight_utc: datetime) -> datetime:
    """The sunset or sunrise; where there is none, the Sun's lowest in a polar day (solar
    midnight), its highest in a polar night (that day's solar noon)."""
    if event_utc is not None:
        return event_utc
    return solar_midnight_utc if day.polar == POLAR_DAY else day.solar_noon_utc


@dataclass(frozen=True)
class SunNight:
    """A night's sunset and next sunrise (UTC), or their stand-ins, and whether each happens.

    ``no_sunset`` is the empty string when the Sun sets on the evening, else why it does not
    (:data:`POLAR_DAY`: it stays up; :data:`POLAR_NIGHT`: it did not rise); ``no_sunrise`` the
    same for the next morning.
    """

    sunset_utc: datetime
    sunrise_utc: datetime
    no_sunset: str
    no_sunrise: str


def sun_night_utc(
    latitude_deg: float,
    longitude_deg: float,
    evening_local_date: date,
    tz: tzinfo | str,
) -> SunNight:
    """The night window of :func:`night_window_utc`, saying where the Sun does not set or rise.

    Parameters and references as :func:`night_window_utc`; the instants are the same.
    """
    evening = sun_day_utc(latitude_deg, longitude_deg, evening_local_date, tz)
    morning = sun_day_utc(latitude_deg, longitude_deg, evening_local_date + timedelta(days=1), tz)
    return _sun_night(evening, morning)


def _sun_night(evening: SunDay, morning: SunDay) -> SunNight:
    """The night between two Sun days: the evening's sunset, the morning's sunrise or their stand-ins."""
    # halfway between two solar noons: the equation of time moves under 30 s a day
    solar_midnight_utc = evening.solar_noon_utc + (morning.solar_noon_utc - evening.solar_noon_utc) / 2
    sunset = _event_or_stand_in_utc(evening.sunset_utc, evening, solar_midnight_utc)
    sunrise = _event_or_stand_in_utc(morning.sunrise_utc, morning, solar_midnight_utc)
    return SunNight(sunset, max(sunset, sunrise),
                    "" if evening.sunset_utc is not None else evening.polar,
                    "" if morning.sunrise_utc is not None else morning.polar)


def night_window_utc(
    latitude_deg: float,
    longitude_deg: float,
    evening_local_date: date,
    tz: tzinfo | str,
) -> tuple[datetime, datetime]:
    """Sunset of an evening and sunrise of the next morning, as UTC instants.

    Parameters
    ----------
    latitude_deg : float
        Latitude [deg], north positive.
    longitude_deg : float
        Longitude [deg], east positive.
    evening_local_date : datetime.date
        Local calendar date of the evening the night starts.
    tz : zoneinfo.ZoneInfo or str
        The site's time zone.

    Returns
    -------
    (datetime, datetime)
        Sunset of ``evening_local_date`` and sunrise of the next local date [UTC, aware],
        sunset never after sunrise. Where the Sun does not set or rise, a clear stand-in:
        in a polar day (midnight sun) both are the solar midnight, a night of zero length at
        the Sun's lowest; in a polar night the night runs from the evening's solar noon to the
        next solar noon (24 h). Both are the limits the ordinary nights approach either side of
        the polar season.

    Raises
    ------
    ValueError
        For a latitude or longitude out of range.

    Notes
    -----
    See :func:`sun_day_utc`. Across a DST change the night is an hour shorter or longer on the
    local clock, never in UTC.

    References
    ----------
    Meeus, J. (1998), Astronomical Algorithms, 2nd ed., Willmann-Bell.
    NOAA Global Monitoring Laboratory, Solar Calculator.
    """
    night = sun_night_utc(latitude_deg, longitude_deg, evening_local_date, tz)
    return night.sunset_utc, night.sunrise_utc


def solar_elevation_deg(latitude_deg: float, longitude_deg: float, when_utc: datetime) -> float:
    """Geometric solar elevation angle (NOAA equations, by astral), without refraction.

    Parameters
    ----------
    latitude_deg : float
        Latitude [deg], north positive.
    longitude_deg : float
        Longitude [deg], east positive.
    when_utc : datetime
        Instant [timezone-aware; any zone, converted to UTC].

    Returns
    -------
    float
        Elevation of the Sun's centre above the horizon [deg], no refraction correction
        (at the horizon refraction adds about 0.57 deg; under 0.1 deg above 10 deg).

    Raises
    ------
    ValueError
        For a naive datetime or a latitude or longitude out of range.

    Notes
    -----
    sin(elev) = sin(lat) sin(dec) + cos(lat) cos(dec) cos(H), with the hour angle H from true
    solar time = UTC minutes + EoT + 4 lon.

    References
    ----------
    Meeus, J. (1998), Astronomical Algorithms, 2nd ed., Willmann-Bell, ch. 13 and 25.
    NOAA Global Monitoring Laboratory, Solar Calculator (``astral.sun.elevation``).
    """
    observer = _observer(latitude_deg, longitude_deg)
    _check_aware(when_utc)
    return astral.sun.elevation(observer, when_utc.astimezone(UTC), with_refraction=False)
