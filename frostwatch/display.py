"""Formatting for people: the site's units and local clock times, in one place.

Stored data are always SI and degC; only what people read is converted here. A site with
`display_unit = "degF"` reads the grower's US units everywhere: temperatures in °F, wind in mph,
rates in in/h, flow in gal/min, water in acre-ft (with gallons), fuel in US gallons, areas in
acres, heights and distances in feet. JSON keys keep their SI suffixes whatever is shown.

Rules every method keeps (a half-awake reader must not have to puzzle over a number):

- never "-0.0": a value that rounds to zero is shown as 0;
- a missing value is a word ("unknown"), never "n/a" or "None";
- a trend that rounds to zero is "steady", never "rising";
- `plain_*` forms (for text messages) use only GSM-7 characters: "C"/"F" without a degree sign.
"""

from __future__ import annotations

import datetime as dt
import functools
from zoneinfo import ZoneInfo

from frostwatch.units import c_to_f, delta_c_to_f

UNKNOWN = "unknown"
# Conversions to US customary units (exact by the definitions of the units, NIST HB 44 App. C)
MPH_PER_M_S = 3600.0 / 1609.344
MM_PER_IN = 25.4
GPM_PER_L_S = 60.0 / 3.785411784  # US gallons per minute in 1 L/s
US_GAL_PER_L = 1.0 / 3.785411784
US_GAL_PER_M3 = 1000.0 * US_GAL_PER_L
M3_PER_ACRE_FT = 1233.48183754752  # 43,560 ft3
ACRES_PER_HA = 1.0 / 0.40468564224
FT_PER_M = 1.0 / 0.3048
BTU_H_PER_W = 3.412141633  # 1 W = 3.412 BTU/h (IT Btu)
SQFT_PER_M2 = FT_PER_M**2


def number(value: float, digits: int = 1) -> str:
    """`value` with `digits` decimals, never "-0.0" (a value that rounds to zero is 0)."""
    text = f"{value:.{digits}f}"
    if text.lstrip("-").strip("0.") == "":
        text = text.lstrip("-")
    return text


def grouped(value: float, digits: int = 0) -> str:
    """`value` with thousands separators and `digits` decimals, never "-0"."""
    text = f"{value:,.{digits}f}"
    if text.lstrip("-").replace(",", "").strip("0.") == "":
        text = text.lstrip("-")
    return text


def _sig(value: float) -> str:
    """A value with sensible precision for a rate or size: 2 significant figures below 10, else whole."""
    a = abs(value)
    if a >= 100:
        return grouped(value, 0)
    if a >= 10:
        return number(value, 1 if a < 20 else 0)
    if a >= 1:
        return number(value, 1)
    return number(value, 2)


@functools.lru_cache(maxsize=4096)
def _local_hh_mm(t: dt.datetime, tz: dt.tzinfo) -> str:
    # an instant's local clock time, made once: every block's texts of an evaluation, and the
    # evaluations after it, name the same few instants (a crossing, sunrise)
    return t.astimezone(tz).strftime("%H:%M")


class Display:
    """How numbers and times are shown at a site (`unit` "degC" or "degF"; "degF" means US units)."""

    def __init__(self, unit: str = "degC", tz: ZoneInfo | str = "UTC"):
        self.unit = unit
        self.tz = tz if isinstance(tz, ZoneInfo) else ZoneInfo(tz)

    @property
    def us(self) -> bool:
        """True when the grower reads US customary units (display_unit = "degF")."""
        return self.unit == "degF"

    @property
    def symbol(self) -> str:
        return "°F" if self.us else "°C"

    @property
    def letter(self) -> str:
        """The temperature unit without a degree sign (text messages: GSM-7 has no "°")."""
        return "F" if self.us else "C"

    # ---- temperatures ------------------------------------------------------------------------
    def _t(self, temp_c: float) -> float:
        return c_to_f(temp_c) if self.us else temp_c

    def _dt(self, delta_c: float) -> float:
        return delta_c_to_f(delta_c) if self.us else delta_c

    def temp(self, temp_c: float | None, digits: int = 1) -> str:
        """'-0.2 °C' / '31.6 °F'; 'unknown' for None."""
        if temp_c is None or temp_c != temp_c:
            return UNKNOWN
        return f"{number(self._t(temp_c), digits)} {self.symbol}"

    def plain_temp(self, temp_c: float | None, digits: int = 1) -> str:
        """'-0.2C' / '31.6F' (GSM-7, for text messages)."""
        if temp_c is None or temp_c != temp_c:
            return "?"
        return f"{number(self._t(temp_c), digits)}{self.letter}"

    def delta(self, delta_c: float | None, digits: int = 1) -> str:
        """A temperature difference: '2.0 °C' / '3.6 °F'."""
        if delta_c is None or delta_c != delta_c:
            return UNKNOWN
        return f"{number(self._dt(delta_c), digits)} {self.symbol}"

    def same_temp(self, a_c: float | None, b_c: float | None) -> bool:
        """True when two temperatures read the same as shown (then never write "x is above x")."""
        return a_c is not None and b_c is not None and self.temp(a_c) == self.temp(b_c)

    def trend(self, c_per_h: float | None) -> str:
        """'rising 1.3 °C per hour', 'falling 0.4 °C per hour' or 'steady' (a trend that rounds
        to zero is never called rising); 'trend unknown' for None."""
        if c_per_h is None or c_per_h != c_per_h:
            return "trend unknown"
        shown = number(abs(self._dt(c_per_h)), 1)
        if shown == "0.0":
            return "steady"
        return f"{'rising' if c_per_h > 0 else 'falling'} {shown} {self.symbol} per hour"

    def value(self, temp_c: float | None) -> float | None:
        if temp_c is None:
            return None
        return round(c_to_f(temp_c), 2) if self.us else round(temp_c, 2)

    # ---- other quantities ----------------------------------------------------------------------
    def wind(self, m_s: float | None) -> str:
        """'0.6 m/s' / '1.3 mph'."""
        if m_s is None or m_s != m_s:
            return UNKNOWN
        return f"{number(m_s * MPH_PER_M_S, 1)} mph" if self.us else f"{number(m_s, 1)} m/s"

    def wind_limit(self, m_s: float) -> str:
        """A wind limit, rounded as people say it: '2.5 m/s' / '6 mph'."""
        return f"{number(m_s * MPH_PER_M_S, 0)} mph" if self.us else f"{m_s:g} m/s"

    def rate(self, mm_h: float | None) -> str:
        """A sprinkler application rate: '3.5 mm/h' / '0.14 in/h'."""
        if mm_h is None or mm_h != mm_h:
            return UNKNOWN
        return f"{number(mm_h / MM_PER_IN, 2)} in/h" if self.us else f"{_sig(mm_h)} mm/h"

    def flow(self, l_s: float | None) -> str:
        """A water flow: '38.9 L/s' / '617 gal/min'."""
        if l_s is None or l_s != l_s:
            return UNKNOWN
        return f"{grouped(l_s * GPM_PER_L_S, 0)} gal/min" if self.us else f"{number(l_s, 1)} L/s"

    def water(self, m3: float | None) -> str:
        """A volume of water: '1,414 m3' / '1.15 acre-ft (373,000 gal)'."""
        if m3 is None or m3 != m3:
            return UNKNOWN
        if self.us:
            gal = m3 * US_GAL_PER_M3
            return f"{number(m3 / M3_PER_ACRE_FT, 2)} acre-ft ({grouped(round(gal, -3 if gal >= 10_000 else 0))} gal)"
        return f"{grouped(m3, 0)} m3"

    def fuel(self, litres: float | None) -> str:
        """'352 L' / '93 US gal'."""
        if litres is None or litres != litres:
            return UNKNOWN
        return f"{grouped(litres * US_GAL_PER_L, 0)} US gal" if self.us else f"{grouped(litres, 0)} L"

    def fuel_rate(self, l_per_h: float | None) -> str:
        """'40 L/h' / '10.6 US gal/h'."""
        if l_per_h is None or l_per_h != l_per_h:
            return UNKNOWN
        return f"{_sig(l_per_h * US_GAL_PER_L)} US gal/h" if self.us else f"{_sig(l_per_h)} L/h"

    def area(self, ha: float | None) -> str:
        """'4 ha' / '9.9 acres'."""
        if ha is None or ha != ha:
            return UNKNOWN
        return f"{_sig(ha * ACRES_PER_HA)} acres" if self.us else f"{ha:g} ha"

    def per_area(self, per_ha: float) -> str:
        """A count per area: '12 per hectare' / '5 per acre'."""
        return f"{_sig(per_ha / ACRES_PER_HA)} per acre" if self.us else f"{_sig(per_ha)} per hectare"

    def power_per_area(self, kw_per_ha: float) -> str:
        """'1,200 kW per hectare' / '490 kW per acre'."""
        return (f"{grouped(kw_per_ha / ACRES_PER_HA, 0)} kW per acre" if self.us
                else f"{grouped(kw_per_ha, 0)} kW per hectare")

    def flux(self, w_m2: float) -> str:
        """A heat loss per area: '80 W/m2' / '25 BTU/h per sq ft'."""
        return (f"{number(w_m2 * BTU_H_PER_W / SQFT_PER_M2, 0)} BTU/h per sq ft" if self.us
                else f"{number(w_m2, 0)} W/m2")

    def length(self, m: float | None) -> str:
        """A height or distance: '1.5 m', '320 m' / '4.9 ft', '1,050 ft'."""
        if m is None or m != m:
            return UNKNOWN
        v = m * FT_PER_M if self.us else m
        unit = "ft" if self.us else "m"
        return f"{grouped(v, 0) if abs(v) >= 100 else number(v, 1).removesuffix('.0')} {unit}"

    # ---- times ---------------------------------------------------------------------------------
    def time(self, t: dt.datetime | None) -> str:
        return UNKNOWN if t is None else _local_hh_mm(t, self.tz)

    def datetime(self, t: dt.datetime | None) -> str:
        return UNKNOWN if t is None else t.astimezone(self.tz).strftime("%Y-%m-%d %H:%M %Z")
