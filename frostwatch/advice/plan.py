"""The advice plan: what frostwatch advises for one block at one evaluation, as typed values.

Everything a screen or a message says about the advice is rendered from an `AdvicePlan` by
`frostwatch.advice.render`; nothing branches on English wording. The plan is stored with each
evaluation's decision as versioned JSON (`frostwatch.advice.codec`), so the status page, the
`status` command, the alerts and the morning report all show the same plan.

Enumerations are `StrEnum`s: their values are the stable words stored and shown in JSON.
"""

from __future__ import annotations

import datetime as dt
from dataclasses import dataclass
from enum import StrEnum

from frostwatch.quick_init import quick_init

PLAN_VERSION = 2  # bump when a field changes meaning; readers refuse versions they do not know


class Risk(StrEnum):
    """How close the block's night comes to its critical temperature."""

    UNKNOWN = "unknown"  # no healthy crop-height sensor: nothing can be judged
    LOW = "low"  # the projected minimum stays above T10 + margin, band included
    POSSIBLE = "possible"  # within the projection's band of T10 + margin
    LIKELY = "likely"  # the projected minimum reaches T10 + margin
    NOW = "now"  # crop-height air at or below T10 now
    MORNING = "morning"  # after sunrise: the stop rules apply


class Step(StrEnum):
    """The one thing to do now."""

    NOTHING = "nothing"  # nothing to do; frostwatch keeps watching
    WATCH = "watch"  # frost is possible later tonight: nothing to do yet
    GET_READY = "get-ready"  # be ready to protect by the ready-by time
    START_NOW = "start-now"  # start protection now
    KEEP_RUNNING = "keep-running"  # protection is running: keep it running
    EASING = "easing"  # the projection has eased since the level was raised; keep on until the all-clear
    AT_CRITICAL = "at-critical"  # at (or has reached) T10: protect now
    NOT_HOLDING = "not-holding"  # at T10 with protection running: check it and add more
    WAIT_TO_STOP = "wait-to-stop"  # morning: keep it running, the stop rule is not met
    WATCH_TO_STOP = "watch-to-stop"  # morning: the stop rule looks met; watch the trend before stopping
    SAFE_TO_STOP = "safe-to-stop"  # morning: protection may stop
    NIGHT_OVER = "night-over"  # morning, nothing to stop: check the buds later
    CHECK_SENSORS = "check-sensors"  # the block is not monitored: go and look


class Trigger(StrEnum):
    """The temperature that decides: wet bulb for sprinklers (when known), else the air."""

    AIR = "air"
    WET_BULB = "wet-bulb"


class Method(StrEnum):
    """A protection method, as the config's `protection` key names it."""

    WIND_MACHINE = "wind_machine"
    OVERTREE_SPRINKLER = "overtree_sprinkler"
    UNDERTREE_SPRINKLER = "undertree_sprinkler"
    HEATERS = "heaters"
    NONE = "none"

    @property
    def is_sprinkler(self) -> bool:
        return self in (Method.OVERTREE_SPRINKLER, Method.UNDERTREE_SPRINKLER)


class WhyNot(StrEnum):
    """The one reason a method is not advised tonight (the first that applies, in this order)."""

    NO_PROTECTION = "no-protection"  # the block has no protection configured
    SUPERCOOLED_FOG = "supercooled-fog"  # fans: ice on a blade can break it off (FAO-FP p. 160)
    TOO_WINDY_FOR_FANS = "too-windy-for-fans"  # fans: wind above the limit, no inversion to draw on
    INVERSION_UNKNOWN = "inversion-unknown"  # fans: no healthy tower sensor
    INVERSION_WEAK = "inversion-weak"  # fans: too little warmer air aloft
    TOO_WINDY_FOR_SPRINKLERS = "too-windy-for-sprinklers"  # over-tree: wind above about 4.5 m/s
    RATE_SHORT = "rate-short"  # over-tree: the system delivers less than the heat budget's lower bound
    LINES_MAY_FREEZE = "lines-may-freeze"  # under-tree: rate below the minimum that keeps lines open


class Condition(StrEnum):
    """A condition the advice to run a method depends on (said with the action)."""

    WIND_BELOW_FAN_LIMIT = "wind-below-fan-limit"  # the wind is unknown: fans only in light wind
    NO_FOG = "no-fog"  # fog is possible: never run fans in supercooled fog
    CALM_AIR = "calm-air"  # sprinklers: the rate is enough only if the air stays calm (wind unknown)
    # fans: the warm air aloft is still building (a radiation night before the tower's curve exists,
    # no site history): fans only once the tower is at least the minimum useful inversion warmer
    WARM_AIR_ALOFT = "warm-air-aloft"


class Alternative(StrEnum):
    """What else helps when the configured method will not do (or not alone)."""

    ADVECTIVE = "advective"  # in wind little works well; protect what you can, ask your adviser
    FOG_HEATERS_OR_SPRINKLERS = "fog-heaters-or-sprinklers"
    HEATERS_WITH_FANS = "heaters-with-fans"  # weak inversion: heaters with fans, or sprinklers
    ADD_HEATERS = "add-heaters"  # fans help but not enough: add heaters or sprinklers
    SPRINKLERS_ASK_ADVISER = "sprinklers-ask-adviser"  # too little water may do harm
    UNDERTREE_NOT_ENOUGH = "undertree-not-enough"  # under-tree warming alone will not hold T10 + margin
    MORE_HEATERS = "more-heaters"  # the installed heaters fall short: borders, fans, all lit
    HEATERS_WEAK_INVERSION = "heaters-weak-inversion"  # most heat rises away: sprinklers or fans with heaters
    COVERS_OR_MOIST_SOIL = "covers-or-moist-soil"  # no protection configured


class Caution(StrEnum):
    """A caution that travels with the advice."""

    GROWER_DECIDES = "grower-decides"
    CHECK_THERMOMETERS = "check-thermometers"
    LOCAL_RULES = "local-rules"
    FAN_SAFETY = "fan-safety"
    SPRINKLER_SAFETY = "sprinkler-safety"
    HEATER_SAFETY = "heater-safety"
    AIR_QUALITY = "air-quality"  # heaters: the air district's smoke rules; log burn hours
    FOG_LOOK = "fog-look"  # fog is possible: look before starting fans
    WET_BULB_AT_T10 = "wet-bulb-at-t10"  # sprinklers started now cool the buds towards the wet bulb
    SUPPLY_SHORT = "supply-short"  # the water supply feeds only part of the block at the full rate


BASE_CAUTIONS = (Caution.GROWER_DECIDES, Caution.CHECK_THERMOMETERS, Caution.LOCAL_RULES)


# ---- per-method figures ------------------------------------------------------------------------


@quick_init
@dataclass(frozen=True)
class FanFigures:
    """Wind machines: the inversion they draw on and the warming expected at crop height."""

    inversion_c: float | None
    inversion_projected: bool  # True: the projected inversion; False: the measured one
    inversion_class: str | None
    wind_speed_m_s: float | None
    wind_limit_m_s: float
    min_useful_inversion_c: float
    gain_c: float
    gain_low_c: float
    gain_high_c: float
    sufficient: bool  # the projected minimum plus the low-band gain reaches T10 + margin
    shortfall_c: float | None  # how far the projected minimum plus the low-band gain stays below T10 + margin
    tower_station: str | None = None  # the tower the inversion was measured on
    tower_own: bool | None = None  # False: another block's tower or the site-wide one
    tower_site_wide: bool | None = None
    tower_distance_m: float | None = None
    # not known yet: a radiation inversion still building and nothing to project it from; then
    # `inversion_c` is the inversion now and `known_by_utc` when frostwatch will know
    inversion_pending: bool = False
    known_by_utc: dt.datetime | None = None
    # the projected inversion is the median at the minimum of this many past clear nights here
    history_nights: int | None = None


@quick_init
@dataclass(frozen=True)
class SprinklerFigures:
    """Sprinklers: start and stop air temperatures and the rate tonight needs."""

    undertree: bool
    dew_point_c: float | None
    start_air_temp_c: float | None  # the wet bulb reaches T10 + margin at this air temperature
    stop_air_temp_c: float | None  # the wet bulb is at T10 at this air temperature
    wind_speed_m_s: float | None
    wind_limit_m_s: float
    required_mm_h: float | None  # the heat budget (a lower bound); None where the wind is unknown
    calm_air_mm_h: float | None  # the heat budget in calm air: the floor when the wind is unknown
    heat_budget_mm_h: float | None
    net_loss_w_m2: float | None  # net longwave loss of the iced plant at 0 degC
    capacity_mm_h: float | None
    target_low_mm_h: float | None = None  # under-tree: the usual target range
    target_high_mm_h: float | None = None
    min_mm_h: float | None = None  # under-tree: below this the lines may freeze
    dew_point_trend_c_per_h: float | None = None  # tonight's dew-point trend (a fall moves the start earlier)
    start_dew_point_c: float | None = None  # the dew point projected at the crossing: the start uses it
    warming_low_c: float | None = None  # under-tree: expected warming (only under an inversion)
    warming_high_c: float | None = None
    inversion_c: float | None = None  # under-tree: the inversion the warming depends on
    sufficient: bool | None = None  # under-tree: the projected minimum plus the low warming reaches T10 + margin
    shortfall_c: float | None = None  # under-tree: how far it stays below T10 + margin


@quick_init
@dataclass(frozen=True)
class HeaterFigures:
    """Heaters: the heat tonight asks for at T10 + margin, the share the inversion holds, and the
    heaters per hectare that makes with the block's heaters (`physics.heaters.heater_need`)."""

    inversion_c: float | None
    min_useful_inversion_c: float
    target_c: float | None = None  # T10 + margin, the temperature the heaters are to hold
    requirement_w_m2: float | None = None  # net longwave loss there
    retained_frac: float | None = None  # share of the output the inversion holds (None: too weak)
    output_kw_per_ha: float | None = None  # burning output needed per hectare
    heater_kw: float | None = None  # one heater's output (config)
    heaters_per_ha: int | None = None  # heaters of that rating needed per hectare
    installed_per_ha: float | None = None  # heaters installed per hectare (config)
    installed_kw_per_ha: float | None = None
    enough: bool | None = None  # installed output at least the output needed


@quick_init
@dataclass(frozen=True)
class Resources:
    """The night's estimated running hours, water, fuel or energy (only for an advised method)."""

    hours: float
    stop_after_sunrise_h: float
    rate_mm_h: float | None = None
    area_ha: float | None = None
    water_m3: float | None = None
    peak_flow_l_s: float | None = None
    supply_l_s: float | None = None
    fed_area_ha: float | None = None  # the supply runs only this much of the block at the full rate
    fuel_l: float | None = None
    fuel_l_per_h: float | None = None
    energy_kwh: float | None = None
    machines: int | None = None
    machine_kw: float | None = None


@quick_init
@dataclass(frozen=True)
class MethodVerdict:
    """Whether a method is advised tonight; if not, the one typed reason why not."""

    method: Method
    advised: bool
    why_not: WhyNot | None = None
    conditions: tuple[Condition, ...] = ()
    alternatives: tuple[Alternative, ...] = ()
    fans: FanFigures | None = None
    sprinklers: SprinklerFigures | None = None
    heaters: HeaterFigures | None = None
    resources: Resources | None = None  # only when advised and protection may be needed


class StopBasis(StrEnum):
    """What the morning stop rule is judged on."""

    BLOCK_AIR = "block-air"  # fans and heaters: the block's crop-height air against T10 + margin
    REFERENCE_WET_BULB = "reference-wet-bulb"  # sprinklers: the wet bulb of unsprinkled reference air
    FALLBACK_AIR = "fallback-air"  # sprinklers without reference air: the block's air well above the ice-bulb rule


@quick_init
@dataclass(frozen=True)
class StopCheck:
    """The morning stop rule: the trigger temperature against its limit, and its trend.

    For sprinklers the wet bulb is read on air outside the wetted area (`reference_station`);
    without such air the block's own air must pass `limit_c`, the fallback stop air temperature
    (`physics.sprinkler_timing.fallback_stop_air_temp_c`). A trend counts as rising only at
    `min_rise_c_per_h` or more.
    """

    trigger: Trigger
    now_c: float | None
    limit_c: float  # sprinklers: T10 (reference wet bulb) or the fallback air; others: T10 + margin
    trend_c_per_h: float | None
    stop_ok: bool | None  # None: looks met, but no recent trend to confirm it
    stop_air_temp_c: float | None = None  # sprinklers: the air temperature where the wet bulb is at T10
    basis: StopBasis = StopBasis.BLOCK_AIR
    reference_station: str | None = None  # the reference station used (or configured but silent)
    reference_silent: bool = False  # a reference station is configured but has no fresh reading
    driest_dew_point_c: float | None = None  # fallback: the night's driest air that set limit_c
    min_rise_c_per_h: float = 0.3


# ---- the plan ------------------------------------------------------------------------------------


@quick_init
@dataclass(frozen=True)
class AdvicePlan:
    """What frostwatch advises for one block at one instant.

    `step` is what the advice rules want now; the alert level (which holds for the night and
    needs persistence) may lag it, so screens show `frostwatch.alerts.levels.step_for_level`.
    `line_c` is T10 + margin, the line the trigger temperature must not reach unprotected;
    `ready_by_utc` is the projected crossing of that line less the crew's mobilisation time.
    """

    block: str
    time_utc: dt.datetime
    method: Method
    risk: Risk
    step: Step
    trigger: Trigger
    t10_c: float
    t90_c: float
    margin_c: float
    mobilisation_min: float
    line_c: float
    trigger_now_c: float | None
    air_temp_c: float | None
    predicted_min_c: float | None
    predicted_min_at_utc: dt.datetime | None
    band_c: float | None
    crossing_utc: dt.datetime | None
    ready_by_utc: dt.datetime | None
    protection_running: bool | None
    regime: str | None
    wind_speed_m_s: float | None
    verdicts: tuple[MethodVerdict, ...] = ()
    stop: StopCheck | None = None
    cautions: tuple[Caution, ...] = BASE_CAUTIONS
    # `crossing_utc` is where the 80 % band's cold edge reaches T10 + margin (the safe side, which
    # sets the ready-by time); the middle projection's crossing is kept beside it
    crossing_middle_utc: dt.datetime | None = None
    # while the site is still learning: past nights known and about how many it needs
    learning_nights_known: int | None = None
    learning_nights_needed: int | None = None
    # the projection asked for more cooling than a clear night can give and was held at this floor
    # (frostwatch.physics.cooling_floor): the readings behind it are suspect
    physics_floor_c: float | None = None
    version: int = PLAN_VERSION

    @property
    def verdict(self) -> MethodVerdict | None:
        """The verdict on the block's configured method (None when nothing could be judged)."""
        return self.verdicts[0] if self.verdicts else None

    @property
    def advised(self) -> bool:
        """True when the configured method is advised tonight."""
        v = self.verdict
        return v is not None and v.advised

    @property
    def active(self) -> bool:
        """True when protection may be needed tonight (risk possible, likely or now)."""
        return self.risk in (Risk.POSSIBLE, Risk.LIKELY, Risk.NOW)
