"""What the calibration's models take as inputs: the dusk regression's feature vector (with the
physics prior's stand-ins for a missing value), the kind of dusk whose skill record a night
belongs to (clear and calm, or other), and the hours-left bin of the nowcast. Pure; no I/O.
"""

from __future__ import annotations

from frostwatch.forecast.sensors import ASSUMED_DEPRESSION_C
from frostwatch.forecast.settings import (
    DUSK_CALM_WIND_M_S,
    DUSK_CLEAR_CLOUD_FRAC,
    NOWCAST_BIN_H,
    NOWCAST_BINS,
    SKILL_BY_REGIME,
    USE_PRESSURE_TREND,
)


def dusk_regime(x: tuple[float, ...]) -> str:
    """Which skill record a dusk belongs to: the prior is physics for clear calm nights only."""
    if not SKILL_BY_REGIME:
        return "any"
    return "clear_calm" if x[2] <= DUSK_CLEAR_CLOUD_FRAC and x[3] <= DUSK_CALM_WIND_M_S else "other"


def feature_vector(
    t0_c: float, td0_c: float | None, cloud: float | None, wind: float | None, wind_trend: float | None = None,
    pressure_trend: float | None = None,
) -> tuple[float, ...]:
    """The dusk regression's inputs, with the same stand-ins the physics prior uses when one is
    missing: dew point 6 degC below the air, clear sky, calm, steady wind and pressure."""
    return (t0_c, t0_c - ASSUMED_DEPRESSION_C if td0_c is None else td0_c, cloud or 0.0, wind or 0.0, wind_trend or 0.0,
            (pressure_trend or 0.0) if USE_PRESSURE_TREND else 0.0)


def nowcast_bin(hours_left: float) -> int:
    return int(min(NOWCAST_BINS - 1, max(0.0, hours_left) // NOWCAST_BIN_H))
