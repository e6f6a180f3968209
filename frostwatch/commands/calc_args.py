"""The calculator's numbers as typed: a value with an optional unit suffix, read into SI.

    --air-temp 34F   --air-temp 1.2C   --wind 5mph   --wind 2.5m/s   --capacity 0.14in/h
    --area 10acres   --pressure 29.92inHg   --pressure 1013hPa   --humidity 45%

A bare number is in the option's default unit: SI (°C, m/s, mm/h, ha, hPa), or with
`--fahrenheit` °F for every temperature (and °F differences for --margin and --inversion), or with
`--units us` the grower's US units (°F, mph, in/h, acres, inHg). A value that cannot be what the
option means is refused with a hint (exit 2): a pressure outside 500-1100 hPa ("29.92 looks like
inHg"), a relative humidity below 1.5 that looks like a fraction (unless `--humidity-low-ok` or a
"%" suffix says it is meant).

Raises `UsageError` (one sentence naming the option) on anything it cannot read.
"""

from __future__ import annotations

import math
import re

from frostwatch.errors import UnitError, UsageError

# a number, then an optional unit written right after it (or after one space)
_VALUE = re.compile(r"^\s*([+-]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][+-]?\d+)?)\s*([^\d\s].*)?\s*$")
# argparse takes "-2C" for an option unless told that such strings are numbers
NEGATIVE_WITH_UNIT = re.compile(r"^-(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][+-]?\d+)?\s*[^\d\s-]*$")
PRESSURE_RANGE_HPA = (500.0, 1100.0)
INHG_HPA = 33.8638866667  # hPa per inch of mercury (NIST SP 811)
MM_PER_IN = 25.4
HA_PER_ACRE = 0.40468564224

_RATE = {"mm/h": 1.0, "mmh": 1.0, "mm h-1": 1.0, "in/h": MM_PER_IN, "inh": MM_PER_IN, "in h-1": MM_PER_IN,
         "inch/h": MM_PER_IN}
_AREA = {"ha": 1.0, "hectare": 1.0, "hectares": 1.0, "acre": HA_PER_ACRE, "acres": HA_PER_ACRE, "ac": HA_PER_ACRE}
_HOURS = {"h": 1.0, "hr": 1.0, "hrs": 1.0, "hour": 1.0, "hours": 1.0, "min": 1.0 / 60.0}
_DELTA_SCALE = {"c": "C", "°c": "C", "degc": "C", "k": "C", "f": "F", "°f": "F", "degf": "F"}


def us(args) -> bool:
    """True with `--units us`: every bare number in the grower's US units."""
    return getattr(args, "units", "si") == "us"


def fahrenheit(args) -> bool:
    return us(args) or bool(getattr(args, "fahrenheit", False))


def split(text: str | float, option: str) -> tuple[float, str | None]:
    """'34F' -> (34.0, 'F'); '2.5 m/s' -> (2.5, 'm/s'); '7' -> (7.0, None)."""
    if isinstance(text, (int, float)):
        return float(text), None
    m = _VALUE.match(str(text))
    if not m:
        raise UsageError(f"{option} {text!r}: not a number, expected e.g. {option} 3.5 (a unit may follow: 3.5C)")
    value = float(m.group(1))
    if not math.isfinite(value):
        raise UsageError(f"{option} {text!r}: not a finite number")
    unit = (m.group(2) or "").strip() or None
    return value, unit


def _unit_error(option: str, text, unit: str, expected: str) -> UsageError:
    return UsageError(f"{option} {text!r}: unit {unit!r} does not fit, expected {expected}")


def temp_c(args, option: str, text) -> float:
    """A temperature [degC]; a bare number in °F with --fahrenheit or --units us."""
    from frostwatch.units import f_to_c, to_canonical

    value, unit = split(text, option)
    if unit is None:
        return f_to_c(value) if fahrenheit(args) else value
    try:
        return to_canonical("air_temperature", value, unit)
    except UnitError:
        raise _unit_error(option, text, unit, "C, F or K (e.g. 34F)") from None


def delta_c(args, option: str, text) -> float:
    """A temperature difference [K]; a bare number in °F degrees with --fahrenheit or --units us."""
    value, unit = split(text, option)
    if unit is None:
        scale = "F" if fahrenheit(args) else "C"
    else:
        scale = _DELTA_SCALE.get(unit.lower())
    if scale is None:
        raise _unit_error(option, text, unit, "C or F degrees (e.g. 4F)")
    from frostwatch.units import delta_f_to_c

    return delta_f_to_c(value) if scale == "F" else value


def speed_m_s(args, option: str, text) -> float:
    """A wind speed [m/s]; a bare number in mph with --units us."""
    from frostwatch.units import MILE_M, to_canonical

    value, unit = split(text, option)
    if unit is None:
        return value * MILE_M / 3600.0 if us(args) else value
    try:
        return to_canonical("wind_speed", value, unit)
    except UnitError:
        raise _unit_error(option, text, unit, "m/s, km/h, mph or knots (e.g. 5mph)") from None


def _scaled(option: str, text, factors: dict[str, float], bare_factor: float, expected: str) -> float:
    """A value times its unit's factor from `factors`; a bare number times `bare_factor`."""
    value, unit = split(text, option)
    if unit is None:
        return value * bare_factor
    k = factors.get(unit.lower())
    if k is None:
        raise _unit_error(option, text, unit, expected)
    return value * k


def rate_mm_h(args, option: str, text) -> float:
    """A sprinkler application rate [mm/h]; a bare number in in/h with --units us."""
    return _scaled(option, text, _RATE, MM_PER_IN if us(args) else 1.0, "mm/h or in/h (e.g. 0.14in/h)")


def area_ha(args, option: str, text) -> float:
    """An area [ha]; a bare number in acres with --units us."""
    return _scaled(option, text, _AREA, HA_PER_ACRE if us(args) else 1.0, "ha or acres (e.g. 10acres)")


def hours_h(args, option: str, text) -> float:
    return _scaled(option, text, _HOURS, 1.0, "h (e.g. 8h)")


def pressure_hpa(args, text, inhg=None) -> float:
    """Air pressure [hPa] from --pressure (bare: hPa, or inHg with --units us) or --pressure-inhg;
    1013.25 hPa when neither is given. Outside 500-1100 hPa it is refused with a hint at the unit
    the number looks like."""
    lo, hi = PRESSURE_RANGE_HPA
    if text is not None and inhg is not None:
        raise UsageError("--pressure and --pressure-inhg both given: give one")
    bare = False
    if inhg is not None:
        option = "--pressure-inhg"
        value, unit = split(inhg, option)
        if unit is not None and unit.lower() != "inhg":
            raise _unit_error(option, inhg, unit, "inches of mercury (e.g. 29.92)")
        hpa, shown = value * INHG_HPA, f"{value:g} inHg"
    elif text is None:
        return 1013.25
    else:
        from frostwatch.units import to_canonical

        option = "--pressure"
        value, unit = split(text, option)
        bare = unit is None
        if bare:
            hpa = value * INHG_HPA if us(args) else value
            shown = f"{value:g} {'inHg' if us(args) else 'hPa'}"
        else:
            try:
                hpa = to_canonical("air_pressure", value, unit)
            except UnitError:
                raise _unit_error(option, text, unit, "hPa, kPa, Pa or inHg (e.g. 29.92inHg)") from None
            shown = f"{value:g} {unit}"
    if lo <= hpa <= hi:
        return hpa
    hint = " in hPa (sea level is about 1013)"
    if bare and 25.0 <= value <= 33.0:
        hint = f": {value:g} looks like inHg: pass --pressure-inhg {value:g} (or --pressure {value:g}inHg)"
    elif bare and 50.0 <= value <= 110.0:
        hint = f": {value:g} looks like kPa: pass --pressure {value:g}kPa"
    elif bare and lo <= value <= hi:
        hint = f": {value:g} looks like hPa: pass --pressure {value:g}hPa"
    where = "" if shown.endswith(" hPa") else f" ({hpa:.0f} hPa)"
    raise UsageError(f"{option} {shown}{where} is outside {lo:g}-{hi:g} hPa, expected station air pressure{hint}")


def humidity_pct(args, option: str, text) -> float:
    """Relative humidity [%] (0-100). A bare value below 1.5 looks like a fraction (0.5 for 50 %):
    refused with a hint unless `--humidity-low-ok` or a "%" suffix says it is meant."""
    value, unit = split(text, option)
    if unit is not None and unit not in ("%", "pct", "percent"):
        if unit.lower() in ("1", "fraction", "frac"):
            value, unit = value * 100.0, "%"
        else:
            raise _unit_error(option, text, unit, "percent (e.g. 45 or 45%)")
    if not 0 < value <= 100:
        raise UsageError(f"{option} {text}: expected relative humidity in percent, 0-100")
    if value < 1.5 and unit is None and not getattr(args, "humidity_low_ok", False):
        raise UsageError(f"{option} {text}: relative humidity below 1.5 % is almost never real; did you mean "
                         f"{value * 100:g} % (a fraction)? Pass {option} {value * 100:g}, or add --humidity-low-ok "
                         f"(or write {text}%) if {text} % is meant")
    return value
