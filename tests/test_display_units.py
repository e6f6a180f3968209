"""Formatting for people (frostwatch.display): never "-0.0", never "n/a", a steady trend is not
"rising", equal numbers are never compared, and a degF site reads US units. The conversion factors
are checked against NIST Handbook 44 Appendix C (exact definitions of the units)."""

from __future__ import annotations

import datetime as dt

import pytest

from frostwatch.display import Display, grouped, number

SI = Display("degC", "America/Los_Angeles")
US = Display("degF", "America/Los_Angeles")


@pytest.mark.parametrize("value", [-0.0, -0.04, 0.04, -0.049])
def test_a_value_that_rounds_to_zero_is_never_minus_zero(value):
    assert number(value, 1) == "0.0"
    assert SI.temp(value) == "0.0 °C" and SI.delta(value) == "0.0 °C"
    assert grouped(-0.4, 0) == "0"


def test_fahrenheit_minus_zero_and_plain_forms():
    assert US.temp(-17.79) == "0.0 °F"  # -0.02 F rounds to 0.0, never "-0.0"
    assert US.plain_temp(-0.2) == "31.6F" and SI.plain_temp(-0.2) == "-0.2C" and SI.plain_temp(-0.01) == "0.0C"


def test_missing_values_are_a_word_never_na_or_none():
    for d in (SI, US):
        for f in (d.temp, d.delta, d.wind, d.rate, d.flow, d.water, d.fuel, d.area, d.length, d.time, d.datetime):
            assert f(None) == "unknown"
    assert SI.trend(None) == "trend unknown"


def test_a_zero_trend_is_steady_never_rising():
    assert SI.trend(0.0) == "steady" and SI.trend(0.04) == "steady" and SI.trend(-0.04) == "steady"
    assert SI.trend(1.26) == "rising 1.3 °C per hour" and SI.trend(-0.3) == "falling 0.3 °C per hour"
    assert US.trend(1.0) == "rising 1.8 °F per hour"


def test_same_temp_compares_what_is_shown():
    assert SI.same_temp(-0.16, -0.2) and not SI.same_temp(-0.1, -0.2)
    assert not SI.same_temp(None, -0.2)


def test_us_units_against_nist_handbook_44():
    # NIST HB 44 App. C: 1 mi = 1609.344 m, 1 in = 25.4 mm, 1 US gal = 3.785411784 L,
    # 1 acre = 4046.8564224 m2, 1 acre-ft = 43,560 ft3 = 1233.48 m3, 1 ft = 0.3048 m
    assert US.wind(1.0) == "2.2 mph" and US.wind_limit(2.5) == "6 mph" and US.wind_limit(4.5) == "10 mph"
    assert US.rate(3.5) == "0.14 in/h" and US.rate(25.4) == "1.00 in/h"
    assert US.flow(38.9) == "617 gal/min"
    assert US.water(1233.48) == "1.00 acre-ft (326,000 gal)"
    assert US.fuel(3.785411784 * 93) == "93 US gal" and US.fuel_rate(40) == "10.6 US gal/h"
    assert US.area(4.0) == "9.9 acres" and US.length(1.5) == "4.9 ft" and US.length(320) == "1,050 ft"
    assert US.flux(80.0) == "25 BTU/h per sq ft"  # 1 W/m2 = 0.317 BTU/h/ft2 (IT Btu)


def test_si_units_as_people_write_them():
    assert SI.wind(0.6) == "0.6 m/s" and SI.rate(3.5) == "3.5 mm/h" and SI.flow(38.9) == "38.9 L/s"
    assert SI.water(1414.2) == "1,414 m3" and SI.fuel(352) == "352 L" and SI.area(4.0) == "4 ha"
    assert SI.length(1.5) == "1.5 m" and SI.length(10.0) == "10 m"


def test_times_in_the_site_zone():
    t = dt.datetime(2027, 4, 15, 5, 50, tzinfo=dt.UTC)
    assert SI.time(t) == "22:50" and SI.datetime(t) == "2027-04-14 22:50 PDT"
