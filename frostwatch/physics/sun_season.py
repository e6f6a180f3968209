"""A season's sunrises and sunsets in one pass: :func:`sun_day_utc` and :func:`sun_night_utc`
(physics/sun.py) of hundreds of dates at once, the same instants to the microsecond.

A season's backtest or replay asks for hundreds of nights. The bisection here runs over all dates
at once in numpy on the same equations as astral's ``elevation`` (NOAA, Meeus), evaluated at the
same whole seconds as ``sun._crossing_utc``; the last step (the two seconds either side of the
crossing, and the straight line between them) is astral's own arithmetic, so each sunrise and
sunset is the one ``sun_day_utc`` gives (tests/physics/test_sun.py checks years of dates).

Why the elevation is written twice, over arrays and in scalar math: numpy's float64 sin, cos,
tan, arcsin and arccos are its own (SIMD on x86 with AVX-512, other code on the Pi's ARM), not
the C library's that astral calls through ``math``, and they differ in the last bits. Measured
with numpy 2.4.6 on x86-64 with AVX-512: at 31,200 random whole seconds (1922-2096, latitudes
-89.95 to 89.9, longitudes -179.9 to 179.9) 2,806 elevations differ from astral's float, by up
to 7.1e-14 deg. The sunrises and sunsets of 13,140 site-days (12 sites incl. polar ones, 1961
and 2026-2027) came out the same with numpy's last second, but that is rounding going our way on
this machine, not a guarantee; with the scalar copy the last second and every sign close to the
horizon are astral's float on any machine, so the season path gives ``sun_day_utc``'s instants
by construction. Pure: no clock is read.
"""

from __future__ import annotations

import math
from datetime import UTC, date, datetime, time, timedelta, tzinfo

import astral
import astral.sun
import numpy as np

from frostwatch.physics.sun import (
    POLAR_DAY,
    POLAR_NIGHT,
    SUNRISE_SUNSET_ELEVATION_DEG,
    SunDay,
    SunNight,
    _crossing_utc,
    _observer,
    _sun_night,
    _zone,
)


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
