"""Sunrise, sunset and solar elevation against the NOAA reference sheet and pvlib (NREL SPA).

frostwatch.physics.sun calls astral; every check here is outside astral: the reference sheet's
NOAA values (computed to the second, cross-checked with PyEphem) and pvlib's NREL SPA solar
position, an independent algorithm (Reda & Andreas 2004).
"""

from datetime import UTC, date, datetime, timedelta, timezone
from zoneinfo import ZoneInfo

import pandas as pd
import pvlib
import pytest
from scipy.optimize import brentq

from frostwatch.physics.sun import (
    POLAR_DAY,
    POLAR_NIGHT,
    night_window_utc,
    solar_elevation_deg,
    sun_day_utc,
)


def sunrise_sunset_utc(latitude_deg, longitude_deg, local_date, tz):
    day = sun_day_utc(latitude_deg, longitude_deg, local_date, tz)
    assert day.polar == "" and day.sunrise_utc is not None and day.sunset_utc is not None
    return day.sunrise_utc, day.sunset_utc

# Tolerance against pvlib's SPA: 60 s. NOAA quotes about 1 min accuracy for its method within
# 72 deg of the equator; SPA is good to about 1 s.
LIBRARY_TOLERANCE_S = 60.0

DAVIS = (38.5449, -121.7405, "America/Los_Angeles")
GREENWICH = (51.4769, 0.0, "Europe/London")
BOLZANO = (46.4983, 11.3548, "Europe/Rome")
WELLINGTON = (-41.2865, 174.7762, "Pacific/Auckland")

CASES = [
    pytest.param(*GREENWICH, date(2025, 6, 21), id="greenwich-solstice"),
    pytest.param(*DAVIS, date(2025, 3, 20), id="davis-equinox-sunset-next-utc-day"),
    pytest.param(*BOLZANO, date(2025, 4, 10), id="bolzano-april"),
    pytest.param(*DAVIS, date(2027, 3, 14), id="davis-dst-spring-forward"),
    pytest.param(*DAVIS, date(2027, 11, 7), id="davis-dst-fall-back"),
    pytest.param(*BOLZANO, date(2027, 3, 28), id="bolzano-dst-spring-forward"),
    pytest.param(*WELLINGTON, date(2025, 6, 21), id="wellington-southern-winter"),
]


def _spa_geometric_elevation_deg(latitude_deg, longitude_deg, when_utc):
    """pvlib's NREL SPA elevation of the Sun's centre, without refraction."""
    times = pd.DatetimeIndex([pd.Timestamp(when_utc)])
    position = pvlib.solarposition.get_solarposition(
        times, latitude_deg, longitude_deg, method="nrel_numpy"
    )
    return float(position["elevation"].iloc[0])


def _spa_crossing_utc(latitude_deg, longitude_deg, near_utc):
    """The instant within 30 min of near_utc when SPA puts the Sun's centre at -0.833 deg."""

    def above_horizon_deg(offset_s):
        when = near_utc + timedelta(seconds=offset_s)
        return _spa_geometric_elevation_deg(latitude_deg, longitude_deg, when) + 0.833

    return near_utc + timedelta(seconds=brentq(above_horizon_deg, -1800.0, 1800.0, xtol=0.1))


# --- reference sheet -------------------------------------------------------------------------


@pytest.mark.parametrize(
    ("site", "local_date", "sunrise", "sunset"),
    [
        (GREENWICH, date(2025, 6, 21), "2025-06-21T03:42:47", "2025-06-21T20:20:56"),
        (DAVIS, date(2025, 3, 20), "2025-03-20T14:09:46", "2025-03-21T02:19:19"),
        (BOLZANO, date(2025, 4, 10), "2025-04-10T04:36:43", "2025-04-10T17:55:48"),
    ],
    ids=["greenwich", "davis", "bolzano"],
)
def test_sunrise_sunset_utc_vs_reference_sheet(site, local_date, sunrise, sunset):
    # [computed] reference sheet, frost-physics.md section 7 (NOAA method, iterated, printed to
    # the second). Tolerance 2 s: rounding of the sheet plus the iteration count.
    latitude_deg, longitude_deg, tz = site
    got_rise, got_set = sunrise_sunset_utc(latitude_deg, longitude_deg, local_date, tz)
    want_rise = datetime.fromisoformat(sunrise).replace(tzinfo=UTC)
    want_set = datetime.fromisoformat(sunset).replace(tzinfo=UTC)
    assert abs((got_rise - want_rise).total_seconds()) <= 2.0
    assert abs((got_set - want_set).total_seconds()) <= 2.0


def test_sunrise_sunset_utc_returns_aware_utc_for_the_local_date():
    sunrise, sunset = sunrise_sunset_utc(*DAVIS[:2], date(2025, 3, 20), ZoneInfo(DAVIS[2]))
    assert sunrise.utcoffset() == timedelta(0)
    assert sunset.utcoffset() == timedelta(0)
    # Davis sets after 00:00 UTC: the UTC date moves on, the local date does not.
    assert sunset.date() == date(2025, 3, 21)
    assert sunset.astimezone(ZoneInfo(DAVIS[2])).date() == date(2025, 3, 20)
    assert sunrise.astimezone(ZoneInfo(DAVIS[2])).date() == date(2025, 3, 20)


# --- pvlib (NREL SPA) ------------------------------------------------------------------------


@pytest.mark.parametrize(("latitude_deg", "longitude_deg", "tz", "local_date"), CASES)
def test_sunrise_sunset_utc_vs_pvlib_spa_elevation(latitude_deg, longitude_deg, tz, local_date):
    # pvlib 0.16 NREL SPA (Reda & Andreas 2004) solar position, geometric elevation, solved for
    # the -0.833 deg crossing near our event. Tolerance 60 s (NOAA's stated accuracy).
    sunrise, sunset = sunrise_sunset_utc(latitude_deg, longitude_deg, local_date, tz)
    for ours in (sunrise, sunset):
        spa = _spa_crossing_utc(latitude_deg, longitude_deg, ours)
        assert abs((ours - spa).total_seconds()) <= LIBRARY_TOLERANCE_S


@pytest.mark.parametrize(
    ("latitude_deg", "longitude_deg", "tz", "local_date"),
    [
        pytest.param(*GREENWICH, date(2025, 6, 21), id="greenwich"),
        pytest.param(*BOLZANO, date(2025, 4, 10), id="bolzano"),
        pytest.param(*BOLZANO, date(2027, 10, 31), id="bolzano-dst-fall-back"),
    ],
)
def test_sunrise_sunset_utc_vs_pvlib_sun_rise_set_transit_spa(
    latitude_deg, longitude_deg, tz, local_date
):
    # pvlib.solarposition.sun_rise_set_transit_spa (ephem is not installed). Only for sites
    # whose events fall on the local date in UTC too: SPA wraps the event's fraction of the UT
    # day, so for Davis it returns the previous evening's sunset dated the next UTC day (seen
    # as a 58-62 s "error", one day's drift of sunset). Tolerance 60 s.
    times = pd.DatetimeIndex([pd.Timestamp(local_date).tz_localize(tz)])
    spa = pvlib.solarposition.sun_rise_set_transit_spa(times, latitude_deg, longitude_deg)
    sunrise, sunset = sunrise_sunset_utc(latitude_deg, longitude_deg, local_date, tz)
    rise_diff_s = (pd.Timestamp(sunrise) - spa["sunrise"].iloc[0]).total_seconds()
    set_diff_s = (pd.Timestamp(sunset) - spa["sunset"].iloc[0]).total_seconds()
    assert abs(rise_diff_s) <= LIBRARY_TOLERANCE_S
    assert abs(set_diff_s) <= LIBRARY_TOLERANCE_S


def test_solar_elevation_deg_vs_pvlib_spa():
    # pvlib NREL SPA geometric elevation (no refraction, as ours). Tolerance 0.02 deg: NOAA's
    # series against SPA, about 1 min of time at most.
    for latitude_deg, longitude_deg, _ in (GREENWICH, DAVIS, BOLZANO, WELLINGTON):
        for hour in range(0, 24, 3):
            when = datetime(2025, 3, 20, hour, 17, tzinfo=UTC)
            ours = solar_elevation_deg(latitude_deg, longitude_deg, when)
            spa = _spa_geometric_elevation_deg(latitude_deg, longitude_deg, when)
            assert ours == pytest.approx(spa, abs=0.02)


# --- DST nights, polar cases, bad input ------------------------------------------------------


@pytest.mark.parametrize(
    ("evening", "clock_shift_h"),
    [(date(2027, 3, 13), 1.0), (date(2027, 11, 6), -1.0)],
    ids=["spring-forward", "fall-back"],
)
def test_night_window_utc_across_dst_change_is_continuous_in_utc(evening, clock_shift_h):
    # America/Los_Angeles changes clocks in the night after `evening`. In UTC, consecutive
    # sunrises move by about a minute; on the local clock they jump by the DST shift.
    latitude_deg, longitude_deg, tz = DAVIS
    zone = ZoneInfo(tz)
    sunset, next_sunrise = night_window_utc(latitude_deg, longitude_deg, evening, tz)
    prev_sunrise, _ = sunrise_sunset_utc(latitude_deg, longitude_deg, evening, tz)
    assert sunset.astimezone(zone).date() == evening
    assert next_sunrise.astimezone(zone).date() == evening + timedelta(days=1)
    assert timedelta(hours=9) < next_sunrise - sunset < timedelta(hours=15)
    utc_drift_s = (next_sunrise - prev_sunrise - timedelta(days=1)).total_seconds()
    assert abs(utc_drift_s) < 120.0

    def local_clock_h(dt):
        local = dt.astimezone(zone)
        return local.hour + local.minute / 60.0

    clock_jump_h = local_clock_h(next_sunrise) - local_clock_h(prev_sunrise)
    assert clock_jump_h == pytest.approx(clock_shift_h, abs=0.05)


def test_night_window_utc_vs_pvlib_spa_for_a_dst_night():
    # pvlib NREL SPA -0.833 deg crossings, as above; tolerance 60 s.
    latitude_deg, longitude_deg, tz = DAVIS
    sunset, next_sunrise = night_window_utc(latitude_deg, longitude_deg, date(2027, 11, 6), tz)
    for ours in (sunset, next_sunrise):
        spa = _spa_crossing_utc(latitude_deg, longitude_deg, ours)
        assert abs((ours - spa).total_seconds()) <= LIBRARY_TOLERANCE_S


LONGYEARBYEN = (78.0, 15.6, "Arctic/Longyearbyen")
TROMSO = (69.65, 18.96, "Europe/Oslo")


def _spa_elevations_deg(latitude_deg, longitude_deg, start_utc, hours, step_min=5):
    """pvlib NREL SPA geometric elevation every step_min minutes over `hours` from start_utc."""
    times = pd.date_range(pd.Timestamp(start_utc), periods=int(hours * 60 / step_min) + 1,
                          freq=f"{step_min}min")
    position = pvlib.solarposition.get_solarposition(
        times, latitude_deg, longitude_deg, method="nrel_numpy"
    )
    return position["elevation"]


@pytest.mark.parametrize(
    ("local_date", "polar", "sun_stays_up"),
    [(date(2025, 6, 21), POLAR_DAY, True), (date(2025, 12, 21), POLAR_NIGHT, False)],
    ids=["june-solstice-polar-day", "december-solstice-polar-night"],
)
def test_sun_day_utc_names_polar_day_and_night_vs_pvlib_spa(local_date, polar, sun_stays_up):
    # Longyearbyen at the solstices: pvlib's SPA keeps the Sun's centre above -0.833 deg all day
    # in June (its lowest is about +10.6 deg) and below it all day in December, so there is no
    # sunrise and no sunset, and the day says which.
    latitude_deg, longitude_deg, tz = LONGYEARBYEN
    day = sun_day_utc(latitude_deg, longitude_deg, local_date, tz)
    assert day.polar == polar
    assert day.sunrise_utc is None and day.sunset_utc is None
    spa = _spa_elevations_deg(latitude_deg, longitude_deg, day.solar_noon_utc - timedelta(hours=12), 24)
    assert (spa.min() > -0.833) if sun_stays_up else (spa.max() < -0.833)


def test_night_window_utc_in_polar_day_is_the_instant_of_the_lowest_sun():
    # Midnight sun: a night of zero length at the Sun's lowest. pvlib SPA, sampled every 5 min
    # over the 24 h around it, finds its lowest elevation within 10 min of that instant.
    latitude_deg, longitude_deg, tz = LONGYEARBYEN
    sunset, sunrise = night_window_utc(latitude_deg, longitude_deg, date(2025, 6, 21), tz)
    assert sunset == sunrise
    spa = _spa_elevations_deg(latitude_deg, longitude_deg, sunset - timedelta(hours=12), 24)
    lowest_utc = spa.idxmin().to_pydatetime()
    assert abs((lowest_utc - sunset).total_seconds()) <= 600.0


def test_night_window_utc_in_polar_night_runs_noon_to_noon_at_the_highest_sun():
    # Polar night: the night runs from one solar noon to the next (24 h), where SPA puts the
    # Sun's highest (within 10 min, 5-min samples).
    latitude_deg, longitude_deg, tz = LONGYEARBYEN
    sunset, sunrise = night_window_utc(latitude_deg, longitude_deg, date(2025, 12, 21), tz)
    assert abs((sunrise - sunset) - timedelta(hours=24)) < timedelta(minutes=2)
    for instant in (sunset, sunrise):
        spa = _spa_elevations_deg(latitude_deg, longitude_deg, instant - timedelta(hours=12), 24)
        highest_utc = spa.idxmax().to_pydatetime()
        assert abs((highest_utc - instant).total_seconds()) <= 600.0


@pytest.mark.parametrize(
    ("first_evening", "season"),
    [(date(2025, 5, 10), POLAR_DAY), (date(2025, 11, 20), POLAR_NIGHT)],
    ids=["into-midnight-sun", "into-polar-night"],
)
def test_night_window_utc_runs_smoothly_into_a_polar_season(first_evening, season):
    # Tromso: the nights shorten to nothing in May and lengthen to 24 h in November; every
    # night has a window, ordered, its length moving by under 1.5 h a night into the polar season.
    # Where the Sun does rise and set, the times are within 3 min of pvlib SPA (NOAA quotes
    # larger errors beyond 72 deg; at 69.65 deg the measured difference is under 1 min).
    latitude_deg, longitude_deg, tz = TROMSO
    lengths_h = []
    seen = set()
    for k in range(14):
        evening = first_evening + timedelta(days=k)
        sunset, sunrise = night_window_utc(latitude_deg, longitude_deg, evening, tz)
        assert sunset <= sunrise
        lengths_h.append((sunrise - sunset).total_seconds() / 3600.0)
        day = sun_day_utc(latitude_deg, longitude_deg, evening, tz)
        seen.add(day.polar)
        if day.sunset_utc is not None:
            spa = _spa_crossing_utc(latitude_deg, longitude_deg, day.sunset_utc)
            assert abs((day.sunset_utc - spa).total_seconds()) <= 180.0
    assert season in seen
    steps_h = [b - a for a, b in zip(lengths_h, lengths_h[1:], strict=False)]
    assert max(abs(step) for step in steps_h) < 1.5  # measured 1.09 h into the midnight sun
    assert (lengths_h[-1] == 0.0) if season == POLAR_DAY else (lengths_h[-1] > 23.9)


ODD_ZONES = [
    pytest.param(1.87, -157.36, "Pacific/Kiritimati", date(2025, 4, 10), id="kiritimati-utc+14"),
    pytest.param(27.7172, 85.324, "Asia/Kathmandu", date(2025, 4, 10), id="kathmandu-utc+5:45"),
    pytest.param(-43.95, -176.56, "Pacific/Chatham", date(2025, 10, 10), id="chatham-utc+13:45"),
    pytest.param(39.47, 75.99, "Asia/Shanghai", date(2025, 4, 10), id="kashgar-zone-3h-ahead"),
    pytest.param(-13.83, -171.76, "Pacific/Apia", date(2011, 12, 29), id="apia-next-date-skipped"),
    pytest.param(-18.14, 178.44, "Pacific/Fiji", date(2025, 12, 12), id="fiji-noon-at-0h-utc"),
    pytest.param(-34.9, -56.2, timezone(timedelta(hours=-3)), date(2025, 9, 1), id="fixed-utc-3"),
    pytest.param(-41.2865, 174.7762, "UTC", date(2025, 6, 21), id="wellington-in-utc-12h-off"),
]


@pytest.mark.parametrize(("latitude_deg", "longitude_deg", "tz", "local_date"), ODD_ZONES)
def test_sun_day_utc_in_odd_time_zones_vs_pvlib_spa(latitude_deg, longitude_deg, tz, local_date):
    # Zones far ahead of UTC, quarter-hour offsets, a zone three hours off the site's solar time,
    # a skipped calendar date, a fixed offset and a zone twelve hours off: one sunrise and one
    # sunset either side of the solar noon nearest local noon, each within 60 s of pvlib SPA.
    day = sun_day_utc(latitude_deg, longitude_deg, local_date, tz)
    assert day.polar == ""
    assert day.sunrise_utc < day.solar_noon_utc < day.sunset_utc
    zone = ZoneInfo(tz) if isinstance(tz, str) else tz
    local_noon = datetime.combine(local_date, datetime.min.time().replace(hour=12), tzinfo=zone)
    assert abs(day.solar_noon_utc - local_noon) <= timedelta(hours=12)
    for ours in (day.sunrise_utc, day.sunset_utc):
        spa = _spa_crossing_utc(latitude_deg, longitude_deg, ours)
        assert abs((ours - spa).total_seconds()) <= LIBRARY_TOLERANCE_S
    sunset, next_sunrise = night_window_utc(latitude_deg, longitude_deg, local_date, tz)
    assert sunset == day.sunset_utc
    assert timedelta(hours=8) < next_sunrise - sunset < timedelta(hours=16)


def test_sun_day_utc_rejects_out_of_range_latitude():
    with pytest.raises(ValueError, match="latitude_deg"):
        sun_day_utc(91.0, 0.0, date(2025, 6, 21), "UTC")


def test_solar_elevation_deg_rejects_naive_datetime():
    with pytest.raises(ValueError, match="naive"):
        solar_elevation_deg(45.0, 0.0, datetime(2025, 6, 21, 12, 0))


def test_solar_elevation_deg_at_solar_noon_vs_reference_sheet():
    # [computed] reference sheet section 7: Greenwich 2025-06-21 solar noon 12:01:52 UTC,
    # declination 23.438 deg, so elevation = 90 - 51.4769 + 23.438. Tolerance 0.002 deg
    # (the sheet's rounding of the declination).
    when = datetime(2025, 6, 21, 12, 1, 52, tzinfo=UTC)
    assert solar_elevation_deg(*GREENWICH[:2], when) == pytest.approx(61.9611, abs=0.002)


# ---- a season's sun times in one pass: the same instants as one date at a time ------------------

SEASON_SITES = [
    (36.1, -79.9, "America/New_York"),  # Greensboro NC (bench/tmy.py)
    (55.3, -160.5, "America/Anchorage"),  # Sand Point AK
    (-33.9, 18.4, "Africa/Johannesburg"),
    (28.6, 77.2, "Asia/Kolkata"),  # events near 00:00 UTC
    (69.6, 18.9, "Europe/Oslo"),  # polar day and polar night
    (-77.8, 166.7, "Antarctica/McMurdo"),
    (0.0, 179.9, "Pacific/Tarawa"),
]


@pytest.mark.parametrize("latitude_deg, longitude_deg, tz", SEASON_SITES)
def test_night_windows_of_a_season_equal_each_night_alone(latitude_deg, longitude_deg, tz):
    from frostwatch.physics.sun_season import night_windows_utc

    # every third day of a year and a half (both DST changes, both polar seasons), and some of 1961
    evenings = [date(2026, 1, 2) + timedelta(days=3 * k) for k in range(180)]
    evenings += [date(1961, 1, 5) + timedelta(days=11 * k) for k in range(33)]
    many = night_windows_utc(latitude_deg, longitude_deg, evenings, ZoneInfo(tz))
    assert many == [night_window_utc(latitude_deg, longitude_deg, d, ZoneInfo(tz)) for d in evenings]


def test_elevation_written_out_is_astrals_to_the_bit():
    """The season path's scalar elevation is astral's own arithmetic; numpy's agrees to 1e-9 deg."""
    import astral
    import astral.sun
    import numpy as np

    from frostwatch.physics import sun_season

    rng = np.random.default_rng(5)
    for latitude_deg, longitude_deg, _ in SEASON_SITES + [(89.9, 0.0, "UTC"), (-89.95, -179.9, "UTC")]:
        observer = astral.Observer(latitude=latitude_deg, longitude=longitude_deg, elevation=0.0)
        instants = rng.integers(-1_500_000_000, 4_000_000_000, 400)  # 1922 to 2096 (typical years splice old ones)
        fast = sun_season._elevation_above_deg_np(latitude_deg, longitude_deg, instants)
        for t_s, v in zip(instants.tolist(), fast, strict=True):
            ref = astral.sun.elevation(observer, datetime.fromtimestamp(t_s, UTC), with_refraction=False) + 0.833
            assert sun_season._above_horizon_deg_at_s(latitude_deg, longitude_deg, t_s) == ref
            assert abs(v - ref) < 1e-9
