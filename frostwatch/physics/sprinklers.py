"""Over-plant sprinkler physics: latent-heat budget, required rate, water volume, start/stop.

Pure: no I/O, no clock. SI units, temperatures in degC.

References
----------
.. [1] Snyder, R.L. & de Melo-Abreu, J.P. (2005). Frost Protection: fundamentals,
   practice and economics, Vol. 1. FAO, Rome ("FAO-FP"). p. 168 and Table 7.5
   (start and stop air temperatures from dew point and wet bulb).
.. [2] Harrison, D.S., Gerber, J.F. & Choate, R.E. Sprinkler irrigation for cold
   protection. Univ. Florida IFAS Circular 348 (stopping rule, as quoted by UF/IFAS).
.. [3] McAdams, W.H. (1954). Heat Transmission, 3rd ed. McGraw-Hill (wind convection
   coefficient h = 5.7 + 3.8 u for a flat plate; from memory).
.. [4] Allen, R.G., Pereira, L.S., Raes, D. & Smith, M. (1998). FAO Irrigation and
   Drainage Paper 56, Annex 3 (latent heat of vaporisation, after Harrison 1963).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Final

from frostwatch.physics.humidity import air_temp_c_for_wet_bulb

__all__ = [
    "CONVECTION_A_W_M2_K",
    "GERBER_HARRISON_SOURCE",
    "RateTonight",
    "TableRate",
    "CONVECTION_B_J_M3_K",
    "LATENT_HEAT_FUSION_J_KG",
    "LATENT_HEAT_SUBLIMATION_J_KG",
    "LATENT_HEAT_VAPORISATION_J_KG",
    "MAX_WIND_FOR_SPRINKLING_M_S",
    "capacity_adequate",
    "evaporation_break_even_frac",
    "gerber_harrison_rate_mm_h",
    "iced_surface_net_loss_w_m2",
    "heat_released_w_m2_per_mm_h",
    "net_heat_w_m2",
    "peak_flow_l_s",
    "rate_shortfall_mm_h",
    "rate_tonight_mm_h",
    "required_application_rate_mm_h",
    "sprinkler_start_air_temp_c",
    "sprinkler_stop_ok",
    "water_volume_m3",
]

# Latent heat of fusion of water at 0 degC [J kg-1]: 0.334 MJ kg-1 (frost-physics.md 4.2;
# standard value, from memory).
LATENT_HEAT_FUSION_J_KG: Final = 333.6e3
# Latent heat of vaporisation at 0 degC [J kg-1]: Lv(T) = 2.501 - 0.002361 T MJ kg-1
# (Harrison 1963, as in FAO-56 Annex 3; from memory).
LATENT_HEAT_VAPORISATION_J_KG: Final = 2.501e6
# Latent heat of sublimation at 0 degC [J kg-1] = Lv + Lf = 2.834 MJ kg-1.
LATENT_HEAT_SUBLIMATION_J_KG: Final = (
    LATENT_HEAT_VAPORISATION_J_KG + LATENT_HEAT_FUSION_J_KG
)

# Bulk convective transfer coefficient h = a + b*u [W m-2 K-1], u in m s-1: the McAdams
# (1954) flat-plate wind relation (from memory). An ENGINEERING ASSUMPTION: it treats the
# iced plant as one surface per square metre of ground; real canopies expose more iced
# area, so this runs low in wind (see required_application_rate_mm_h Notes).
CONVECTION_A_W_M2_K: Final = 5.7
CONVECTION_B_J_M3_K: Final = 3.8

# Above about 10 mph (4.5 m s-1) over-plant sprinkling is not advised (Virginia Tech
# extension text, frost-physics.md 4.2).
MAX_WIND_FOR_SPRINKLING_M_S: Final = 4.5

_SECONDS_PER_HOUR: Final = 3600.0
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
    return LATENT_HEAT_FUSION_J_KG / _SECONDS_PER_HOUR


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
    _check_frac(evaporated_frac)
    if application_rate_mm_h < 0:
        raise ValueError(
            f"application_rate_mm_h {application_rate_mm_h!r}; expected >= 0"
        )
    factor = 1.0 - _sublimation_to_fusion_ratio() * evaporated_frac
    return heat_released_w_m2_per_mm_h() * application_rate_mm_h * factor


def _check_frac(evaporated_frac: float) -> None:
    if not 0.0 <= evaporated_frac <= 1.0:
        raise ValueError(
            f"evaporated_frac {evaporated_frac!r}; expected a fraction 0-1"
        )


def required_application_rate_mm_h(
    net_longwave_loss_w_m2: float,
    wind_speed_m_s: float,
    air_temp_c: float,
    target_temp_c: float,
    evaporated_frac: float = 0.05,
    convection_a_w_m2_k: float = CONVECTION_A_W_M2_K,
    convection_b_j_m3_k: float = CONVECTION_B_J_M3_K,
) -> float:
    """Application rate whose latent heat of freezing balances the plant's heat loss.

    Parameters
    ----------
    net_longwave_loss_w_m2 : float
        Net longwave loss of the iced surface, positive upward [W m-2].
    wind_speed_m_s : float
        Wind speed near the crop [m s-1].
    air_temp_c : float
        Air temperature expected at the crop (e.g. the projected minimum) [degC].
    target_temp_c : float
        Temperature at which the ice-water film is to be held [degC], e.g. 0 or the
        critical temperature plus a margin.
    evaporated_frac : float, optional
        Fraction of applied water that evaporates or sublimes [-], default 0.05.
    convection_a_w_m2_k, convection_b_j_m3_k : float, optional
        Coefficients of ``h = a + b u`` [W m-2 K-1] and [W m-2 K-1 per m s-1];
        defaults 5.7 and 3.8 (McAdams 1954, an engineering assumption).

    Returns
    -------
    float
        Required rate [mm h-1]; 0 when there is no net loss; ``inf`` when
        ``evaporated_frac`` is at or above the break-even fraction (no rate suffices);
        NaN if an input is NaN.

    Raises
    ------
    ValueError
        If ``evaporated_frac`` is outside 0-1 or the wind speed is negative.

    Notes
    -----
    ``AR = (Rn + h (Tt - Ta)+) / (92.7 (1 - 8.49 x))`` with ``h = a + b u``. The sensible
    term is floored at zero: air warmer than the target never lowers the rate, so the rate
    never decreases with wind or with colder air.

    This is a lower bound. It counts one iced surface per square metre of ground and a
    fixed evaporated fraction, whereas a canopy exposes more iced area and evaporates more
    in wind. Against the (from memory) Gerber & Harrison (1964) table of frost-physics.md
    4.2 it agrees to within a factor of about 2 in calm and light wind down to about
    -6 degC, and runs lower in colder or windier cells. Do not sprinkle above about
    4.5 m s-1 (`MAX_WIND_FOR_SPRINKLING_M_S`).

    References
    ----------
    .. [1] frost-physics.md 4.2, heat budget [computed].
    .. [2] McAdams, W.H. (1954). Heat Transmission, 3rd ed. (from memory).
    """
    _check_frac(evaporated_frac)
    inputs = (net_longwave_loss_w_m2, wind_speed_m_s, air_temp_c, target_temp_c)
    if any(math.isnan(v) for v in inputs):
        return math.nan
    if wind_speed_m_s < 0:
        raise ValueError(f"wind_speed_m_s {wind_speed_m_s!r}; expected >= 0")
    h_w_m2_k = convection_a_w_m2_k + convection_b_j_m3_k * wind_speed_m_s
    sensible_loss_w_m2 = max(h_w_m2_k * (target_temp_c - air_temp_c), 0.0)
    loss_w_m2 = max(net_longwave_loss_w_m2, 0.0) + sensible_loss_w_m2
    if loss_w_m2 == 0.0:
        return 0.0
    factor = 1.0 - _sublimation_to_fusion_ratio() * evaporated_frac
    if factor <= 0.0:
        return math.inf
    return loss_w_m2 / (heat_released_w_m2_per_mm_h() * factor)


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
    return application_rate_mm_h * area_ha * _M3_PER_MM_HA * 1000.0 / _SECONDS_PER_HOUR


def sprinkler_start_air_temp_c(
    dew_point_c: float,
    critical_c: float,
    margin_c: float = 0.0,
    pressure_hpa: float = 1013.25,
) -> float:
    """Air temperature at which the wet bulb falls to the critical temperature plus a margin.

    Sprinklers must be running before the air cools to this temperature: once water
    starts evaporating, the wetted buds fall towards the wet bulb.

    Parameters
    ----------
    dew_point_c : float
        Dew point over liquid water, as hygrometers report it [degC].
    critical_c : float
        Critical bud temperature of the stage [degC].
    margin_c : float, optional
        Safety margin added to ``critical_c`` [degC].
    pressure_hpa : float, optional
        Station pressure [hPa].

    Returns
    -------
    float
        Start air temperature [degC]; NaN when the dew point is above the target wet
        bulb. The wet bulb can never fall below the dew point, so the air temperature
        itself then governs: start no later than the air reaching the target.

    Notes
    -----
    Uses `frostwatch.physics.humidity.air_temp_c_for_wet_bulb` (ASHRAE psychrometrics,
    ice bulb below 0 degC). This is the FAO-FP Table 7.5 method; frost-physics.md 10 gives
    rechecked values (e.g. Td -10, Tc -2: 2.0 degC).

    References
    ----------
    .. [1] Snyder & de Melo-Abreu (2005), FAO-FP p. 168, Table 7.5.
    """
    target_wet_bulb_c = critical_c + margin_c
    if math.isnan(dew_point_c) or math.isnan(target_wet_bulb_c):
        return math.nan
    if dew_point_c > target_wet_bulb_c:
        return math.nan
    return float(air_temp_c_for_wet_bulb(target_wet_bulb_c, dew_point_c, pressure_hpa))


def sprinkler_stop_ok(
    after_sunrise: bool,
    wet_bulb_c: float,
    critical_c: float,
    wet_bulb_trend_c_per_h: float,
    margin_c: float = 0.0,
) -> bool:
    """Whether over-plant sprinklers may be stopped.

    Parameters
    ----------
    after_sunrise : bool
        True once the sun has risen at the site.
    wet_bulb_c : float
        Current (upwind) wet-bulb temperature [degC].
    critical_c : float
        Critical bud temperature of the stage [degC].
    wet_bulb_trend_c_per_h : float
        Recent rate of change of the wet bulb [degC h-1].
    margin_c : float, optional
        Margin the wet bulb must exceed the critical temperature by [degC].

    Returns
    -------
    bool
        True only after sunrise, with the wet bulb above ``critical_c + margin_c`` and
        rising. Never True while the wet bulb is at or below critical, and False for any
        NaN input.

    Notes
    -----
    FAO-FP also allows stopping when all the ice is melting (water between ice and
    twig); that observation is the grower's, not this rule's. UF/IFAS Circ. 348: a wet
    bulb of 0 degC or more is safe for any part of the plant.

    References
    ----------
    .. [1] Snyder & de Melo-Abreu (2005), FAO-FP p. 168.
    .. [2] Harrison, Gerber & Choate, UF/IFAS Circular 348.
    """
    values = (wet_bulb_c, critical_c, wet_bulb_trend_c_per_h, margin_c)
    if not all(math.isfinite(v) for v in values):
        return False
    return (
        bool(after_sunrise)
        and wet_bulb_c > critical_c + margin_c
        and wet_bulb_trend_c_per_h > 0
    )


# ---- the Gerber & Harrison (1964) / UF Circ. 287 table: a labelled cross-check ----------------

# FROM MEMORY, every cell unverified (frost-physics.md 4.2 and 10): application rate [in h-1] by
# minimum temperature [degF] (rows, warm to cold) and wind class [mph] (columns, calm to windy).
# None is a cell the table leaves empty. Used only as a cross-check of the heat budget, looked up
# in the grower's favour: the windier class and the colder row, never interpolated.
GERBER_HARRISON_WIND_CLASSES_MPH: Final = ((0.0, 1.0), (2.0, 4.0), (5.0, 8.0), (10.0, 14.0), (18.0, 22.0))
GERBER_HARRISON_ROWS_F: Final = (
    (27.0, (0.10, 0.10, 0.10, 0.10, 0.20)),
    (26.0, (0.10, 0.10, 0.14, 0.20, 0.40)),
    (24.0, (0.10, 0.16, 0.30, 0.40, 0.80)),
    (22.0, (0.12, 0.24, 0.50, 0.60, 1.00)),
    (20.0, (0.16, 0.30, 0.60, 0.80, None)),
    (18.0, (0.20, 0.40, 0.70, 1.00, None)),
    (15.0, (0.26, 0.50, 0.90, None, None)),
    (11.0, (0.34, 0.70, None, None, None)),
)
GERBER_HARRISON_SOURCE: Final = (
    "Gerber & Harrison (1964) / UF Ext. Circ. 287 table, from memory (cells unverified)"
)
_MM_PER_IN: Final = 25.4
_M_S_PER_MPH: Final = 0.44704


@dataclass(frozen=True)
class TableRate:
    """A cell of the Gerber & Harrison table as looked up for tonight.

    Attributes
    ----------
    rate_mm_h : float or None
        The cell [mm h-1]; None where the table has no cell this cold or this windy.
    row_min_temp_f : float or None
        The row used [degF] (the row at or colder than tonight's minimum).
    wind_class_mph : tuple of float or None
        The wind class used [mph] (the class whose upper bound is at or above tonight's wind).
    note : str
        How the cell was chosen, or why there is none.
    """

    rate_mm_h: float | None
    row_min_temp_f: float | None
    wind_class_mph: tuple[float, float] | None
    note: str


def gerber_harrison_rate_mm_h(min_temp_c: float, wind_speed_m_s: float) -> TableRate:
    """Look up the (from memory) Gerber & Harrison application-rate table, in the grower's favour.

    Parameters
    ----------
    min_temp_c : float
        Expected minimum air temperature [degC].
    wind_speed_m_s : float
        Wind speed [m s-1].

    Returns
    -------
    TableRate
        The cell of the colder row (the first row at or below ``min_temp_c``; the 27 degF row
        for anything warmer) and the windier class (the first class whose upper bound is at or
        above the wind; a wind between two classes takes the windier one). ``rate_mm_h`` is
        None when the minimum is colder than the table's last row, the wind is above its last
        class, the cell is empty, or an input is NaN.

    Notes
    -----
    Never interpolated: interpolation would put a value between two cells, and the lower of
    them is the grower's disfavour. Every cell is from memory (frost-physics.md 10): this is a
    labelled cross-check of `required_application_rate_mm_h`, never the only figure.

    References
    ----------
    .. [1] Gerber, J.F. & Harrison, D.S. (1964); Univ. Florida Ext. Circ. 287 (from memory).
    """
    if math.isnan(min_temp_c) or math.isnan(wind_speed_m_s):
        return TableRate(None, None, None, "temperature or wind unknown: no table cell")
    min_f = min_temp_c * 9.0 / 5.0 + 32.0
    wind_mph = max(wind_speed_m_s, 0.0) / _M_S_PER_MPH
    row = next((r for r in GERBER_HARRISON_ROWS_F if r[0] <= min_f + 1e-9), None)
    if min_f >= GERBER_HARRISON_ROWS_F[0][0]:
        row = GERBER_HARRISON_ROWS_F[0]
    col = next(
        (i for i, (_lo, hi) in enumerate(GERBER_HARRISON_WIND_CLASSES_MPH) if wind_mph <= hi + 1e-9),
        None,
    )
    if row is None:
        return TableRate(None, None, None, f"{min_f:.0f} F is colder than the table's last row (11 F)")
    if col is None:
        return TableRate(None, row[0], None, f"wind {wind_mph:.0f} mph is above the table's last class (22 mph)")
    cls = GERBER_HARRISON_WIND_CLASSES_MPH[col]
    cell = row[1][col]
    if cell is None:
        return TableRate(None, row[0], cls, f"the table has no cell for {row[0]:.0f} F at {cls[0]:.0f}-{cls[1]:.0f} mph")
    return TableRate(
        cell * _MM_PER_IN,
        row[0],
        cls,
        f"{row[0]:.0f} F row, {cls[0]:.0f}-{cls[1]:.0f} mph class: {cell:.2f} in/h (colder row, windier class)",
    )


def iced_surface_net_loss_w_m2(
    air_temp_c: float, vapour_pressure_hpa: float, cloud_frac: float = 0.0
) -> float:
    """Net longwave loss of a plant held at 0 degC under freezing water, positive upward [W m-2].

    Notes
    -----
    The radiating surface is the ice-water film at 0 degC (the point of sprinkling), under a
    Brutsaert (1975) sky at the air temperature with the Jacobs (1978) cloud correction, via
    `frostwatch.physics.radiation.net_longwave_w_m2`. NaN outside that function's range.
    """
    from frostwatch.physics.radiation import net_longwave_w_m2

    return -float(net_longwave_w_m2(air_temp_c, vapour_pressure_hpa, cloud_frac=cloud_frac, surface_temp_c=0.0))


@dataclass(frozen=True)
class RateTonight:
    """The application rate tonight needs: heat budget, table cross-check, and which governed.

    Attributes
    ----------
    required_mm_h : float
        The larger of the two figures [mm h-1] (NaN when neither is known).
    heat_budget_mm_h : float
        From `required_application_rate_mm_h` [mm h-1].
    table : TableRate
        The cross-check cell.
    governed_by : str
        "heat budget" or "table (from memory)".
    net_loss_w_m2 : float
        Net longwave loss of the iced surface [W m-2].
    beyond_table : bool
        True when tonight is colder or windier than any cell of the table: the requirement is
        then a floor only (the largest cell of the row at lower wind, or the heat budget), and
        over-plant sprinkling is unlikely to protect.
    """

    required_mm_h: float
    heat_budget_mm_h: float
    table: TableRate
    governed_by: str
    net_loss_w_m2: float
    beyond_table: bool = False


def rate_tonight_mm_h(
    min_temp_c: float,
    dew_point_c: float,
    wind_speed_m_s: float,
    cloud_frac: float = 0.0,
    evaporated_frac: float = 0.05,
) -> RateTonight:
    """Application rate for tonight: the heat budget, checked against the table, the larger governs.

    Parameters
    ----------
    min_temp_c : float
        Expected minimum air temperature [degC].
    dew_point_c : float
        Dew point [degC] (capped at the air temperature).
    wind_speed_m_s : float
        Wind speed [m s-1]; NaN gives a NaN heat-budget figure (do not pass 0 for unknown).
    cloud_frac : float, optional
        Cloud fraction [-].
    evaporated_frac : float, optional
        Evaporated fraction of the water [-], default 0.05.

    Notes
    -----
    The heat budget holds the iced plant at 0 degC: net longwave of a 0 degC surface plus the
    sensible loss ``(5.7 + 3.8 u) (0 - Ta)``, over ``92.7 (1 - 8.49 x)``. It is a lower bound
    (it counts one iced surface per m2 of ground), so the table cell is taken whenever it is
    higher, as frost-physics.md 10 asks.
    """
    from frostwatch.physics.humidity import vapour_pressure_hpa_from_dew_point

    e_hpa = float(vapour_pressure_hpa_from_dew_point(min(dew_point_c, min_temp_c)))
    loss = iced_surface_net_loss_w_m2(min_temp_c, e_hpa, cloud_frac)
    budget = required_application_rate_mm_h(max(loss, 0.0), wind_speed_m_s, min_temp_c, 0.0, evaporated_frac) \
        if math.isfinite(loss) else math.nan
    table = gerber_harrison_rate_mm_h(min_temp_c, wind_speed_m_s)
    beyond = table.rate_mm_h is None and not (math.isnan(min_temp_c) or math.isnan(wind_speed_m_s))
    table_floor = table.rate_mm_h
    if beyond:
        # colder or windier than any cell: the largest cell of the row (or of the last row) is a floor
        row = next((r for r in GERBER_HARRISON_ROWS_F if r[0] == table.row_min_temp_f), GERBER_HARRISON_ROWS_F[-1])
        table_floor = max(c for c in row[1] if c is not None) * _MM_PER_IN
    candidates = [v for v in (budget, table_floor) if v is not None and not math.isnan(v)]
    if not candidates:
        return RateTonight(math.nan, budget, table, "unknown", loss, beyond)
    required = max(candidates)
    governed = "table (from memory)" if table_floor is not None and (math.isnan(budget) or table_floor > budget) else "heat budget"
    return RateTonight(required, budget, table, governed, loss, beyond)
