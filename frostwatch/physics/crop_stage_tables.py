"""Published critical bud temperatures by crop and stage, stored as published.

Data only: the tables are stored in the unit they were published in (degF for the WSU, MSU and
Utah State tables, degC for the FAO grape table); `frostwatch.physics.crops` looks them up and
converts once. Values exactly as in frost-physics.md section 5; stage order is phenological.

References
----------
- [1] Proebsting, E.L. & Mills, H.H. (1978). Low temperature resistance of developing
  flower buds of six deciduous fruit species. J. Amer. Soc. Hort. Sci. 103: 192-198
  (the Prosser data behind the WSU bulletins; citation from memory).
- [2] WSU Extension bulletins EB0913 (apple), EB0978 (pear), EB1128 (sweet cherry),
  EB0914 (peach), EB1240 (apricot), as reprinted by Penn State Extension, "Orchard
  Frost - Critical Temperatures for Various Fruits" (adapted from WSU EB0419, Beers
  1989) and by MSU Extension (Longstroth).
- [3] Utah State University Extension, tart cherry critical temperatures
  (intermountainfruit.org); cited origin MSU Research Report 220.
- [4] Snyder, R.L. & de Melo-Abreu, J.P. (2005). Frost Protection: fundamentals,
  practice and economics, Vol. 1. FAO, Rome. Table 4.8 (Concord grape, after
  Proebsting, Brummund & Clore 1988).
- [5] Anderson, J.L., Richardson, E.A. & Kesner, C.D. (1986). Validation of chill unit
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Final

__all__ = ["CRITICAL_TEMP_TABLES", "CROP_ALIASES", "CropTable", "PENN_STATE_SOURCE"]


@dataclass(frozen=True)
class CropTable:
    """One published table: its unit, its source and its rows in phenological order."""

    unit: str  # "degF" or "degC": the unit the values were published in
    source: str
    rows: tuple[tuple[str, float, float | None], ...]  # (stage, T10, T90) in `unit`


PENN_STATE_SOURCE = (
    "Penn State Extension 'Orchard Frost - Critical Temperatures for Various Fruits'"
)

# Values exactly as published (see frost-physics.md section 5). Stage order is phenological.
CRITICAL_TEMP_TABLES: Final[dict[str, CropTable]] = {
    "apple": CropTable(
        "degF",
        f"WSU Extension EB0913 via {PENN_STATE_SOURCE} (Red Delicious)",
        (
            ("silver tip", 15, 2),
            ("green tip", 18, 10),
            ("half-inch green", 23, 15),
            ("tight cluster", 27, 21),
            ("first pink", 28, 24),
            ("full pink", 28, 25),
            ("first bloom", 28, 25),
            ("full bloom", 28, 25),
            ("post bloom", 28, 25),
        ),
    ),
    "pear": CropTable(
        "degF",
        f"WSU Extension EB0978 via {PENN_STATE_SOURCE} (Bartlett)",
        (
            ("scales separating", 15, 0),
            ("blossom buds exposed", 20, 6),
            ("tight cluster", 24, 15),
            ("first white", 25, 19),
            ("full white", 26, 22),
            ("first bloom", 27, 23),
            ("full bloom", 28, 24),
            ("post bloom", 28, 24),
        ),
    ),
    "sweet cherry": CropTable(
        "degF",
        f"WSU Extension EB1128 via {PENN_STATE_SOURCE}",
        (
            ("first swelling", 17, 5),
            ("side green", 22, 9),
            ("green tip", 25, 14),
            ("tight cluster", 26, 17),
            ("open cluster", 27, 21),
            ("first white", 27, 24),
            ("first bloom", 28, 25),
            ("full bloom", 28, 25),
            ("post bloom", 28, 25),
        ),
    ),
    "tart cherry": CropTable(
        "degF",
        "Utah State University Extension tart cherry table (cited origin MSU Research "
        "Report 220; MSU's extra side-green and open-cluster stages not included)",
        (
            ("swollen bud", 15, 0),
            ("green tip", 26, 22),
            ("tight cluster", 26, 24),
            ("first white", 28, 24),
            ("first bloom", 28, 24),
            ("full bloom", 28, 25),
            ("petal fall", 28, 25),
        ),
    ),
    "peach": CropTable(
        "degF",
        f"WSU Extension EB0914 via {PENN_STATE_SOURCE}",
        (
            ("first swelling", 18, 1),
            ("calyx green", 21, 5),
            ("calyx red", 23, 9),
            ("first pink", 25, 15),
            ("first bloom", 26, 21),
            ("full bloom", 27, 24),
            ("post bloom", 28, 25),
        ),
    ),
    "apricot": CropTable(
        "degF",
        "WSU Extension EB1240 via MSU Extension (Longstroth); "
        "no 90 % kill value published for first swelling",
        (
            ("first swelling", 15, None),
            ("tip separates", 20, 0),
            ("red calyx", 22, 9),
            ("first white", 24, 14),
            ("first bloom", 25, 19),
            ("full bloom", 27, 22),
            ("in the shuck", 27, 24),
            ("green fruit", 28, 25),
        ),
    ),
    "european plum": CropTable(
        "degF",
        "WSU/MSU Extension European plum table via MSU Extension (Longstroth)",
        (
            ("first swelling", 14, 0),
            ("side white", 17, 3),
            ("tip green", 20, 7),
            ("tight cluster", 24, 16),
            ("first white", 26, 22),
            ("first bloom", 27, 23),
            ("full bloom", 28, 23),
            ("post bloom", 28, 23),
        ),
    ),
    "grape": CropTable(
        "degC",
        "FAO-FP (Snyder & de Melo-Abreu 2005) Table 4.8, after Proebsting, Brummund & "
        "Clore 1988, WSU (Concord)",
        (
            ("first swell", -10.6, -19.4),
            ("late swell", -6.1, -12.2),
            ("bud burst", -3.9, -8.9),
            ("first leaf", -2.8, -6.1),
            ("second leaf", -2.2, -5.6),
            ("third leaf", -2.2, -3.3),
            ("fourth leaf", -2.2, -2.8),
        ),
    ),
}

# Accepted alternative names -> stored crop name.
CROP_ALIASES: Final[dict[str, str]] = {"plum": "european plum"}
