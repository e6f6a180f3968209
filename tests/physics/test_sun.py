"""Sunrise, sunset and solar elevation against pvlib (NREL SPA), astral and the reference sheet."""

from datetime import UTC, date, datetime, timedelta
from zoneinfo import ZoneInfo

import astral
import astral.sun
import pandas as pd
import pvlib
import pytest
from scipy.optimize import brentq

from frostwatch.physics.sun import (
    night_window_utc,
    solar_elevation_deg,
    sunrise_sunset_utc,
)

# Tolerance against the reference libraries: 60 s. NOAA quotes about 1 min accuracy for its
# method within 72 deg of the equator; SPA (pvlib) is good to about 1 s, astral uses its own
# simplified series (it differs from SPA by 13-22 s at these sites).
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


# --- astral ----------------------------------------------------------------------------------


@pytest.mark.parametrize(("latitude_deg", "longitude_deg", "tz", "local_date"), CASES)
def test_sunrise_sunset_utc_vs_astral(latitude_deg, longitude_deg, tz, local_date):
    # astral 3.2 astral.sun.sun(observer, date, tzinfo), -0.833 deg by default, local date.
    # Tolerance 60 s (measured 13-22 s here).
    zone = ZoneInfo(tz)
    ref = astral.sun.sun(astral.Observer(latitude_deg, longitude_deg), date=local_date, tzinfo=zone)
    sunrise, sunset = sunrise_sunset_utc(latitude_deg, longitude_deg, local_date, zone)
    assert abs((sunrise - ref["sunrise"]).total_seconds()) <= LIBRARY_TOLERANCE_S
    assert abs((sunset - ref["sunset"]).total_seconds()) <= LIBRARY_TOLERANCE_S


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


def test_night_window_utc_matches_astral_for_a_dst_night():
    # astral 3.2, as above; tolerance 60 s.
    latitude_deg, longitude_deg, tz = DAVIS
    zone = ZoneInfo(tz)
    observer = astral.Observer(latitude_deg, longitude_deg)
    sunset, next_sunrise = night_window_utc(latitude_deg, longitude_deg, date(2027, 11, 6), zone)
    ref_set = astral.sun.sunset(observer, date(2027, 11, 6), tzinfo=zone)
    ref_rise = astral.sun.sunrise(observer, date(2027, 11, 7), tzinfo=zone)
    assert abs((sunset - ref_set).total_seconds()) <= LIBRARY_TOLERANCE_S
    assert abs((next_sunrise - ref_rise).total_seconds()) <= LIBRARY_TOLERANCE_S


def test_sunrise_sunset_utc_raises_for_polar_day():
    with pytest.raises(ValueError, match="polar day"):
        sunrise_sunset_utc(78.0, 15.6, date(2025, 6, 21), "Arctic/Longyearbyen")


def test_sunrise_sunset_utc_raises_for_polar_night():
    with pytest.raises(ValueError, match="polar night"):
        sunrise_sunset_utc(78.0, 15.6, date(2025, 12, 21), "Arctic/Longyearbyen")


def test_night_window_utc_raises_for_polar_day():
    with pytest.raises(ValueError, match="polar day"):
        night_window_utc(78.0, 15.6, date(2025, 6, 21), "Arctic/Longyearbyen")


def test_sunrise_sunset_utc_rejects_out_of_range_latitude():
    with pytest.raises(ValueError, match="latitude_deg"):
        sunrise_sunset_utc(91.0, 0.0, date(2025, 6, 21), "UTC")


def test_solar_elevation_deg_rejects_naive_datetime():
    with pytest.raises(ValueError, match="naive"):
        solar_elevation_deg(45.0, 0.0, datetime(2025, 6, 21, 12, 0))


def test_solar_elevation_deg_at_solar_noon_vs_reference_sheet():
    # [computed] reference sheet section 7: Greenwich 2025-06-21 solar noon 12:01:52 UTC,
    # declination 23.438 deg, so elevation = 90 - 51.4769 + 23.438. Tolerance 0.002 deg
    # (the sheet's rounding of the declination).
    when = datetime(2025, 6, 21, 12, 1, 52, tzinfo=UTC)
    assert solar_elevation_deg(*GREENWICH[:2], when) == pytest.approx(61.9611, abs=0.002)
