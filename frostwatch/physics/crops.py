"""Critical bud temperatures by crop and stage, and a growing-degree-hour stage suggestion.

Pure: no I/O, no clock. Temperatures in degC unless a name says otherwise.

The tables (`frostwatch.physics.crop_stage_tables`) are stored in the unit they were published in (degF for the WSU, MSU and
Utah State tables, degC for the FAO grape table) and converted once, on lookup.

References
----------
.. [1] Proebsting, E.L. & Mills, H.H. (1978). Low temperature resistance of developing
   flower buds of six deciduous fruit species. J. Amer. Soc. Hort. Sci. 103: 192-198
   (the Prosser data behind the WSU bulletins; citation from memory).
.. [2] WSU Extension bulletins EB0913 (apple), EB0978 (pear), EB1128 (sweet cherry),
   EB0914 (peach), EB1240 (apricot), as reprinted by Penn State Extension, "Orchard
   Frost - Critical Temperatures for Various Fruits" (adapted from WSU EB0419, Beers
   1989) and by MSU Extension (Longstroth).
.. [3] Utah State University Extension, tart cherry critical temperatures
   (intermountainfruit.org); cited origin MSU Research Report 220.
.. [4] Snyder, R.L. & de Melo-Abreu, J.P. (2005). Frost Protection: fundamentals,
   practice and economics, Vol. 1. FAO, Rome. Table 4.8 (Concord grape, after
   Proebsting, Brummund & Clore 1988).
.. [5] Anderson, J.L., Richardson, E.A. & Kesner, C.D. (1986). Validation of chill unit
   and flower bud phenology models for 'Montmorency' sour cherry. Acta Hort. 184: 71-78.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Final

import numpy as np
from numpy.typing import ArrayLike

from frostwatch.physics.crop_stage_tables import CRITICAL_TEMP_TABLES, CROP_ALIASES
from frostwatch.units import f_to_c

__all__ = [
    "CriticalTemps",
    "UnknownCropError",
    "UnknownStageError",
    "critical_temps",
    "growing_degree_hours",
    "known_crops",
    "known_stages",
    "normalise_name",
    "suggest_stage",
]


class UnknownCropError(ValueError):
    """Raised when a crop name matches none of the tables; the message lists the known crops."""


class UnknownStageError(ValueError):
    """Raised when a stage is not in the crop's table; the message lists its stages in order."""


@dataclass(frozen=True)
class CriticalTemps:
    """Bud temperatures giving 10 % and 90 % kill after about 30 min of exposure.

    Attributes
    ----------
    crop : str
        Crop name as stored (lower case).
    stage : str
        Phenological stage as the source table spells it (lower case).
    kill_10pct_c : float
        Temperature for 10 % bud kill [degC].
    kill_90pct_c : float
        Temperature for 90 % bud kill [degC]; NaN where the table gives none
        (apricot "first swelling").
    source : str
        The published table the values come from.
    """

    crop: str
    stage: str
    kill_10pct_c: float
    kill_90pct_c: float
    source: str




def normalise_name(text: str) -> str:
    """Return a crop or stage name in matching form.

    Lower case, with spaces, hyphens and underscores removed, so that "Full-Bloom",
    "full bloom" and "fullbloom" all give "fullbloom".

    Parameters
    ----------
    text : str
        Name as typed by a user or written in a config file.

    Returns
    -------
    str
        The name in matching form.
    """
    return "".join(ch for ch in text.strip().lower() if ch not in " -_\t")


def _resolve_crop(crop: str) -> str:
    key = normalise_name(crop)
    for name in CRITICAL_TEMP_TABLES:
        if normalise_name(name) == key:
            return name
    for alias, name in CROP_ALIASES.items():
        if normalise_name(alias) == key:
            return name
    raise UnknownCropError(
        f"unknown crop {crop!r}; known crops: {', '.join(known_crops())} "
        f"(also accepted: {', '.join(CROP_ALIASES)})"
    )


def known_crops() -> list[str]:
    """Return the crop names that have a critical-temperature table, as stored.

    Returns
    -------
    list of str
        Crop names (lower case); "plum" is also accepted as an alias of "european plum".
    """
    return list(CRITICAL_TEMP_TABLES)


def known_stages(crop: str) -> list[str]:
    """Return a crop's stages in phenological order, spelled as the source table spells them.

    Parameters
    ----------
    crop : str
        Crop name, matched without regard to case, spaces, hyphens or underscores.

    Returns
    -------
    list of str
        Stage names (lower case), earliest first.

    Raises
    ------
    UnknownCropError
        If the crop has no table; the message lists the known crops.
    """
    return [row[0] for row in CRITICAL_TEMP_TABLES[_resolve_crop(crop)].rows]


def critical_temps(
    crop: str, stage: str, hardiness_offset_c: float = 0.0
) -> CriticalTemps:
    """Look up the 10 % and 90 % bud-kill temperatures for a crop at a stage.

    Parameters
    ----------
    crop : str
        Crop name ("apple", "sweet cherry", "european plum" or "plum", ...), matched
        without regard to case, spaces, hyphens or underscores.
    stage : str
        Stage name as the source table spells it ("full bloom", "half-inch green"),
        matched the same way.
    hardiness_offset_c : float, optional
        Added to both temperatures [degC]. Negative means hardier (lower critical
        temperatures); e.g. about -0.6 for Golden Delicious or Winesap and -1.1 for Rome
        Beauty against the Red Delicious apple table before petal fall (WSU note as
        reprinted by Penn State; 1 degF and 2 degF).

    Returns
    -------
    CriticalTemps
        Values in degC. ``kill_90pct_c`` is NaN where the table publishes none
        (apricot "first swelling").

    Raises
    ------
    UnknownCropError
        If the crop is unknown; the message lists the known crops.
    UnknownStageError
        If the stage is not in the crop's table; the message lists its stages in order.
    ValueError
        If ``hardiness_offset_c`` is not finite.

    Notes
    -----
    Values are for about 30 min of exposure at bud temperature; on clear nights bud
    temperature runs about 1-2 degC below screen air temperature (from memory / common
    practice). degF values are converted with (F - 32) * 5/9, unrounded.

    References
    ----------
    See the module references [1]_ to [4]_ and each table's ``source`` string.
    """
    if not math.isfinite(hardiness_offset_c):
        raise ValueError(
            f"hardiness_offset_c {hardiness_offset_c!r}; expected a finite degC value"
        )
    name = _resolve_crop(crop)
    table = CRITICAL_TEMP_TABLES[name]
    key = normalise_name(stage)
    for stage_name, t10, t90 in table.rows:
        if normalise_name(stage_name) == key:
            convert = f_to_c if table.unit == "degF" else float
            t10_c = convert(t10)
            t90_c = math.nan if t90 is None else convert(t90)
            return CriticalTemps(
                crop=name,
                stage=stage_name,
                kill_10pct_c=t10_c + hardiness_offset_c,
                kill_90pct_c=t90_c + hardiness_offset_c,
                source=table.source,
            )
    raise UnknownStageError(
        f"unknown stage {stage!r} for {name}; known stages, in order: "
        f"{', '.join(known_stages(name))}"
    )


# ASYMCUR coefficients for fruit trees, Anderson, Richardson & Kesner (1986) [5]. From memory;
# the paper was not read, but a public reimplementation documents the same defaults:
# base 4 degC, optimum 25 degC, critical 36 degC.
GDH_BASE_C: Final = 4.0
GDH_OPTIMUM_C: Final = 25.0
GDH_CRITICAL_C: Final = 36.0


def growing_degree_hours(
    temps_c: ArrayLike,
    step_h: float,
    base_c: float = GDH_BASE_C,
    optimum_c: float = GDH_OPTIMUM_C,
    critical_c: float = GDH_CRITICAL_C,
) -> float:
    """Growing degree hours by the ASYMCUR model of Anderson, Richardson & Kesner (1986).

    Parameters
    ----------
    temps_c : array_like
        Air temperatures sampled every ``step_h`` hours [degC]. NaN samples count zero.
    step_h : float
        Sampling interval [h]; 1 for hourly readings, 0.25 for 15 min readings.
    base_c, optimum_c, critical_c : float, optional
        Base, optimum and critical temperatures [degC]; defaults 4, 25, 36 (from memory,
        matching a public reimplementation of the 1986 model).

    Returns
    -------
    float
        Accumulated growing degree hours [degC h].

    Raises
    ------
    ValueError
        If ``step_h`` is not positive or the temperatures are not ordered
        base < optimum < critical.

    Notes
    -----
    Per hour at temperature T, with Tb, Tu, Tc the base, optimum and critical:

    - Tb < T <= Tu: ``(Tu - Tb)/2 * (1 + cos(pi + pi*(T - Tb)/(Tu - Tb)))``
    - Tu < T <= Tc: ``(Tu - Tb) * (1 + cos(pi/2 + pi/2*(T - Tu)/(Tc - Tu)))``
    - otherwise 0.

    The curve rises from 0 at Tb to Tu - Tb at Tu and falls back to 0 at Tc. The
    model was fitted to hourly data; coarser sampling biases the sum.
    Richardson et al. (1975) used a linear GDH with a 4.5 degC base; pass
    ``base_c=4.5`` to follow that choice of base.

    References
    ----------
    .. [1] Anderson, J.L., Richardson, E.A. & Kesner, C.D. (1986). Acta Hort. 184: 71-78.
    """
    if not (step_h > 0 and math.isfinite(step_h)):
        raise ValueError(f"step_h {step_h!r}; expected a positive number of hours")
    if not base_c < optimum_c < critical_c:
        raise ValueError(
            f"base_c {base_c}, optimum_c {optimum_c}, critical_c {critical_c}; "
            "expected base < optimum < critical"
        )
    t = np.asarray(temps_c, dtype=float)
    span = optimum_c - base_c
    rising = span / 2.0 * (1.0 + np.cos(np.pi + np.pi * (t - base_c) / span))
    falling = span * (
        1.0
        + np.cos(np.pi / 2.0 + np.pi / 2.0 * (t - optimum_c) / (critical_c - optimum_c))
    )
    per_hour = np.where(
        (t > base_c) & (t <= optimum_c),
        rising,
        np.where((t > optimum_c) & (t <= critical_c), falling, 0.0),
    )
    return float(np.sum(per_hour) * step_h)


# Approximate ASYMCUR GDH [degC h] from the end of rest (chilling satisfied, the biofix) at
# which each stage begins. FROM MEMORY, APPROXIMATE: not in the reference sheet and not
# checked against a published calibration; varies by cultivar and site by well over 10 %.
# Only apple has a table; a suggestion the grower confirms, never applied silently.
_STAGE_GDH: Final[dict[str, tuple[tuple[str, float], ...]]] = {
    "apple": (
        ("silver tip", 1500.0),
        ("green tip", 2500.0),
        ("half-inch green", 3300.0),
        ("tight cluster", 4200.0),
        ("first pink", 5000.0),
        ("full pink", 5600.0),
        ("first bloom", 6200.0),
        ("full bloom", 6900.0),
        ("post bloom", 8000.0),
    ),
}


def suggest_stage(crop: str, gdh_since_biofix: float) -> str | None:
    """Suggest a bud stage from growing degree hours accumulated since the biofix.

    A suggestion for the grower to confirm by looking at the buds; frostwatch never
    changes a block's configured stage from it.

    Parameters
    ----------
    crop : str
        Crop name, matched as in `critical_temps`.
    gdh_since_biofix : float
        ASYMCUR growing degree hours since the end of rest [degC h], from
        `growing_degree_hours`.

    Returns
    -------
    str or None
        The latest stage whose threshold has been reached, spelled as in the crop's
        critical-temperature table; None before the first stage, for a NaN input, or for
        any crop other than apple.

    Raises
    ------
    UnknownCropError
        If the crop has no critical-temperature table.

    Notes
    -----
    Only apple has thresholds, and they are from memory and approximate (placed
    between end of rest and about 7000 degC h to full bloom); they are not in the
    reference sheet and have not been checked against a published calibration. There is
    no sound basis here for the other crops, so they return None.
    """
    name = _resolve_crop(crop)
    thresholds = _STAGE_GDH.get(name)
    if thresholds is None or not math.isfinite(gdh_since_biofix):
        return None
    suggested = None
    for stage, gdh in thresholds:
        if gdh_since_biofix >= gdh:
            suggested = stage
    return suggested
