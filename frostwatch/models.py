"""Frozen value types that flow through frostwatch: readings, rejections, projections, alerts.

The advice plan is `frostwatch.advice.plan.AdvicePlan`; the stored decision `frostwatch.decision.Decision`.

All instants are timezone-aware UTC datetimes; all temperatures degC; units in every field name.
"""

from __future__ import annotations

import datetime as dt
from dataclasses import dataclass

from frostwatch.quick_init import quick_init


@dataclass(frozen=True, slots=True)
class Reading:
    """One accepted reading in canonical units (see `frostwatch.units.QUANTITIES`)."""

    time_utc: dt.datetime
    station: str
    quantity: str
    value: float


@dataclass(frozen=True, slots=True)
class Rejection:
    """Input that could not be used, kept with its reason and the raw text.

    `source` names where it came from (a file path, or `mqtt:<topic>`); `line` is the 1-based
    line of a file (None for MQTT).
    """

    source: str
    line: int | None
    reason: str
    raw: str

    def where(self) -> str:
        return f"{self.source}:{self.line}" if self.line is not None else self.source


@quick_init
@dataclass(frozen=True)
class StationState:
    """What one station says at an evaluation: its latest values and whether it can be trusted."""

    station: str
    height_m: float
    role: str
    latest: dict[str, float]
    latest_at_utc: dict[str, dt.datetime]
    healthy: bool
    problems: tuple[str, ...] = ()


@quick_init
@dataclass(frozen=True)
class SensorDoubt:
    """A thermometer the farm's cross-check does not believe (`frostwatch.forecast.crosscheck`).

    `kind`: "warm" (far warmer than the farm's other thermometers at the same instant: left out),
    "cold" (far colder: reported, still used, a colder reading is never ignored) or "jump" (no other
    thermometer to compare with, and it rose by more than any weather does between two readings and
    stayed up: left out). `peers_low_c`/`peers_high_c`: the range of the farm's other trusted
    thermometers then (`peers` of them); `jump_from_c`, `jump_at_utc`: the reading before the jump
    and when the jump came."""

    station: str
    air_temp_c: float
    kind: str
    left_out: bool
    peers_low_c: float | None = None
    peers_high_c: float | None = None
    peers: int = 0
    jump_from_c: float | None = None
    jump_at_utc: dt.datetime | None = None


@quick_init
@dataclass(frozen=True)
class Projection:
    """A block's projected night from one evaluation.

    `curve_*` hold the projected crop-height air temperature from `time_utc` to sunrise.
    `band_low_c` and `band_high_c` are the 80 % band of the minimum (10 % and 90 % points);
    `band_c` is the distance from the minimum down to the band's cold edge (the safe side).
    `crossings_utc` holds each threshold's crossing on the middle curve and, under the same key
    with `_cold_edge`, on the curve to the band's cold edge (`curve_cold_edge_c`).
    """

    time_utc: dt.datetime
    block: str
    station: str | None
    air_temp_c: float | None
    dew_point_c: float | None
    wet_bulb_c: float | None
    predicted_min_c: float | None
    predicted_min_at_utc: dt.datetime | None
    band_c: float | None
    crossings_utc: dict[str, dt.datetime | None]
    inversion_c: float | None
    projected_inversion_c: float | None
    inversion_class: str | None
    wind_speed_m_s: float | None
    regime: str
    method: str
    notes: tuple[str, ...] = ()
    sunset_utc: dt.datetime | None = None
    sunrise_utc: dt.datetime | None = None
    curve_time_utc: tuple[dt.datetime, ...] = ()
    curve_air_temp_c: tuple[float, ...] = ()
    # the tower the inversion was measured on (frostwatch.towers): the block's own, or the nearest
    # (with its distance when positions are configured), or the site-wide one
    tower_station: str | None = None
    tower_own: bool | None = None
    tower_site_wide: bool | None = None
    tower_distance_m: float | None = None
    # sprinkler blocks: tonight's dew-point trend and the dew point projected at the wet-bulb
    # crossing of T10 + margin (or at the minimum), which sets the start air temperature
    dew_point_trend_c_per_h: float | None = None
    dew_point_at_start_c: float | None = None
    # the 80 % band of the minimum and the curve to its cold edge (frostwatch.forecast)
    band_low_c: float | None = None
    band_high_c: float | None = None
    curve_cold_edge_c: tuple[float, ...] = ()
    # while the site is still learning (fewer past nights than [forecast] calibration_nights)
    calibration_nights_known: int | None = None
    calibration_nights_needed: int | None = None
    # the block has no anemometer of its own (nor a site-wide one): the wind is the farm's
    wind_from_farm: bool = False
    # what `projected_inversion_c` rests on (frostwatch.forecast.inversion): "tower-curve",
    # "site-history" (the median of this many past clear calm nights), "held" (the inversion now),
    # or "not-yet" (a radiation inversion still building: known by `inversion_known_by_utc`)
    inversion_basis: str | None = None
    inversion_known_by_utc: dt.datetime | None = None
    inversion_history_nights: int | None = None
    # set when the projection asked for more cooling than a clear night can give by sunrise and was
    # held at this physical floor (frostwatch.physics.cooling_floor): a sign of a sensor fault
    physics_floor_c: float | None = None


@dataclass(frozen=True)
class Alert:
    """A notification decided by the alert rules: level, rank (0 = all clear) and text.

    `kind` is "alert" for a new level (or health event) and "update" for a standby whose ready-by
    time moved earlier (updates count against the hourly budget; see the outbox). `short` is the
    text-message form (at most 131 GSM-7 characters; a delivery adds "Ack: reply CODE").
    """

    time_utc: dt.datetime
    block: str
    level: str
    rank: int
    advice: str
    message: str
    key: str
    resolves: str | None = None
    kind: str = "alert"
    short: str = ""  # the text-message body (frostwatch.advice.short); each delivery adds its ack code
