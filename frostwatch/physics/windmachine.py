"""Wind machines: inversion classes, expected warming and whether fans will help tonight.

Pure: no I/O, no clock. The inversion is T(tower, ~10 m) - T(crop, ~1.5 m) [degC].

References
----------
.. [1] Snyder, R.L. & de Melo-Abreu, J.P. (2005). Frost Protection: fundamentals,
   practice and economics, Vol. 1. FAO, Rome ("FAO-FP"), p. 159-160.
.. [2] Goodall, G.E., Angus, D.E., Leonard, A.S. & Brooks, F.A. (1957). Effectiveness of
   wind machines... California Agriculture 11(8): 7-9 (strong >= 7.2 degC, weak
   < 2.8 degC between 12-15 m and a few feet above ground).
.. [3] Ker, K. et al. (2007) and Shaw (2001), Niagara vineyards: an inversion is strong
   when 20 m minus 0.625 m is >= 3 degC.
.. [4] McMeeking, G.R., Whiteman, C.D., Powell, J. & Clements, C.B. (2002). 25th AMS
   Conf. Agric. For. Meteorol., 81-82: a 3.5 degC inversion gave about 1-2 degC of
   warming.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Final

__all__ = [
    "GAIN_FRACTION_DEFAULT",
    "GAIN_FRACTION_HIGH",
    "GAIN_FRACTION_LOW",
    "INVERSION_MODERATE_MIN_C",
    "INVERSION_STRONG_MIN_C",
    "INVERSION_WEAK_MIN_C",
    "MAX_WIND_FOR_FANS_M_S",
    "MIN_USEFUL_INVERSION_C",
    "WindMachineSuitability",
    "classify_inversion",
    "wind_machine_gain_c",
    "wind_machine_suitability",
]

# Below this an inversion is within the error of a tower/crop sensor pair: "none"
# (engineering choice, common practice for paired thermometers of ~0.2-0.3 degC accuracy).
INVERSION_WEAK_MIN_C: Final = 0.5
# Minimum useful inversion for fans, 1.5-2 degC between 1.5 m and 10 m (common practice);
# consistent with Goodall et al. (1957) calling < 2.8 degC over 12-15 m weak.
INVERSION_MODERATE_MIN_C: Final = 1.5
MIN_USEFUL_INVERSION_C: Final = 1.5
# "Strong" when >= 3 degC (Niagara vineyards, Ker et al. 2007; Shaw 2001, over ~20 m;
# taken here for a ~10 m tower).
INVERSION_STRONG_MIN_C: Final = 3.0

# Wind machines not recommended above 2.5 m s-1: an inversion is unlikely (FAO-FP p. 160).
MAX_WIND_FOR_FANS_M_S: Final = 2.5

# Warming at crop height as a fraction of the inversion. No published rule exists
# (frost-physics.md 10); the band is read from the one measured case, McMeeking et al. (2002):
# a 3.5 degC inversion gave 1-2 degC of warming, a fraction of 0.29-0.57. The sufficiency
# judgement uses only the low end (0.3, the measured lower bound); the default 0.4 and the high
# end are an ENGINEERING ASSUMPTION within that measured band, shown as a range.
GAIN_FRACTION_LOW: Final = 0.3
GAIN_FRACTION_DEFAULT: Final = 0.4
GAIN_FRACTION_HIGH: Final = 0.5


def classify_inversion(inversion_c: float) -> str:
    """Name the strength of a tower-minus-crop temperature inversion.

    Parameters
    ----------
    inversion_c : float
        T(tower) - T(crop height) [degC]; negative means no inversion (a lapse).

    Returns
    -------
    str
        "none" (< 0.5), "weak" (0.5 to < 1.5), "moderate" (1.5 to < 3.0), "strong"
        (>= 3.0), or "unknown" for NaN.

    Notes
    -----
    Thresholds: 0.5 degC, sensor-pair resolution (engineering choice); 1.5 degC, the
    minimum useful for fans (common practice, 1.5-2 degC; Goodall et al. 1957: weak
    < 2.8 degC over 12-15 m); 3.0 degC, "strong" in the Niagara studies (Ker et al. 2007;
    Shaw 2001).

    References
    ----------
    See module references [2]_ and [3]_.
    """
    if math.isnan(inversion_c):
        return "unknown"
    if inversion_c < INVERSION_WEAK_MIN_C:
        return "none"
    if inversion_c < INVERSION_MODERATE_MIN_C:
        return "weak"
    if inversion_c < INVERSION_STRONG_MIN_C:
        return "moderate"
    return "strong"


def _check_fraction(gain_fraction: float) -> None:
    if not 0.0 <= gain_fraction <= 1.0:
        raise ValueError(
            f"gain_fraction {gain_fraction!r}; expected a fraction 0-1 (default 0.4)"
        )


def wind_machine_gain_c(
    inversion_c: float, gain_fraction: float = GAIN_FRACTION_DEFAULT
) -> float:
    """Expected warming at crop height from running a wind machine.

    Parameters
    ----------
    inversion_c : float
        T(tower) - T(crop height) [degC].
    gain_fraction : float, optional
        Fraction of the inversion recovered at crop height [-]; default 0.4, band 0.3-0.5
        (within McMeeking et al. 2002's measured 0.29-0.57; an engineering assumption).

    Returns
    -------
    float
        Expected warming [degC]; 0 when there is no inversion; NaN for a NaN inversion.

    Raises
    ------
    ValueError
        If ``gain_fraction`` is outside 0-1.

    Notes
    -----
    ``gain = f * max(inversion, 0)``. Measured case: McMeeking et al. (2002), a 3.5 degC
    inversion gave about 1-2 degC near the machine. The gain falls off roughly as the
    inverse square of distance from the tower (FAO-FP p. 28).
    """
    _check_fraction(gain_fraction)
    if math.isnan(inversion_c):
        return math.nan
    return gain_fraction * max(inversion_c, 0.0)


@dataclass(frozen=True)
class WindMachineSuitability:
    """Whether fans should help tonight, and why.

    Attributes
    ----------
    useful : bool
        True when wind, fog and inversion allow fans to warm the crop.
    sufficient : bool
        True when useful and the projected minimum plus the low-band gain stays at or
        above the critical temperature plus the margin.
    expected_gain_c : float
        Warming at the chosen gain fraction [degC]; 0 when not useful.
    expected_gain_low_c, expected_gain_high_c : float
        Warming at fractions 0.3 and 0.5 [degC]; 0 when not useful.
    reasons : tuple of str
        Plain-English reasons, each naming its source.
    """

    useful: bool
    sufficient: bool
    expected_gain_c: float
    expected_gain_low_c: float
    expected_gain_high_c: float
    reasons: tuple[str, ...]


def wind_machine_suitability(
    inversion_c: float,
    wind_speed_m_s: float,
    projected_min_c: float,
    critical_c: float,
    supercooled_fog: bool = False,
    min_inversion_c: float = MIN_USEFUL_INVERSION_C,
    max_wind_m_s: float = MAX_WIND_FOR_FANS_M_S,
    gain_fraction: float = GAIN_FRACTION_DEFAULT,
    margin_c: float = 0.0,
) -> WindMachineSuitability:
    """Judge whether wind machines will help and whether they alone will hold the crop.

    Parameters
    ----------
    inversion_c : float
        T(tower) - T(crop height), measured or projected [degC].
    wind_speed_m_s : float
        Wind speed [m s-1].
    projected_min_c : float
        Projected minimum air temperature at crop height without protection [degC].
    critical_c : float
        Critical temperature of the stage [degC].
    supercooled_fog : bool, optional
        True when supercooled fog is present or expected.
    min_inversion_c : float, optional
        Minimum useful inversion [degC]; default 1.5 (common practice).
    max_wind_m_s : float, optional
        Wind above which fans are not used [m s-1]; default 2.5 (FAO-FP p. 160).
    gain_fraction : float, optional
        Fraction of the inversion recovered at crop height [-]; default 0.4.
    margin_c : float, optional
        Safety margin above the critical temperature [degC]: fans are sufficient only when the
        projected minimum plus the low-band gain reaches ``critical_c + margin_c`` (buds run
        1-2 degC below screen air on clear nights, so holding the air at T10 is not enough).

    Returns
    -------
    WindMachineSuitability
        Never useful in wind above ``max_wind_m_s``, in supercooled fog, with an
        inversion below ``min_inversion_c``, or with a NaN wind or inversion.

    Raises
    ------
    ValueError
        If ``gain_fraction`` is outside 0-1.

    References
    ----------
    .. [1] Snyder & de Melo-Abreu (2005), FAO-FP p. 160 (wind limit, supercooled fog).
    .. [2] McMeeking et al. (2002) (gain); Goodall et al. (1957) (weak inversions).
    """
    _check_fraction(gain_fraction)
    reasons: list[str] = []
    useful = True
    if math.isnan(wind_speed_m_s):
        useful = False
        reasons.append("wind speed unknown: cannot judge fans")
    elif wind_speed_m_s > max_wind_m_s:
        useful = False
        reasons.append(
            f"too windy for fans: {wind_speed_m_s:.1f} m/s > {max_wind_m_s:.1f} m/s (FAO-FP p.160)"
        )
    if supercooled_fog:
        useful = False
        reasons.append(
            "supercooled fog: ice on a blade can break it off (FAO-FP p.160)"
        )
    if math.isnan(inversion_c):
        useful = False
        reasons.append("inversion unknown: cannot judge fans")
    elif inversion_c < min_inversion_c:
        useful = False
        reasons.append(
            f"inversion {classify_inversion(inversion_c)}: {inversion_c:.1f} C "
            f"(< {min_inversion_c:.1f} C minimum useful, common practice)"
        )
    else:
        reasons.append(
            f"inversion {classify_inversion(inversion_c)}: {inversion_c:.1f} C"
        )

    if useful:
        gain = wind_machine_gain_c(inversion_c, gain_fraction)
        gain_low = wind_machine_gain_c(inversion_c, GAIN_FRACTION_LOW)
        gain_high = wind_machine_gain_c(inversion_c, GAIN_FRACTION_HIGH)
        reasons.append(
            f"expected warming {gain:.1f} C ({gain_low:.1f}-{gain_high:.1f} C at 30-50 % of "
            "the inversion; engineering assumption)"
        )
    else:
        gain = gain_low = gain_high = 0.0

    sufficient = False
    line_c = critical_c + margin_c
    if math.isnan(projected_min_c) or math.isnan(line_c):
        reasons.append("projected minimum or critical temperature unknown")
    else:
        deficit_c = line_c - projected_min_c
        if deficit_c <= 0:
            reasons.append(
                f"projected minimum {-deficit_c:.1f} C above critical + margin: no protection "
                "needed on this projection"
            )
            sufficient = useful
        elif useful and gain_low >= deficit_c:
            sufficient = True
            reasons.append(
                f"projected minimum {deficit_c:.1f} C below critical + margin: fans should hold it"
            )
        elif useful:
            reasons.append(
                f"projected minimum {deficit_c:.1f} C below critical + margin: fans alone will "
                "not hold it; consider sprinklers or heaters with fans"
            )
        else:
            reasons.append(
                f"projected minimum {deficit_c:.1f} C below critical + margin and fans will not "
                "help: consider sprinklers or heaters"
            )
    return WindMachineSuitability(
        useful=useful,
        sufficient=sufficient,
        expected_gain_c=gain,
        expected_gain_low_c=gain_low,
        expected_gain_high_c=gain_high,
        reasons=tuple(reasons),
    )
