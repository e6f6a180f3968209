"""What a block's night plot can show (pure, no matplotlib): the report's caption and the plot
agree on it, and a panel with nothing to draw is left out with a note instead of drawn empty.

    lower = lower_panel(block, cfg, series, start_s, end_s)
    lower.shown, lower.tower, lower.wind_stations, lower.note
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from frostwatch.config import Block, Config


@dataclass(frozen=True)
class LowerPanel:
    """The plot's lower panel: the inversion (tower minus crop height) and the wind."""

    tower: str | None  # the block's tower with readings tonight (None: no inversion line)
    wind_stations: tuple[str, ...]  # the block's (or site-wide) anemometers with readings tonight

    @property
    def shown(self) -> bool:
        return self.tower is not None or bool(self.wind_stations)

    @property
    def note(self) -> str:
        """What the caption says about the lower panel (empty when it shows both)."""
        if not self.shown:
            return ("This block has no tower sensor and no wind sensor: the plot has no lower panel; its alerts quote "
                    "the farm's wind.")
        if self.tower is None:
            return "No tower sensor in this block: the lower panel shows the wind only."
        if not self.wind_stations:
            return "No wind sensor in this block: the lower panel shows the inversion only."
        return ""


def _has(series, key, start_s: float, end_s: float) -> bool:
    if key not in series:
        return False
    t, _ = series[key]
    t = np.asarray(t)
    return bool(((t >= start_s) & (t <= end_s)).any())


def lower_panel(block: Block, cfg: Config, series, start_s: float, end_s: float) -> LowerPanel:
    """Which tower and anemometers of `block` (or site-wide ones) have readings between the two
    instants [s since 1970 UTC]."""
    towers = [s.id for s in cfg.stations_of(block.id, role="tower")
              if _has(series, (s.id, "air_temperature"), start_s, end_s)]
    own = cfg.stations_of(block.id) + [s for s in cfg.stations if s.block is None]
    wind = tuple(s.id for s in own if _has(series, (s.id, "wind_speed"), start_s, end_s))
    return LowerPanel(tower=towers[0] if towers else None, wind_stations=wind)
