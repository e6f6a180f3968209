"""Sunrise, sunset and solar elevation of a site, computed by astral (NOAA Solar Calculator).

astral does the astronomy (the NOAA equations after Meeus); this module says what "the sunrise
and sunset of a local date" are at any site and in any time zone, and gives a clear result where
the Sun does not rise or set (polar day, polar night) instead of raising.

Pure: no clock is read; every instant is a timezone-aware ``datetime`` passed in. Longitude is
east-positive. Sunrise and sunset are when the Sun's centre is 0.833 degrees below a flat
sea-level horizon (34' of standard refraction plus 16' of semidiameter), geometric: the same
definition as the NOAA Solar Calculator.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from datetime import UTC, date, datetime, time, timedelta, tzinfo
from zoneinfo import ZoneInfo

import astral
import astral.sun
import numpy as np

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


# ---- many dates at once ------------------------------------------------------------------------
# A season's backtest or replay asks for hundreds of nights. The bisection below runs over all
# dates at once in numpy on the same equations as astral's `elevation` (NOAA, Meeus), evaluated at
# the same whole seconds as `_crossing_utc`; the last step (the two seconds either side of the
# crossing, and the straight line between them) is astral's own, so each sunrise and sunset is the
# one `sun_day_utc` gives, to the microsecond (tests/physics/test_sun.py checks years of dates).


def _elevation_above_deg_np(latitude_deg: float, longitude_deg: float, t_s: np.ndarray) -> np.ndarray:
    """`_above_horizon_deg` at whole UTC seconds since 1970, in numpy (astral 3's arithmetic,
    step for step; numpy's sin and cos may differ from the C library's in the last bit)."""
    t_s = np.asarray(t_s, dtype=np.int64)
    days, sec = np.divmod(t_s, 86400)
    d = days.astype("datetime64[D]")
    month_start = d.astype("datetime64[M]")
    year = d.astype("datetime64[Y]").astype(np.int64) + 1970
    month = month_start.astype(np.int64) % 12 + 1
    day = (d - month_start).astype(np.int64) + 1
    hour, rest = np.divmod(sec, 3600)
    minute, second = np.divmod(rest, 60)
    # astral.julian.julianday (Gregorian)
    jan_feb = month <= 2
    y = np.where(jan_feb, year - 1, year)
    m = np.where(jan_feb, month + 12, month)
    a = np.trunc(y / 100).astype(np.int64)
    b = 2 - a + np.trunc(a / 4).astype(np.int64)
    whole = np.trunc(365.25 * (y + 4716)).astype(np.int64) + np.trunc(30.6001 * (m + 1)).astype(np.int64) + day
    jd = whole + sec / 86400 + b - 1524.5
    t = (jd - 2451545.0) / 36525.0
    # astral.sun: declination and equation of time
    l0 = (280.46646 + t * (36000.76983 + 0.0003032 * t)) % 360.0
    mean_anom = 357.52911 + t * (35999.05029 - 0.0001537 * t)
    mrad = np.radians(mean_anom)
    c = (np.sin(mrad) * (1.914602 - t * (0.004817 + 0.000014 * t)) + np.sin(mrad + mrad) * (0.019993 - 0.000101 * t)
         + np.sin(mrad + mrad + mrad) * 0.000289)
    omega = 125.04 - 1934.136 * t
    apparent_long = l0 + c - 0.00569 - 0.00478 * np.sin(np.radians(omega))
    seconds = 21.448 - t * (46.815 + t * (0.00059 - t * 0.001813))
    obliquity = 23.0 + (26.0 + (seconds / 60.0)) / 60.0 + 0.00256 * np.cos(np.radians(omega))
    declination = np.degrees(np.arcsin(np.sin(np.radians(obliquity)) * np.sin(np.radians(apparent_long))))
    ecc = 0.016708634 - t * (0.000042037 + 0.0000001267 * t)
    vy = np.tan(np.radians(obliquity) / 2.0)
    vy = vy * vy
    sinm = np.sin(np.radians(mean_anom))
    etime = (vy * np.sin(2.0 * np.radians(l0)) - 2.0 * ecc * sinm + 4.0 * ecc * vy * sinm * np.cos(2.0 * np.radians(l0))
             - 0.5 * vy * vy * np.sin(4.0 * np.radians(l0)) - 1.25 * ecc * ecc * np.sin(2.0 * np.radians(mean_anom)))
    eqtime = np.degrees(etime) * 4.0
    # astral.sun.zenith_and_azimuth for a UTC instant
    lat = min(89.8, max(-89.8, latitude_deg))
    true_solar = hour * 60.0 + minute + second / 60.0 + (eqtime + 4.0 * longitude_deg + -0.0)
    true_solar = np.where(true_solar > 1440, true_solar - 1440, true_solar)
    hour_angle = true_solar / 4.0 - 180.0
    hour_angle = np.where(hour_angle < -180, hour_angle + 360.0, hour_angle)
    cl, sl = math.cos(math.radians(lat)), math.sin(math.radians(lat))
    dec = np.radians(declination)
    csz = np.clip(cl * np.cos(dec) * np.cos(np.radians(hour_angle)) + sl * np.sin(dec), -1.0, 1.0)
    return 90.0 - np.degrees(np.arccos(csz)) - SUNRISE_SUNSET_ELEVATION_DEG


_EPOCH_ORDINAL = date(1970, 1, 1).toordinal()


def _above_horizon_deg_at_s(latitude_deg: float, longitude_deg: float, t_s: int) -> float:
    """`_above_horizon_deg` at a whole UTC second since 1970: astral 3's `elevation` (refraction
    off) written out with the same math functions in the same order, so the same float, without
    its datetime work (tests/physics/test_sun.py compares the two)."""
    days, sec = divmod(t_s, 86400)
    d = date.fromordinal(_EPOCH_ORDINAL + days)
    hour, rest = divmod(sec, 3600)
    minute, second = divmod(rest, 60)
    year, month = d.year, d.month
    if month <= 2:
        year -= 1
        month += 12
    a = int(year / 100)
    b = 2 - a + int(a / 4)
    jd = int(365.25 * (year + 4716)) + int(30.6001 * (month + 1)) + d.day + sec / 86400 + b - 1524.5
    t = (jd - 2451545.0) / 36525.0
    l0 = (280.46646 + t * (36000.76983 + 0.0003032 * t)) % 360.0
    m = 357.52911 + t * (35999.05029 - 0.0001537 * t)
    mrad = math.radians(m)
    c = (math.sin(mrad) * (1.914602 - t * (0.004817 + 0.000014 * t)) + math.sin(mrad + mrad) * (0.019993 - 0.000101 * t)
         + math.sin(mrad + mrad + mrad) * 0.000289)
    omega = 125.04 - 1934.136 * t
    apparent_long = l0 + c - 0.00569 - 0.00478 * math.sin(math.radians(omega))
    seconds = 21.448 - t * (46.815 + t * (0.00059 - t * 0.001813))
    obliquity = 23.0 + (26.0 + (seconds / 60.0)) / 60.0 + 0.00256 * math.cos(math.radians(omega))
    declination = math.degrees(math.asin(math.sin(math.radians(obliquity)) * math.sin(math.radians(apparent_long))))
    ecc = 0.016708634 - t * (0.000042037 + 0.0000001267 * t)
    vy = math.tan(math.radians(obliquity) / 2.0)
    vy = vy * vy
    sinm = math.sin(math.radians(m))
    etime = (vy * math.sin(2.0 * math.radians(l0)) - 2.0 * ecc * sinm
             + 4.0 * ecc * vy * sinm * math.cos(2.0 * math.radians(l0))
             - 0.5 * vy * vy * math.sin(4.0 * math.radians(l0)) - 1.25 * ecc * ecc * math.sin(2.0 * math.radians(m)))
    eqtime = math.degrees(etime) * 4.0
    lat = min(89.8, max(-89.8, latitude_deg))
    true_solar = hour * 60.0 + minute + second / 60.0 + (eqtime + 4.0 * longitude_deg + -0.0)
    while true_solar > 1440:
        true_solar = true_solar - 1440
    hour_angle = true_solar / 4.0 - 180.0
    if hour_angle < -180:
        hour_angle = hour_angle + 360.0
    ch = math.cos(math.radians(hour_angle))
    cl, sl = math.cos(math.radians(lat)), math.sin(math.radians(lat))
    sd, cd = math.sin(math.radians(declination)), math.cos(math.radians(declination))
    csz = min(1.0, max(-1.0, cl * cd * ch + sl * sd))
    return 90.0 - math.degrees(math.acos(csz)) - SUNRISE_SUNSET_ELEVATION_DEG


_SURE_DEG = 1e-6  # numpy's sign is taken as astral's this far from the horizon


def _signs_below(observer: astral.Observer, t_s: np.ndarray) -> np.ndarray:
    """Whether the Sun is below the sunrise-sunset altitude at each whole second (astral's answer
    where numpy's is too close to the horizon to be sure of)."""
    deg = _elevation_above_deg_np(observer.latitude, observer.longitude, t_s)
    below = deg < 0.0
    for i in np.nonzero(np.abs(deg) < _SURE_DEG)[0]:
        below[i] = _above_horizon_deg_at_s(observer.latitude, observer.longitude, int(t_s[i])) < 0.0
    return below


def _crossings_utc(observer: astral.Observer, start_s: np.ndarray, end_s: np.ndarray) -> list[datetime]:
    """`_crossing_utc` for many half days at once (whole seconds), the same instants."""
    start, end = np.array(start_s, dtype=np.int64), np.array(end_s, dtype=np.int64)
    start_below = _signs_below(observer, start)
    while True:
        wide = np.nonzero(end - start > 1)[0]
        if not len(wide):
            break
        mid = start[wide] + (end[wide] - start[wide]) // 2
        same = _signs_below(observer, mid) == start_below[wide]
        start[wide[same]] = mid[same]
        end[wide[~same]] = mid[~same]
    out = []
    for s0, s1, lo, hi in zip(start.tolist(), end.tolist(), np.asarray(start_s).tolist(), np.asarray(end_s).tolist(),
                              strict=True):
        a_deg = _above_horizon_deg_at_s(observer.latitude, observer.longitude, s0)
        b_deg = _above_horizon_deg_at_s(observer.latitude, observer.longitude, s1)
        if (a_deg < 0.0) == (b_deg < 0.0):  # numpy and astral disagreed on a side: astral alone
            out.append(_crossing_utc(observer, datetime.fromtimestamp(lo, UTC), datetime.fromtimestamp(hi, UTC)))
            continue
        fraction = a_deg / (a_deg - b_deg) if a_deg != b_deg else 0.5
        a = datetime.fromtimestamp(s0, UTC)
        out.append(a + (datetime.fromtimestamp(s1, UTC) - a) * fraction)
    return out


def sun_days_utc(latitude_deg: float, longitude_deg: float, local_dates: list[date], tz: tzinfo | str) -> list[SunDay]:
    """:func:`sun_day_utc` of many local dates at once (a season's), the same results.

    References
    ----------
    As :func:`sun_day_utc`.
    """
    observer = _observer(latitude_deg, longitude_deg)
    zone = _zone(tz)
    noon_of: dict[date, datetime] = {}

    def noon_on(d: date) -> datetime:
        if d not in noon_of:
            noon_of[d] = astral.sun.noon(observer, d)
        return noon_of[d]

    noons = []
    for d in local_dates:
        local_noon = datetime.combine(d, time(12, 0), tzinfo=zone).astimezone(UTC)
        day = local_noon.date()
        noons.append(min((noon_on(day + timedelta(days=k)) for k in (-1, 0, 1)), key=lambda n: abs(n - local_noon)))
    noon_s = np.array([int(n.timestamp()) for n in noons], dtype=np.int64)
    half = 12 * 3600
    day_below = _signs_below(observer, noon_s)
    rise_below = _signs_below(observer, noon_s - half)
    set_below = _signs_below(observer, noon_s + half)
    rises = np.nonzero(~day_below & rise_below)[0]
    sets = np.nonzero(~day_below & set_below)[0]
    sunrise = dict(zip(rises.tolist(), _crossings_utc(observer, noon_s[rises] - half, noon_s[rises]), strict=True))
    sunset = dict(zip(sets.tolist(), _crossings_utc(observer, noon_s[sets], noon_s[sets] + half), strict=True))
    out = []
    for i, noon in enumerate(noons):
        if day_below[i]:
            out.append(SunDay(noon, None, None, POLAR_NIGHT))
            continue
        rise, set_ = sunrise.get(i), sunset.get(i)
        out.append(SunDay(noon, rise, set_, POLAR_DAY if rise is None or set_ is None else ""))
    return out


def sun_nights_utc(
    latitude_deg: float, longitude_deg: float, evening_local_dates: list[date], tz: tzinfo | str
) -> list[SunNight]:
    """:func:`sun_night_utc` of many evenings at once, the same results (each date's Sun worked
    out once, though it ends one night and begins the next).

    References
    ----------
    As :func:`night_window_utc`.
    """
    dates = sorted({d for e in evening_local_dates for d in (e, e + timedelta(days=1))})
    days = dict(zip(dates, sun_days_utc(latitude_deg, longitude_deg, dates, tz), strict=True))
    return [_sun_night(days[e], days[e + timedelta(days=1)]) for e in evening_local_dates]


def night_windows_utc(
    latitude_deg: float, longitude_deg: float, evening_local_dates: list[date], tz: tzinfo | str
) -> list[tuple[datetime, datetime]]:
    """:func:`night_window_utc` of many evenings at once, the same results.

    References
    ----------
    As :func:`night_window_utc`.
    """
    nights = sun_nights_utc(latitude_deg, longitude_deg, evening_local_dates, tz)
    return [(n.sunset_utc, n.sunrise_utc) for n in nights]
