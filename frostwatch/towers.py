"""Which tower measures a block's inversion: its own, else the nearest one, else the site's.

Pure: config and station states in, a `TowerChoice` out. A radiation inversion is a feature of
the whole site (on average about 100 m deep, frost-physics.md 10), so a tower some hundreds of
metres away still measures the warm air aloft; the crop-height side of the inversion is always
the block's own sensor. A block without a tower of its own therefore uses the nearest healthy
tower by the stations' configured positions (`x_m`, `y_m`), or, without positions, the site-wide
tower (a tower station with no `block`). Which tower and how far is said in the reasons.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass

from frostwatch.config import Block, Config, Station
from frostwatch.models import StationState

# A tower farther than this from the block is not taken to measure its inversion: cold-air
# drainage and slopes change the inversion across a farm (ENGINEERING CHOICE, stated in the
# reasons; a grower with a larger site declares a tower nearer the block).
MAX_TOWER_DISTANCE_M = 1000.0


@dataclass(frozen=True)
class TowerChoice:
    """The tower used for a block, and why.

    Attributes
    ----------
    station : str
        The tower station's id.
    own : bool
        True when the tower is the block's own.
    distance_m : float or None
        Distance from the block's crop-height sensors to the tower [m], when positions are set.
    site_wide : bool
        True when the tower belongs to no block.
    """

    station: str
    own: bool
    distance_m: float | None
    site_wide: bool

    def describe(self) -> str:
        """'the block's own tower east-tower' / 'site-wide tower mast, 320 m away'."""
        if self.own:
            return f"the block's own tower {self.station}"
        where = "site-wide tower" if self.site_wide else "tower"
        far = f", {self.distance_m:,.0f} m away" if self.distance_m is not None else ""
        return f"{where} {self.station}{far}"


def block_position_m(cfg: Config, block_id: str) -> tuple[float, float] | None:
    """The mean position of the block's crop-height sensors that have one [m], or None."""
    pts = [s.position_m for s in cfg.stations_of(block_id, "crop") if s.position_m is not None]
    if not pts:
        return None
    return (sum(p[0] for p in pts) / len(pts), sum(p[1] for p in pts) / len(pts))


def _distance_m(a: tuple[float, float] | None, b: tuple[float, float] | None) -> float | None:
    if a is None or b is None:
        return None
    return math.hypot(a[0] - b[0], a[1] - b[1])


def tower_for_block(cfg: Config, block: Block, states: Mapping[str, StationState]) -> TowerChoice | None:
    """The tower whose air temperature stands for the warm air above `block` now.

    Parameters
    ----------
    cfg : Config
        The site's stations (roles, blocks, positions).
    block : Block
        The block.
    states : mapping
        Station id -> its `StationState` now; only healthy towers with an air temperature count.

    Returns
    -------
    TowerChoice or None
        The block's own healthy tower; else the nearest healthy tower within
        `MAX_TOWER_DISTANCE_M` when the block and the towers have positions; else a healthy
        site-wide tower (the nearest, when positions allow); else None.
    """
    def ok(s: Station) -> bool:
        st = states.get(s.id)
        return st is not None and st.healthy and "air_temperature" in st.latest

    # the block's own towers first: the farm's are looked through only for a block without a
    # healthy one (an evaluation asks for every block; the farm has a tower per block)
    own = [s for s in cfg.stations_of(block.id, "tower") if ok(s)]
    if own:
        return TowerChoice(own[0].id, True, None, False)
    towers = [s for s in cfg.stations_with_role("tower") if ok(s)]
    if not towers:  # no healthy tower anywhere (a farm without one): nothing to place
        return None
    here = block_position_m(cfg, block.id)
    placed = [(d, s) for s in towers if (d := _distance_m(here, s.position_m)) is not None]
    placed = [(d, s) for d, s in placed if d <= MAX_TOWER_DISTANCE_M]
    if placed:
        d, s = min(placed, key=lambda x: x[0])
        return TowerChoice(s.id, False, d, s.block is None)
    # a site-wide tower whose distance cannot be told (no positions) still stands for the site
    site = [s for s in towers if s.block is None and (here is None or s.position_m is None)]
    if site:
        s = site[0]
        return TowerChoice(s.id, False, _distance_m(here, s.position_m), True)
    return None
