"""Formatting for people: the site's display unit (degC or degF) and local clock times.

Stored data are always SI and degC; only what people read is converted here.
"""

from __future__ import annotations

import datetime as dt
from zoneinfo import ZoneInfo

from frostwatch.units import c_to_f, delta_c_to_f


class Display:
    """How temperatures and times are shown at a site."""

    def __init__(self, unit: str = "degC", tz: ZoneInfo | str = "UTC"):
        self.unit = unit
        self.tz = tz if isinstance(tz, ZoneInfo) else ZoneInfo(tz)

    @property
    def symbol(self) -> str:
        return "°F" if self.unit == "degF" else "°C"

    def temp(self, temp_c: float | None, digits: int = 1) -> str:
        if temp_c is None:
            return "n/a"
        v = c_to_f(temp_c) if self.unit == "degF" else temp_c
        return f"{v:.{digits}f} {self.symbol}"

    def delta(self, delta_c: float | None, digits: int = 1) -> str:
        if delta_c is None:
            return "n/a"
        v = delta_c_to_f(delta_c) if self.unit == "degF" else delta_c
        return f"{v:.{digits}f} {self.symbol}"

    def value(self, temp_c: float | None) -> float | None:
        if temp_c is None:
            return None
        return round(c_to_f(temp_c), 2) if self.unit == "degF" else round(temp_c, 2)

    def time(self, t: dt.datetime | None) -> str:
        return "n/a" if t is None else t.astimezone(self.tz).strftime("%H:%M")

    def datetime(self, t: dt.datetime | None) -> str:
        return "n/a" if t is None else t.astimezone(self.tz).strftime("%Y-%m-%d %H:%M %Z")
