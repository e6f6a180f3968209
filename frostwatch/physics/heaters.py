"""Orchard heaters: the heat a block needs tonight, how much of heaters' output stays, how many
heaters per hectare that asks for, and whether the inversion will hold the heat.

Pure: no I/O, no clock. Heaters replace the energy the block loses by net radiation; most of
their heat rises away, less so under a strong, low inversion; many small fires hold heat better
than a few big ones, whose plumes break through the inversion; more heaters are needed on the
borders, where warmed air draws cold air in, and doubling them on the upwind border helped
(FAO-FP p. 147, after Kepner 1951).

References
----------
.. [1] Snyder, R.L. & de Melo-Abreu, J.P. (2005). Frost Protection: fundamentals, practice and
   economics, Vol. 1. FAO, Rome ("FAO-FP"), ch. 7 (heaters), p. 147.
.. [2] Evans, R.G., Good Fruit Grower: about 10-15 % of the heat orchard heaters release stays
   in the orchard (grower-needs.md, rules of thumb).
.. [3] Lake County (California) Air Quality Management District, orchard-heater rules: at most
   1 g/min of carbonaceous emissions, no waste oil, no smudge pots (grower-needs.md).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Final

__all__ = [
    "RETAINED_FRAC",
    "HeaterNeed",
    "heat_requirement_w_m2",
    "heater_need",
    "retained_frac_for_inversion",
]

# Share of the heaters' output that stays in the orchard: 10-15 % (Evans, Good Fruit Grower).
RETAINED_FRAC: Final = (0.10, 0.15)
# Inversion strength [degC, tower minus crop height] from which the upper end of the retained
# share is used: "strong" (Ker et al. 2007; Shaw 2001; `frostwatch.physics.windmachine`).
STRONG_INVERSION_C: Final = 3.0
MIN_USEFUL_INVERSION_C: Final = 1.5  # common practice, as for wind machines
_KW_PER_HA_PER_W_M2: Final = 10.0  # 1 W m-2 over 10 000 m2 = 10 kW


def heat_requirement_w_m2(target_temp_c: float, vapour_pressure_hpa: float, cloud_frac: float = 0.0) -> float:
    """Net longwave loss of a block held at the target temperature [W m-2, positive = loss].

    Parameters
    ----------
    target_temp_c : float
        Crop-height air (and surface) temperature the heaters are to hold (T10 + margin)
        [degC].
    vapour_pressure_hpa : float
        Actual vapour pressure [hPa].
    cloud_frac : float, optional
        Cloud fraction [-].

    Returns
    -------
    float
        ``-L*`` of a surface at the target radiating as a black body (emissivity 1, an upper
        bound: no tabulated emissivity is needed, and the need errs high) under a Brutsaert
        (1975) sky with the Jacobs (1978) cloud correction
        (`frostwatch.physics.longwave.net_longwave_w_m2`); NaN outside its range.

    Notes
    -----
    Heaters must put back what the block loses by net radiation (FAO-FP ch. 7); the soil's
    heat and the inversion's sensible heat supply part of it on a real night, so this figure
    errs on the side of more heat.
    """
    from frostwatch.physics.longwave import net_longwave_w_m2

    return -float(net_longwave_w_m2(target_temp_c, vapour_pressure_hpa, cloud_frac=cloud_frac,
                                    surface_temp_c=target_temp_c, surface_emissivity=1.0))


def retained_frac_for_inversion(inversion_c: float | None) -> float | None:
    """The share of the heaters' output the inversion holds [-], or None when it holds too little.

    Within Evans' 10-15 %: 15 % under a strong inversion (>= 3 degC), 10 % under a moderate one
    (1.5-3 degC). Below 1.5 degC (or unknown) the plume rises away (FAO-FP p. 147) and no share
    is counted: None. The split of the published range by inversion class is an ENGINEERING
    CHOICE.
    """
    if inversion_c is None or math.isnan(inversion_c) or inversion_c < MIN_USEFUL_INVERSION_C:
        return None
    return RETAINED_FRAC[1] if inversion_c >= STRONG_INVERSION_C else RETAINED_FRAC[0]


@dataclass(frozen=True)
class HeaterNeed:
    """The heat tonight asks of the heaters.

    Attributes
    ----------
    requirement_w_m2 : float
        Net longwave loss at the target [W m-2].
    retained_frac : float or None
        Share of the output that stays (None: the inversion is too weak or unknown).
    output_kw_per_ha : float or None
        Burning heater output needed per hectare [kW ha-1]: requirement / retained share.
    heaters_per_ha : int or None
        Heaters of the block's rating needed per hectare (None without a rating or a share).
    installed_kw_per_ha : float or None
        The block's installed output [kW ha-1] (heaters per hectare times their rating).
    enough : bool or None
        Installed output at least the output needed; None when either is unknown.
    """

    requirement_w_m2: float
    retained_frac: float | None
    output_kw_per_ha: float | None
    heaters_per_ha: int | None
    installed_kw_per_ha: float | None
    enough: bool | None


def heater_need(
    target_temp_c: float,
    vapour_pressure_hpa: float,
    inversion_c: float | None,
    heater_kw: float | None = None,
    installed_per_ha: float | None = None,
    cloud_frac: float = 0.0,
) -> HeaterNeed:
    """How much burning heater output per hectare holds the block at the target tonight.

    Parameters
    ----------
    target_temp_c : float
        T10 + margin [degC].
    vapour_pressure_hpa : float
        Actual vapour pressure [hPa].
    inversion_c : float or None
        Tower minus crop-height air [degC].
    heater_kw : float, optional
        Heat output of one heater [kW] (the maker's figure).
    installed_per_ha : float, optional
        Heaters installed per hectare.
    cloud_frac : float, optional
        Cloud fraction [-].

    Returns
    -------
    HeaterNeed

    Notes
    -----
    ``output = requirement / retained share``, 1 W m-2 = 10 kW ha-1; heaters per hectare =
    ceil(output / rating). Put the extra heaters on the borders, double on the upwind border
    (FAO-FP p. 147).
    """
    req = heat_requirement_w_m2(target_temp_c, vapour_pressure_hpa, cloud_frac)
    frac = retained_frac_for_inversion(inversion_c)
    out = None if frac is None or not math.isfinite(req) else max(0.0, req) / frac * _KW_PER_HA_PER_W_M2
    per_ha = math.ceil(out / heater_kw) if out is not None and heater_kw and heater_kw > 0 else None
    installed = installed_per_ha * heater_kw if installed_per_ha is not None and heater_kw else None
    enough = None if out is None or installed is None else installed >= out
    return HeaterNeed(req, frac, out, per_ha, installed, enough)
