"""Sunrise, sunset and solar elevation: the NOAA Solar Calculator equations (after Meeus).

Pure: no clock is read; every instant is a timezone-aware ``datetime`` passed in. Longitude is
east-positive. Sunrise and sunset are when the Sun's centre is 0.833 degrees below a flat
sea-level horizon (34' of standard refraction plus 16' of semidiameter).
"""

from __future__ import annotations

import math
from datetime import UTC, date, datetime, time, timedelta, tzinfo
from zoneinfo import ZoneInfo

SUNRISE_SUNSET_ZENITH_DEG = 90.833  # [deg] NOAA Solar Calculator / Meeus (1998) ch. 15
JULIAN_DAY_UNIX_EPOCH = 2440587.5  # [d] Julian day of 1970-01-01T00:00Z
JULIAN_DAY_J2000 = 2451545.0  # [d] Julian day of J2000.0
DAYS_PER_JULIAN_CENTURY = 36525.0  # [d]
SECONDS_PER_DAY = 86400.0  # [s]
MINUTES_PER_DEGREE = 4.0  # [min deg-1] the Earth turns 360 degrees in 1440 minutes
_EVENT_ITERATIONS = 3  # NOAA suggests re-evaluating at the event time once or twice


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


def _julian_century(when_utc: datetime) -> float:
    julian_day = JULIAN_DAY_UNIX_EPOCH + when_utc.timestamp() / SECONDS_PER_DAY
    return (julian_day - JULIAN_DAY_J2000) / DAYS_PER_JULIAN_CENTURY


def _declination_and_equation_of_time(when_utc: datetime) -> tuple[float, float]:
    """Solar declination [deg] and equation of time [min], NOAA / Meeus (1998) ch. 25 and 28."""
    jc = _julian_century(when_utc)
    mean_longitude = (280.46646 + jc * (36000.76983 + 0.0003032 * jc)) % 360.0
    mean_anomaly = 357.52911 + jc * (35999.05029 - 0.0001537 * jc)
    eccentricity = 0.016708634 - jc * (0.000042037 + 0.0000001267 * jc)
    m = math.radians(mean_anomaly)
    centre = (
        math.sin(m) * (1.914602 - jc * (0.004817 + 0.000014 * jc))
        + math.sin(2.0 * m) * (0.019993 - 0.000101 * jc)
        + math.sin(3.0 * m) * 0.000289
    )
    omega = math.radians(125.04 - 1934.136 * jc)
    apparent_longitude = mean_longitude + centre - 0.00569 - 0.00478 * math.sin(omega)
    mean_obliquity = (
        23.0 + (26.0 + (21.448 - jc * (46.815 + jc * (0.00059 - 0.001813 * jc))) / 60.0) / 60.0
    )
    obliquity = math.radians(mean_obliquity + 0.00256 * math.cos(omega))
    declination = math.asin(math.sin(obliquity) * math.sin(math.radians(apparent_longitude)))
    y = math.tan(obliquity / 2.0) ** 2
    l0 = math.radians(mean_longitude)
    equation_of_time_min = MINUTES_PER_DEGREE * math.degrees(
        y * math.sin(2.0 * l0)
        - 2.0 * eccentricity * math.sin(m)
        + 4.0 * eccentricity * y * math.sin(m) * math.cos(2.0 * l0)
        - 0.5 * y * y * math.sin(4.0 * l0)
        - 1.25 * eccentricity * eccentricity * math.sin(2.0 * m)
    )
    return math.degrees(declination), equation_of_time_min


def _hour_angle_deg(longitude_deg: float, when_utc: datetime, equation_of_time_min: float) -> float:
    """Hour angle [deg], wrapped to -180..180 (negative in the morning)."""
    midnight = when_utc.replace(hour=0, minute=0, second=0, microsecond=0)
    utc_min = (when_utc - midnight).total_seconds() / 60.0
    true_solar_time_min = utc_min + equation_of_time_min + MINUTES_PER_DEGREE * longitude_deg
    return (true_solar_time_min / MINUTES_PER_DEGREE) % 360.0 - 180.0


def _sunrise_hour_angle_deg(latitude_deg: float, declination_deg: float) -> float:
    phi = math.radians(latitude_deg)
    delta = math.radians(declination_deg)
    cos_h0 = math.cos(math.radians(SUNRISE_SUNSET_ZENITH_DEG)) / (
        math.cos(phi) * math.cos(delta)
    ) - math.tan(phi) * math.tan(delta)
    if cos_h0 > 1.0:
        raise ValueError(
            f"no sunrise or sunset at latitude {latitude_deg:.4f}: polar night "
            f"(the Sun stays below the horizon, declination {declination_deg:.2f} deg)"
        )
    if cos_h0 < -1.0:
        raise ValueError(
            f"no sunrise or sunset at latitude {latitude_deg:.4f}: polar day "
            f"(the Sun stays above the horizon, declination {declination_deg:.2f} deg)"
        )
    return math.degrees(math.acos(cos_h0))


def _event_utc(latitude_deg, longitude_deg, local_date, zone, sign) -> datetime:
    """Instant where the hour angle is sign * H0, near the solar noon of local_date."""
    # Start from local noon so that a western site gets this local day's events, not the
    # ones of the UTC calendar date (Davis CA sets after 00:00 UTC).
    when = datetime.combine(local_date, time(12, 0), tzinfo=zone).astimezone(UTC)
    # Solar noon: the hour angle is zero.
    for _ in range(_EVENT_ITERATIONS):
        _, eot = _declination_and_equation_of_time(when)
        when -= timedelta(minutes=MINUTES_PER_DEGREE * _hour_angle_deg(longitude_deg, when, eot))
    noon = when
    declination, eot_noon = _declination_and_equation_of_time(noon)
    when = noon + timedelta(
        minutes=sign * MINUTES_PER_DEGREE * _sunrise_hour_angle_deg(latitude_deg, declination)
    )
    # Re-evaluate declination and equation of time at the event itself. The hour angle is
    # counted from this solar noon, unwrapped, so it cannot jump by 360 deg.
    for _ in range(_EVENT_ITERATIONS):
        declination, eot = _declination_and_equation_of_time(when)
        target = sign * _sunrise_hour_angle_deg(latitude_deg, declination)
        minutes_from_noon = (when - noon).total_seconds() / 60.0
        hour_angle = (minutes_from_noon + eot - eot_noon) / MINUTES_PER_DEGREE
        when -= timedelta(minutes=MINUTES_PER_DEGREE * (hour_angle - target))
    return when


def sunrise_sunset_utc(
    latitude_deg: float, longitude_deg: float, local_date: date, tz: tzinfo | str
) -> tuple[datetime, datetime]:
    """Sunrise and sunset of a local calendar date, as UTC instants (NOAA / Meeus).

    Parameters
    ----------
    latitude_deg : float
        Latitude [deg], north positive.
    longitude_deg : float
        Longitude [deg], east positive.
    local_date : datetime.date
        Calendar date in the site's time zone.
    tz : zoneinfo.ZoneInfo or str
        The site's IANA time zone, e.g. ``"America/Los_Angeles"``.

    Returns
    -------
    (datetime, datetime)
        Sunrise and sunset [UTC, timezone-aware]: the events either side of the solar noon of
        ``local_date``. The sunset of a western site is often on the next UTC date.

    Raises
    ------
    ValueError
        For polar day or polar night (the Sun does not cross -0.833 deg that day), or a
        latitude or longitude out of range.

    Notes
    -----
    Event when the Sun's centre is at altitude -0.833 deg (zenith 90.833 deg):
    cos H0 = cos(90.833) / (cos(lat) cos(dec)) - tan(lat) tan(dec); sunrise and sunset are
    solar noon -+ 4 H0 minutes, with solar noon = 720 - 4 lon - EoT minutes UTC. Declination
    and equation of time are re-evaluated at the event time (three passes). NOAA quotes about
    1 min accuracy within 72 deg of the equator, worse towards the poles. Flat, sea-level
    horizon; valley walls delay the effective sunrise.

    References
    ----------
    Meeus, J. (1998), Astronomical Algorithms, 2nd ed., Willmann-Bell, ch. 15, 25 and 28.
    NOAA Global Monitoring Laboratory, Solar Calculator and its spreadsheet equations.
    """
    _check_site(latitude_deg, longitude_deg)
    zone = _zone(tz)
    sunrise = _event_utc(latitude_deg, longitude_deg, local_date, zone, -1)
    sunset = _event_utc(latitude_deg, longitude_deg, local_date, zone, +1)
    return sunrise, sunset


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
        The site's IANA time zone.

    Returns
    -------
    (datetime, datetime)
        Sunset of ``evening_local_date`` and sunrise of the next local date [UTC, aware].

    Raises
    ------
    ValueError
        For polar day or night on either date.

    Notes
    -----
    See :func:`sunrise_sunset_utc`. Across a DST change the night is an hour shorter or
    longer on the local clock, never in UTC.

    References
    ----------
    Meeus, J. (1998), Astronomical Algorithms, 2nd ed., Willmann-Bell.
    NOAA Global Monitoring Laboratory, Solar Calculator.
    """
    _, sunset = sunrise_sunset_utc(latitude_deg, longitude_deg, evening_local_date, tz)
    next_sunrise, _ = sunrise_sunset_utc(
        latitude_deg, longitude_deg, evening_local_date + timedelta(days=1), tz
    )
    return sunset, next_sunrise


def solar_elevation_deg(latitude_deg: float, longitude_deg: float, when_utc: datetime) -> float:
    """Geometric solar elevation angle, NOAA / Meeus, without atmospheric refraction.

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
    NOAA Global Monitoring Laboratory, Solar Calculator.
    """
    _check_site(latitude_deg, longitude_deg)
    _check_aware(when_utc)
    when_utc = when_utc.astimezone(UTC)
    declination, eot = _declination_and_equation_of_time(when_utc)
    hour_angle = math.radians(_hour_angle_deg(longitude_deg, when_utc, eot))
    phi = math.radians(latitude_deg)
    delta = math.radians(declination)
    sin_elevation = math.sin(phi) * math.sin(delta) + math.cos(phi) * math.cos(delta) * math.cos(
        hour_angle
    )
    return math.degrees(math.asin(max(-1.0, min(1.0, sin_elevation))))
