"""Unit conversions at ingest: round trips, the vocabulary, and clear errors."""

import math

import numpy as np
import pytest
import scipy.constants as si
from hypothesis import given
from hypothesis import strategies as st

from frostwatch.errors import UnitError
from frostwatch.units import QUANTITIES, c_to_f, delta_c_to_f, delta_f_to_c, f_to_c, known_units, to_canonical


@pytest.mark.parametrize(
    ("quantity", "value", "unit", "expected"),
    [
        ("air_temperature", 32.0, "degF", 0.0),
        ("air_temperature", 28.0, "°F", -2.2222222),  # the apple T10 of 28 degF (WSU tables)
        ("air_temperature", 273.15, "K", 0.0),
        ("air_temperature", -3.0, "", -3.0),
        ("wind_speed", 36.0, "km h-1", 10.0),
        ("wind_speed", 10.0, "mph", 4.4704),  # 1 mph = 0.44704 m/s exactly (international mile)
        ("wind_speed", 1.0, "knots", 0.5144444),  # 1852 m per hour
        ("air_pressure", 101.325, "kPa", 1013.25),
        ("air_pressure", 101325.0, "Pa", 1013.25),
        ("relative_humidity", 0.81, "1", 81.0),
        ("cloud_area_fraction", 75.0, "%", 0.75),
        ("cloud_area_fraction", 4.0, "okta", 0.5),
        ("battery_voltage", 3700.0, "mV", 3.7),
    ],
)
def test_to_canonical_known_conversions(quantity, value, unit, expected):
    assert to_canonical(quantity, value, unit) == pytest.approx(expected, abs=1e-6)


@given(st.floats(min_value=-80, max_value=80, allow_nan=False))
def test_fahrenheit_round_trip(temp_c):
    assert to_canonical("air_temperature", c_to_f(temp_c), "degF") == pytest.approx(temp_c, abs=1e-9)


@given(st.floats(min_value=0, max_value=75, allow_nan=False))
def test_speed_round_trips(speed_m_s):
    assert to_canonical("wind_speed", speed_m_s * 3.6, "km h-1") == pytest.approx(speed_m_s, abs=1e-9)
    assert to_canonical("wind_speed", speed_m_s / 0.44704, "mph") == pytest.approx(speed_m_s, abs=1e-9)
    assert to_canonical("wind_speed", speed_m_s * 3600 / 1852, "knots") == pytest.approx(speed_m_s, abs=1e-9)


def test_unknown_unit_names_the_unit_and_the_expected_ones():
    with pytest.raises(UnitError, match="furlongs.*expected one of degC"):
        to_canonical("air_temperature", 3.0, "furlongs")


def test_unit_of_another_kind_does_not_fit():
    with pytest.raises(UnitError, match="does not fit air_temperature"):
        to_canonical("air_temperature", 3.0, "mph")


def test_every_quantity_has_units_and_a_finite_range():
    for q in QUANTITIES.values():
        assert known_units(q.kind), q.name
        assert math.isfinite(q.low) and math.isfinite(q.high) and q.low < q.high


@pytest.mark.parametrize(("temp_c", "temp_f"), [(0.0, 32.0), (100.0, 212.0), (-40.0, -40.0), (-2.2, 28.04)])
def test_fahrenheit_helpers_vs_scipy_convert_temperature(temp_c, temp_f):
    # scipy.constants.convert_temperature (NIST SP 811: t/degF = 1.8 t/degC + 32) and the fixed
    # points of water; 28.04 F is the -2.2 C of the apple T10 rows.
    assert c_to_f(temp_c) == pytest.approx(si.convert_temperature(temp_c, "Celsius", "Fahrenheit"), abs=1e-9)
    assert c_to_f(temp_c) == pytest.approx(temp_f, abs=1e-9)
    assert f_to_c(temp_f) == pytest.approx(si.convert_temperature(temp_f, "Fahrenheit", "Celsius"), abs=1e-9)
    assert f_to_c(temp_f) == pytest.approx(temp_c, abs=1e-9)


def test_fahrenheit_difference_helpers_have_no_offset_and_take_arrays():
    # a difference of 1 K is 1.8 degF (NIST SP 811); the helpers take numpy arrays as well
    assert delta_c_to_f(1.0) == pytest.approx(1.8) and delta_f_to_c(1.8) == pytest.approx(1.0)
    assert delta_f_to_c(delta_c_to_f(2.5)) == pytest.approx(2.5)
    temps_c = np.array([-5.0, 0.0, 5.0])
    assert np.allclose(f_to_c(c_to_f(temps_c)), temps_c)
    assert np.allclose(c_to_f(temps_c), si.convert_temperature(temps_c, "Celsius", "Fahrenheit"))
