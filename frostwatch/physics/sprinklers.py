"""Over-plant sprinkler physics: the heat budget of an iced plant, the rate it asks for, water
volume, and the start and stop temperatures.

Pure: no I/O, no clock. SI units, temperatures in degC.

The application rate comes from the heat budget alone: an iced plant held at 0 degC loses heat
by net longwave radiation, by convection to colder air and by sublimation to drier air, and the
water freezing on it must release that much latent heat (FAO-FP 2005 ch. 7: protection lasts
while freezing water replaces the energy lost). No application-rate table is used: the cells of
the Gerber & Harrison (1964) / UF Circ. 287 table could not be read in a printed source
(frost-physics.md 10), so they govern nothing here.

References
----------
.. [1] Snyder, R.L. & de Melo-Abreu, J.P. (2005). Frost Protection: fundamentals,
   practice and economics, Vol. 1. FAO, Rome ("FAO-FP"). ch. 7, p. 168 and Table 7.5
   (start and stop air temperatures from dew point and wet bulb).
.. [2] Harrison, D.S., Gerber, J.F. & Choate, R.E. Sprinkler irrigation for cold
   protection. Univ. Florida IFAS Circular 348 (stopping rule, as quoted by UF/IFAS).
.. [3] Allen, R.G. et al. (1998). FAO-56, ch. 3 eq. 4 (aerodynamic resistance), via
   `frostwatch.physics.exchange`.
.. [4] Longstroth, M. (2012). Using sprinklers to protect plants from spring freezes. MSU
   Extension: 0.12-0.15 in/h (3.0-3.8 mm/h) protects to about 22 F (-5.6 degC) with no wind,
   24-25 F (-4.4 to -3.9 degC) in light wind (frost-physics.md 4.2 and 10, confirmed).
.. [5] Cooper, Smith & Martsolf (1997), J. Appl. Meteorol. 36: 155: over-tree systems under
   2.5 mm/h were judged unsafe for citrus after the 1962 advective freeze (frost-physics.md 10).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Final

from frostwatch.constants import (
    LATENT_HEAT_FUSION_J_KG,
    LATENT_HEAT_SUBLIMATION_J_KG,
    SECONDS_PER_HOUR_S,
    STANDARD_PRESSURE_HPA,
)
from frostwatch.physics.exchange import aerodynamic_resistance_s_m, iced_surface_exchange_w_m2
from frostwatch.physics.iced_canopy_floats import iced_canopy_heat_loss_f
from frostwatch.physics.saturation import vapour_pressure_hpa_from_dew_point
from frostwatch.physics.sprinkler_timing import (  # noqa: F401 - the start and stop rules, re-exported
    FALLBACK_STOP_MARGIN_C,
    MIN_RISE_C_PER_H,
    fallback_stop_air_temp_c,
    sprinkler_start_air_temp_c,
    sprinkler_stop_ok,
)

__all__ = [
    "CALM_WIND_FLOOR_M_S",
    "FALLBACK_STOP_MARGIN_C",
    "IcedCanopyLoss",
    "MAX_WIND_FOR_SPRINKLING_M_S",
    "MIN_RISE_C_PER_H",
    "PRACTICE_CALM_PROTECTS_TO_C",
    "PRACTICE_LIGHT_WIND_PROTECTS_TO_C",
    "PRACTICE_RATE_MM_H",
    "PRACTICE_SOURCE",
    "RateTonight",
    "TableRate",
    "capacity_adequate",
    "evaporation_break_even_frac",
    "fallback_stop_air_temp_c",
    "heat_released_w_m2_per_mm_h",
    "iced_canopy_heat_loss",
    "net_heat_w_m2",
    "peak_flow_l_s",
    "rate_for_heat_loss_mm_h",
    "rate_shortfall_mm_h",
    "rate_tonight_mm_h",
    "sprinkler_start_air_temp_c",
    "sprinkler_stop_ok",
    "water_volume_m3",
]

# Above about 10 mph (4.5 m s-1) over-plant sprinkling is not advised (Virginia Tech
# extension text, frost-physics.md 4.2).
MAX_WIND_FOR_SPRINKLING_M_S: Final = 4.5
# Below this the wind is taken as this in the heat budget: calm air over a clear frost night still
# mixes, and a cup anemometer stalls below about this speed (ENGINEERING CHOICE; it raises the
# rate, never lowers it).
CALM_WIND_FLOOR_M_S: Final = 0.5
# The rate extension practice reports protecting, for the reasons: Longstroth (2012), MSU.
PRACTICE_RATE_MM_H: Final = (3.0, 3.8)
PRACTICE_CALM_PROTECTS_TO_C: Final = -5.6  # 22 F
PRACTICE_LIGHT_WIND_PROTECTS_TO_C: Final = (-4.4, -3.9)  # 24-25 F
PRACTICE_SOURCE: Final = ("3.0-3.8 mm/h protects to about -5.6 °C in calm air and to -4.4 to -3.9 °C in "
                          "light wind (Longstroth 2012, MSU Extension)")
_M3_PER_MM_HA: Final = 10.0  # 1 mm of water over 1 ha = 10 m3


def heat_released_w_m2_per_mm_h() -> float:
    """Heat released by freezing water applied at 1 mm h-1.

    Returns
    -------
    float
        Heat flux per unit application rate [W m-2 per mm h-1]; about 92.7
        (frost-physics.md 4.2 gives 92.8 [computed] from Lf = 0.334 MJ kg-1).

    Notes
    -----
    1 mm h-1 is 1 kg m-2 h-1, so the flux is Lf / 3600 s.
    """
    return LATENT_HEAT_FUSION_J_KG / SECONDS_PER_HOUR_S


def _sublimation_to_fusion_ratio() -> float:
    return LATENT_HEAT_SUBLIMATION_J_KG / LATENT_HEAT_FUSION_J_KG  # about 8.49


def evaporation_break_even_frac() -> float:
    """Fraction of applied water that may evaporate before sprinkling stops warming.

    Returns
    -------
    float
        Break-even evaporated fraction [-], about 0.118.

    Notes
    -----
    Per kg applied, freezing releases Lf and each evaporated or sublimed kg absorbs Ls,
    so the net heat is ``Lf (1 - (Ls/Lf) x) = Lf (1 - 8.49 x)``; it is zero at
    ``x = Lf / Ls``. Above that, sprinkling cools the plant (frost-physics.md 4.2).
    """
    return 1.0 / _sublimation_to_fusion_ratio()


def net_heat_w_m2(application_rate_mm_h: float, evaporated_frac: float) -> float:
    """Net heat delivered to the plant by over-plant sprinkling.

    Parameters
    ----------
    application_rate_mm_h : float
        Application rate [mm h-1].
    evaporated_frac : float
        Fraction of the applied water that evaporates or sublimes [-], 0-1.

    Returns
    -------
    float
        Net heat [W m-2] (ground area); negative when ``evaporated_frac`` exceeds the
        break-even fraction (sprinkling then cools).

    Raises
    ------
    ValueError
        If ``evaporated_frac`` is outside 0-1 or the rate is negative.

    Notes
    -----
    ``Q = 92.7 * AR * (1 - 8.49 x)`` (frost-physics.md 4.2, [computed]).
    """
    if not 0.0 <= evaporated_frac <= 1.0:
        raise ValueError(f"evaporated_frac {evaporated_frac!r}; expected a fraction 0-1")
    if application_rate_mm_h < 0:
        raise ValueError(f"application_rate_mm_h {application_rate_mm_h!r}; expected >= 0")
    factor = 1.0 - _sublimation_to_fusion_ratio() * evaporated_frac
    return heat_released_w_m2_per_mm_h() * application_rate_mm_h * factor


# ---- the heat budget of the iced plant ----------------------------------------------------------


@dataclass(frozen=True)
class IcedCanopyLoss:
    """Heat an iced plant held at 0 degC loses, per square metre of ground [W m-2, upward].

    Attributes
    ----------
    radiation_w_m2 : float
        Net longwave loss of the 0 degC surface (Stefan-Boltzmann under a Brutsaert sky).
    sensible_w_m2 : float
        Convection to the colder air.
    latent_w_m2 : float
        Sublimation into drier air (negative if vapour deposits).
    wind_used_m_s : float
        The wind the transfer was computed for (at least `CALM_WIND_FLOOR_M_S`).
    """

    radiation_w_m2: float
    sensible_w_m2: float
    latent_w_m2: float
    wind_used_m_s: float

    @property
    def total_w_m2(self) -> float:
        """The sum, never below 0 (a plant gaining heat needs no water)."""
        return max(0.0, self.radiation_w_m2 + self.sensible_w_m2 + self.latent_w_m2)


def iced_canopy_heat_loss(
    air_temp_c: float,
    dew_point_c: float,
    wind_speed_m_s: float,
    pressure_hpa: float = STANDARD_PRESSURE_HPA,
    cloud_frac: float = 0.0,
) -> IcedCanopyLoss:
    """The heat budget of an iced plant held at 0 degC by freezing water.

    Parameters
    ----------
    air_temp_c : float
        Air temperature the plant is exposed to (tonight's expected minimum) [degC].
    dew_point_c : float
        Dew point over water [degC]; capped at the air temperature.
    wind_speed_m_s : float
        Wind speed near the crop [m s-1]; below `CALM_WIND_FLOOR_M_S` it is taken as that.
    pressure_hpa : float, optional
        Station pressure [hPa].
    cloud_frac : float, optional
        Cloud fraction [-], 0-1.

    Returns
    -------
    IcedCanopyLoss
        The three losses; each NaN where an input is NaN or outside a formula's range.

    Notes
    -----
    Radiation: ``L* = sigma (273.15 K)^4 - eps_a sigma Ta^4`` for a 0 degC surface radiating as a
    black body (emissivity 1, an upper bound for ice and water: no tabulated emissivity is needed,
    and the loss errs high by at most a few percent) under a Brutsaert (1975) sky with the Jacobs
    (1978) cloud correction
    (`frostwatch.physics.longwave.net_longwave_w_m2`). Convection and sublimation through one
    aerodynamic resistance, FAO-56 eq. 4 for the reference surface at 2 m (208 / u2 s m-1), in
    the psychrometric form with the WMO ice-bulb coefficient
    (`frostwatch.physics.exchange.iced_surface_exchange_w_m2`).

    It counts one iced surface per square metre of ground and the smooth reference surface's
    transfer, so the rate it gives is a LOWER BOUND: a canopy exposes more iced area and mixes
    more. It is consistent with the published practice checked in the tests: MSU's 3.0-3.8 mm/h
    protects in calm air to about -5.6 degC, where the budget asks for about 1.7 mm/h, and in
    light wind to -4.4 to -3.9 degC, where it asks for about 2.5 mm/h; in a windy, dry freeze it
    asks for more than the 2.5 mm/h Cooper et al. (1997) found unsafe.

    References
    ----------
    .. [1] Snyder & de Melo-Abreu (2005), FAO-FP ch. 7 (the latent heat of freezing replaces
       the energy lost).
    .. [2] Allen et al. (1998), FAO-56 eq. 4; WMO-No. 8 Annex 4.B; Brutsaert (1975).
    """
    values = (air_temp_c, dew_point_c, wind_speed_m_s, pressure_hpa, cloud_frac)
    if any(math.isnan(float(v)) for v in values):
        return IcedCanopyLoss(math.nan, math.nan, math.nan, math.nan)
    if all(type(v) is float for v in values):  # an evaluation's: the same steps on plain floats, to the bit
        wind = max(wind_speed_m_s, CALM_WIND_FLOOR_M_S)
        return IcedCanopyLoss(*iced_canopy_heat_loss_f(air_temp_c, dew_point_c, wind, pressure_hpa, cloud_frac), wind)
    return _iced_canopy_heat_loss_arrays(air_temp_c, dew_point_c, wind_speed_m_s, pressure_hpa, cloud_frac)


def _iced_canopy_heat_loss_arrays(air_temp_c, dew_point_c, wind_speed_m_s, pressure_hpa, cloud_frac) -> IcedCanopyLoss:
    """`iced_canopy_heat_loss` of inputs without NaN, by the vectorised physics functions."""
    from frostwatch.physics.longwave import net_longwave_w_m2

    wind = max(float(wind_speed_m_s), CALM_WIND_FLOOR_M_S)
    e_hpa = float(vapour_pressure_hpa_from_dew_point(min(dew_point_c, air_temp_c)))
    radiation = -float(net_longwave_w_m2(air_temp_c, e_hpa, cloud_frac=cloud_frac, surface_temp_c=0.0,
                                         surface_emissivity=1.0))
    r_a = float(aerodynamic_resistance_s_m(wind))
    sensible, latent = iced_surface_exchange_w_m2(air_temp_c, e_hpa, r_a, pressure_hpa, 0.0)
    return IcedCanopyLoss(radiation, sensible, latent, wind)


def rate_for_heat_loss_mm_h(heat_loss_w_m2: float) -> float:
    """Application rate whose freezing releases `heat_loss_w_m2` [mm h-1]: loss / (Lf / 3600 s).

    0 for no loss; NaN for NaN.
    """
    if math.isnan(heat_loss_w_m2):
        return math.nan
    return max(0.0, heat_loss_w_m2) / heat_released_w_m2_per_mm_h()


@dataclass(frozen=True)
class TableRate:
    """Kept for callers that still read `RateTonight.table`: no table cell is ever looked up."""

    rate_mm_h: float | None = None
    row_min_temp_f: float | None = None
    wind_class_mph: tuple[float, float] | None = None
    note: str = "no printed application-rate table is cited; the heat budget governs"


@dataclass(frozen=True)
class RateTonight:
    """The application rate tonight needs, from the heat budget of the iced plant.

    Attributes
    ----------
    required_mm_h : float
        The heat budget's rate [mm h-1], a lower bound (see `iced_canopy_heat_loss`); NaN when
        unknown.
    heat_budget_mm_h : float
        The same figure (kept under this name for callers).
    table : TableRate
        Always empty: no table governs (kept for callers).
    governed_by : str
        "heat budget".
    net_loss_w_m2 : float
        Net longwave loss of the iced surface [W m-2].
    beyond_table : bool
        Always False (kept for callers).
    sensible_w_m2, latent_w_m2 : float
        Convection and sublimation losses [W m-2].
    wind_used_m_s : float
        The wind the budget was computed for [m s-1].
    """

    required_mm_h: float
    heat_budget_mm_h: float
    table: TableRate
    governed_by: str
    net_loss_w_m2: float
    beyond_table: bool = False
    sensible_w_m2: float = math.nan
    latent_w_m2: float = math.nan
    wind_used_m_s: float = math.nan


def rate_tonight_mm_h(
    min_temp_c: float,
    dew_point_c: float,
    wind_speed_m_s: float,
    cloud_frac: float = 0.0,
    pressure_hpa: float = STANDARD_PRESSURE_HPA,
) -> RateTonight:
    """The application rate tonight's expected minimum asks for: the iced plant's heat budget.

    Parameters
    ----------
    min_temp_c : float
        Expected minimum air temperature [degC].
    dew_point_c : float
        Dew point [degC] (capped at the air temperature).
    wind_speed_m_s : float
        Wind speed [m s-1]; NaN gives NaN (never pass 0 for unknown; pass 0 for the calm-air
        floor).
    cloud_frac : float, optional
        Cloud fraction [-].
    pressure_hpa : float, optional
        Station pressure [hPa].

    Notes
    -----
    ``AR = (L* + H + lambda E) / (Lf / 3600)``: see `iced_canopy_heat_loss`. A system below this
    rate cannot hold the iced buds at 0 degC; one at or above it may still fall short (it is a
    lower bound): compare with `PRACTICE_SOURCE`.
    """
    loss = iced_canopy_heat_loss(min_temp_c, dew_point_c, wind_speed_m_s, pressure_hpa, cloud_frac)
    rate = rate_for_heat_loss_mm_h(loss.total_w_m2) if math.isfinite(loss.radiation_w_m2) else math.nan
    return RateTonight(
        required_mm_h=rate, heat_budget_mm_h=rate, table=TableRate(), governed_by="heat budget",
        net_loss_w_m2=loss.radiation_w_m2, beyond_table=False, sensible_w_m2=loss.sensible_w_m2,
        latent_w_m2=loss.latent_w_m2, wind_used_m_s=loss.wind_used_m_s,
    )


def rate_shortfall_mm_h(required_mm_h: float, capacity_mm_h: float) -> float:
    """Rate the system cannot deliver [mm h-1]: ``max(required - capacity, 0)``.

    Returns ``inf`` when the requirement is infinite and NaN when either input is NaN.
    """
    if math.isnan(required_mm_h) or math.isnan(capacity_mm_h):
        return math.nan
    return max(required_mm_h - capacity_mm_h, 0.0)


def capacity_adequate(required_mm_h: float, capacity_mm_h: float) -> bool:
    """True only when the system's rate meets the requirement; False for NaN or inf inputs."""
    if not (math.isfinite(required_mm_h) and math.isfinite(capacity_mm_h)):
        return False
    return capacity_mm_h >= required_mm_h


def water_volume_m3(
    application_rate_mm_h: float, area_ha: float, hours: float
) -> float:
    """Water used by sprinkling an area [m3]: 1 mm over 1 ha is 10 m3.

    Parameters
    ----------
    application_rate_mm_h : float
        Application rate [mm h-1].
    area_ha : float
        Sprinkled area [ha].
    hours : float
        Running time [h].
    """
    return application_rate_mm_h * area_ha * hours * _M3_PER_MM_HA


def peak_flow_l_s(application_rate_mm_h: float, area_ha: float) -> float:
    """Flow needed to run an area at once [L s-1]: 1 mm h-1 over 1 ha is 2.78 L s-1."""
    return application_rate_mm_h * area_ha * _M3_PER_MM_HA * 1000.0 / SECONDS_PER_HOUR_S
