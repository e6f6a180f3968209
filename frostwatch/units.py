"""The unit vocabulary of sensor logs and MQTT payloads, and conversion to canonical units.

Units are converted once, at ingest; everything inside frostwatch is canonical: degC, percent,
m s-1, hPa, degrees (direction), 1 (fractions and on/off flags), V.

Raises `UnitError` for a unit that is unknown or does not fit the quantity.
"""

from __future__ import annotations

import functools
import math
from collections.abc import Callable
from dataclasses import dataclass

from frostwatch.constants import ZERO_CELSIUS_K
from frostwatch.errors import UnitError

KNOT_M_S = 1852.0 / 3600.0  # m s-1, international nautical mile (1852 m) per hour
MILE_M = 1609.344  # m, international mile (1959 agreement)
INHG_HPA = 33.8638866667  # hPa per inch of mercury at 0 degC (NIST SP 811, 2008)


@dataclass(frozen=True)
class Quantity:
    """A measured quantity: its canonical unit, its kind of unit and its plausible range."""

    name: str
    canonical_unit: str
    kind: str
    low: float
    high: float


# Plausible ranges in canonical units. Air temperature -60..60 degC, relative humidity 0..100 %,
# wind 0..75 m s-1 as the foundation issue sets them; an infrared sky sensor reads far below air
# temperature on clear nights, hence its wide range.
QUANTITIES: dict[str, Quantity] = {
    q.name: q
    for q in (
        Quantity("air_temperature", "degC", "temperature", -60.0, 60.0),
        Quantity("dew_point_temperature", "degC", "temperature", -80.0, 50.0),
        Quantity("wet_bulb_temperature", "degC", "temperature", -60.0, 60.0),
        Quantity("surface_temperature", "degC", "temperature", -100.0, 80.0),
        Quantity("relative_humidity", "%", "ratio_pct", 0.0, 100.0),
        Quantity("wind_speed", "m s-1", "speed", 0.0, 75.0),
        Quantity("wind_from_direction", "degree", "angle", 0.0, 360.0),
        Quantity("air_pressure", "hPa", "pressure", 500.0, 1100.0),
        Quantity("cloud_area_fraction", "1", "ratio_frac", 0.0, 1.0),
        Quantity("wind_machine_running", "1", "flag", 0.0, 1.0),
        Quantity("sprinkler_running", "1", "flag", 0.0, 1.0),
        Quantity("battery_voltage", "V", "voltage", 0.0, 60.0),
    )
}

CANONICAL_UNIT = {q.name: q.canonical_unit for q in QUANTITIES.values()}


def _ident(v: float) -> float:
    return v


def _fold(unit: str) -> str:
    return " ".join(unit.strip().replace("\u00b7", " ").lower().split())


# (kind, spellings, converter to the kind's canonical unit)
_TABLE: tuple[tuple[str, tuple[str, ...], Callable[[float], float]], ...] = (
    ("temperature", ("degC", "C", "°C", "celsius", "deg C"), _ident),
    ("temperature", ("degF", "F", "°F", "fahrenheit", "deg F"), lambda v: f_to_c(v)),
    ("temperature", ("K", "kelvin"), lambda v: v - ZERO_CELSIUS_K),
    ("ratio_pct", ("%", "percent", "pct"), _ident),
    ("ratio_pct", ("1", "fraction"), lambda v: v * 100.0),
    ("ratio_frac", ("1", "fraction"), _ident),
    ("ratio_frac", ("%", "percent", "pct"), lambda v: v / 100.0),
    ("ratio_frac", ("okta", "oktas"), lambda v: v / 8.0),
    ("speed", ("m s-1", "m/s", "mps", "m s^-1"), _ident),
    ("speed", ("km h-1", "km/h", "kph", "kmh"), lambda v: v / 3.6),
    ("speed", ("mph", "mi/h", "mi h-1"), lambda v: v * MILE_M / 3600.0),
    ("speed", ("knots", "knot", "kt", "kn", "kts"), lambda v: v * KNOT_M_S),
    ("pressure", ("hPa", "mbar", "mb"), _ident),
    ("pressure", ("kPa",), lambda v: v * 10.0),
    ("pressure", ("Pa",), lambda v: v / 100.0),
    ("pressure", ("inHg",), lambda v: v * INHG_HPA),
    ("angle", ("degree", "degrees", "deg", "°"), _ident),
    ("flag", ("1", "bool"), _ident),
    ("voltage", ("V", "volt", "volts"), _ident),
    ("voltage", ("mV",), lambda v: v / 1000.0),
)

_CONVERTERS: dict[tuple[str, str], Callable[[float], float]] = {
    (kind, _fold(name)): fn for kind, names, fn in _TABLE for name in names
}
_SPELLINGS: dict[str, list[str]] = {}
for _kind, _names, _fn in _TABLE:
    _SPELLINGS.setdefault(_kind, []).extend(_names)


def known_units(kind: str) -> list[str]:
    """The unit spellings accepted for a kind of quantity, in the order they are documented."""
    return list(_SPELLINGS.get(kind, []))


_IDENT_MARK = object()


@functools.lru_cache(maxsize=512)
def _converter(quantity: str, unit: str):
    """The converter for (quantity, unit) as written; cached, since a log repeats a few spellings."""
    if unit.strip() == "":
        return _IDENT_MARK
    return _CONVERTERS.get((QUANTITIES[quantity].kind, _fold(unit)))


def to_canonical(quantity: str, value: float, unit: str | None) -> float:
    """Convert `value` given in `unit` to the canonical unit of `quantity`.

    An empty or missing unit means the canonical unit. Raises `UnitError` when the unit is
    unknown or does not fit the quantity (for example `mph` for a temperature).
    """
    if unit is None or unit == "":
        return float(value)
    fn = _converter(quantity, unit)
    if fn is _IDENT_MARK:
        return float(value)
    q = QUANTITIES[quantity]
    if fn is None:
        fits_other = any(_fold(unit) == n for (_, n) in _CONVERTERS)
        what = "does not fit" if fits_other else "is not a known unit for"
        raise UnitError(
            f"unit {unit!r} {what} {quantity}; expected one of {', '.join(known_units(q.kind))}"
        )
    return float(fn(value))


def array_converter(quantity: str, unit: str | None) -> Callable | None:
    """The conversion `to_canonical` applies for (quantity, unit), as a function that also takes a
    numpy array (the same arithmetic, element by element); None when the unit is unknown or does
    not fit the quantity (`to_canonical` says why)."""
    if unit is None or unit.strip() == "":
        return _ident
    fn = _converter(quantity, unit)
    return _ident if fn is _IDENT_MARK else fn


# ---- degrees Fahrenheit: the one place frostwatch converts them ---------------------------------
# Every reader of degF (ingest, the display, the status and fleet pages, the reports, the calculator
# and its arguments, the published crop tables) calls these four. Each takes a float or a numpy
# array (plain arithmetic, element by element) and returns the same kind. A temperature converts
# with the 32-degree offset; a difference (a margin, an inversion, a trend) without it.


def c_to_f(temp_c):
    """A temperature in degrees Celsius to degrees Fahrenheit: F = C * 9/5 + 32 (float or array)."""
    return temp_c * 9.0 / 5.0 + 32.0


def f_to_c(temp_f):
    """A temperature in degrees Fahrenheit to degrees Celsius: C = (F - 32) * 5/9 (float or array)."""
    return (temp_f - 32.0) * 5.0 / 9.0


def delta_c_to_f(delta_c):
    """A temperature difference in kelvin (= degC) to a difference in degrees Fahrenheit (x 9/5)."""
    return delta_c * 9.0 / 5.0


def delta_f_to_c(delta_f):
    """A temperature difference in degrees Fahrenheit to kelvin (= degC) (x 5/9)."""
    return delta_f * 5.0 / 9.0


def is_finite_number(value: object) -> bool:
    """True for an int or float that is finite (not NaN, not +-inf); False for bools."""
    return isinstance(value, (int, float)) and not isinstance(value, bool) and math.isfinite(value)
