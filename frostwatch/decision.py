"""The stored decision: what one evaluation decided for one block, as every screen shows it.

Each evaluation (the daemon's and replay's alike) makes one `Decision` per block: the projection
(minimum, time, band, crossings), the level the alert rules hold and its rank, the step shown, the
advice plan, the monitoring state with its reason, the inputs' times, and `as_of`. The store keeps
it (`frostwatch.store.decisions`); the status page, `frostwatch status`, the alerts and the morning
report read it and never compute advice of their own. `frostwatch.status.document.decision_json`
turns one into the JSON that `status --json` shows.

JSON round trip: `decision_to_doc` / `decision_from_doc` (versioned; an unknown version raises
ValueError, so a reader never misreads a newer store).
"""

from __future__ import annotations

import bisect
import datetime as dt
from dataclasses import dataclass, field
from enum import StrEnum

from frostwatch import instant_runs
from frostwatch.advice import codec_shapes
from frostwatch.advice.codec import from_dict, to_dict
from frostwatch.advice.plan import PLAN_VERSION, AdvicePlan, Step
from frostwatch.models import Projection, SensorDoubt
from frostwatch.quick_init import quick_init

DECISION_VERSION = 1
CURVE_STEP_S = 1800.0  # the stored projected curve keeps one point per half hour (SD-card wear)
_ONE_US = dt.timedelta(microseconds=1)
_CURVE_STEP = dt.timedelta(seconds=CURVE_STEP_S)  # whole microseconds: t >= last + step exactly when t - last >= step


class MonitorReason(StrEnum):
    """Why a block is (not) monitored."""

    OK = "ok"  # a fresh crop-height sensor and a running daemon
    NO_CROP_SENSOR = "no-crop-sensor"  # no crop-height station declared for the block
    NO_DATA = "no-data"  # no crop-height reading in the window looked at
    SILENT = "silent"  # the crop-height sensors went silent
    STUCK = "stuck"  # the crop-height sensors report a flat, stuck value
    IMPLAUSIBLE = "implausible"  # its crop-height reading is far out of line with the farm (forecast.crosscheck)
    DAEMON_STOPPED = "daemon-stopped"  # readers only: the daemon's heartbeat is not current
    NO_EVALUATION = "no-evaluation"  # readers only: no recent decision stored for the block


@quick_init
@dataclass(frozen=True)
class Monitoring:
    """Whether anyone is watching the block: its crop-height sensor fresh and (for readers) the
    daemon alive. `since_utc` is when it stopped being watched (the last reading, for a silent
    sensor); `fresh_until_utc` is when the newest reading goes stale if nothing new comes; `doubts`
    are the block's crop-height sensors the cross-check doubts (left out, or reported and kept)."""

    monitored: bool
    reason: MonitorReason
    stations: tuple[str, ...] = ()
    since_utc: dt.datetime | None = None
    last_reading_utc: dt.datetime | None = None
    fresh_until_utc: dt.datetime | None = None
    doubts: tuple[SensorDoubt, ...] = ()  # its crop-height sensors the farm's cross-check doubts


@quick_init
@dataclass(frozen=True)
class ProjectionSummary:
    """The projection as stored with the decision (the curve thinned to half-hour points)."""

    station: str | None
    air_temp_c: float | None
    dew_point_c: float | None
    wet_bulb_c: float | None
    predicted_min_c: float | None
    predicted_min_at_utc: dt.datetime | None
    band_c: float | None
    band_low_c: float | None
    band_high_c: float | None
    crossings_utc: dict[str, dt.datetime | None] = field(default_factory=dict)
    inversion_c: float | None = None
    projected_inversion_c: float | None = None
    wind_speed_m_s: float | None = None
    regime: str | None = None
    method: str | None = None
    notes: tuple[str, ...] = ()
    curve_time_utc: tuple[dt.datetime, ...] = ()
    curve_air_temp_c: tuple[float, ...] = ()
    wind_from_farm: bool = False  # the block has no anemometer: the wind is the farm's


def summarise_projection(p: Projection) -> ProjectionSummary:
    """The stored form of a projection. The band's ends come from the projection when it gives
    them (`band_low_c`/`band_high_c`), else from the minimum -/+ `band_c`."""
    band = p.band_c
    lo = getattr(p, "band_low_c", None)
    hi = getattr(p, "band_high_c", None)
    if p.predicted_min_c is not None and band is not None and band == band:
        lo = p.predicted_min_c - band if lo is None else lo
        hi = p.predicted_min_c + band if hi is None else hi
    curve_t, curve_c = p.curve_time_utc, p.curve_air_temp_c
    kept = _kept_points(curve_t, min(len(curve_t), len(curve_c)))
    times = [curve_t[i] for i in kept]
    temps = _rounded2([curve_c[i] for i in kept])
    if curve_t and (not times or times[-1] != curve_t[-1]):
        times.append(curve_t[-1])
        temps.append(_round2(curve_c[-1]))
    r = lambda v: None if v is None else _round2(v)  # noqa: E731
    return ProjectionSummary(
        station=p.station, air_temp_c=r(p.air_temp_c), dew_point_c=r(p.dew_point_c), wet_bulb_c=r(p.wet_bulb_c),
        predicted_min_c=r(p.predicted_min_c), predicted_min_at_utc=p.predicted_min_at_utc, band_c=r(band),
        band_low_c=r(lo), band_high_c=r(hi), crossings_utc=dict(p.crossings_utc), inversion_c=r(p.inversion_c),
        projected_inversion_c=r(p.projected_inversion_c), wind_speed_m_s=r(p.wind_speed_m_s), regime=p.regime,
        method=p.method, notes=tuple(p.notes), curve_time_utc=tuple(times), curve_air_temp_c=tuple(temps),
        wind_from_farm=bool(getattr(p, "wind_from_farm", False)),
    )


def _kept_points(times: tuple[dt.datetime, ...], n: int) -> list[int]:
    """The indices of the curve's points the stored decision keeps among the first `n`: the
    first, then each first at or past the last kept one + CURVE_STEP_S (t - last >= step). Times
    in order (a projection's curve) are cut by bisection, a few steps instead of one per point;
    any others point by point (tests/test_stored_decision.py holds both to the plain loop)."""
    run = instant_runs.spacing_of(times)
    if run is not None and run[1] and n:  # a curve made by the projection's grid: no comparison needed
        return _kept_points_of_run(times, n, *run)
    head = times[:n]
    if n > 2 and sorted(head) == list(head):  # in order (sorted keeps equal times in place)
        out, i = [], 0
        while i < n:  # non-decreasing: the first at or past times[i] + step after i
            out.append(i)
            i = bisect.bisect_left(times, times[i] + _CURVE_STEP, i + 1, n)
        return out
    out, due = [], None
    for i in range(n):
        if due is None or times[i] >= due:
            out.append(i)
            due = times[i] + _CURVE_STEP
    return out


def _kept_points_of_run(times: tuple[dt.datetime, ...], n: int, every_s: int, m: int) -> list[int]:
    """`_kept_points(times, n)` of a tuple whose first m instants are whole seconds `every_s` apart
    (`instant_runs`), after which at most one more (sunrise) follows: among those m, every q-th
    is the first at or past the last kept + CURVE_STEP_S (q = ceil(CURVE_STEP_S / every_s); the
    ones between are less than a step on); the one after them is kept when it is at or past the
    last kept + the step (the rule of either loop for a last point)."""
    q = -(-(_CURVE_STEP // _ONE_US) // (every_s * 1_000_000))  # in whole microseconds: exact
    m = min(m, n)
    out = list(range(0, m, q))
    for i in range(m, n):  # sunrise after the run, if the curve reaches it
        if times[i] >= times[out[-1]] + _CURVE_STEP:
            out.append(i)
    return out


# round(x, 2) of floats seen before (a night's curves and readings repeat their values from one
# evaluation to the next; Python's round to digits is a correctly rounded decimal conversion, the
# costliest part of the summary). Keyed by the float: two equal floats are the same float except
# 0.0 and -0.0, and NaN equals nothing, so neither zeros nor NaN are kept. Emptied when full.
ROUND_CACHE_SIZE = 20_000
_ROUNDED: dict[float, float] = {}


def _rounded2(values: list) -> list[float]:
    """`[round(float(v), 2) for v in values]`, from the table where it holds them (a value equal
    to a float kept there is that float, or converts to it: the same rounding)."""
    out = list(map(_ROUNDED.get, values))
    if None in out:
        out = [_round2(v) if r is None else r for r, v in zip(out, values, strict=True)]
    return out


def _round2(v) -> float:
    """`round(float(v), 2)`, from the table of floats rounded before."""
    x = float(v)
    got = _ROUNDED.get(x)
    if got is None:
        got = round(x, 2)
        if x and x == x:
            if len(_ROUNDED) >= ROUND_CACHE_SIZE:
                _ROUNDED.clear()
            _ROUNDED[x] = got
    return got


@quick_init
@dataclass(frozen=True)
class Decision:
    """One block's decision at one evaluation (see the module docstring).

    `level` is what every screen shows: "go-look" while the block is not monitored, else
    `frost_level`, the level the alert rules hold tonight. `step` is the step shown with it
    (`frostwatch.alerts.levels.step_for_level`). `inputs_utc` maps "station/quantity" to the time
    of the newest reading the evaluation had.
    """

    block: str
    as_of_utc: dt.datetime
    night: dt.date
    level: str
    rank: int
    frost_level: str
    step: Step
    monitoring: Monitoring
    projection: ProjectionSummary
    plan: AdvicePlan
    alert_key: str | None = None
    inputs_utc: dict[str, dt.datetime] = field(default_factory=dict)
    version: int = DECISION_VERSION

    @property
    def monitored(self) -> bool:
        return self.monitoring.monitored


def plan_signature(d: Decision) -> tuple:
    """What a grower would notice change in a block's decision: level, step, whether the method is
    advised (and why not), whether it is enough, whether the fans still wait on the warm air aloft,
    and the stop rule's verdict and basis."""
    plan = d.plan
    v = plan.verdict
    enough = None
    if v is not None:
        enough = (v.fans.sufficient if v.fans else v.sprinklers.sufficient if v.sprinklers else
                  v.heaters.enough if v.heaters else None)
    stop = plan.stop
    pending = v.fans.inversion_pending if v is not None and v.fans is not None else None
    return (d.level, d.step, None if v is None else v.advised, None if v is None else v.why_not, enough,
            None if stop is None else (stop.basis, stop.stop_ok), pending)


def decision_signature(d: Decision) -> tuple:
    """`plan_signature` with the monitoring state, the level the rules hold and the newest alert:
    two decisions with the same signature read the same to the grower (only the numbers moved)."""
    return (plan_signature(d), d.frost_level, d.monitoring.monitored, d.monitoring.reason, d.alert_key)


def decision_to_doc(d: Decision) -> dict:
    """The decision as a JSON-ready dict (the stored form; fields that are None are left out)."""
    return to_dict(d, drop_none=True)


def decision_to_json(d: Decision) -> str:
    """`decision_to_doc` as compact JSON text (`json.dumps(doc, separators=(",", ":"),
    allow_nan=False)`, byte for byte), written without the dict in between by the writer of its
    shape (`advice.codec_shapes`: the keys and commas worked out once per shape, every value
    written afresh)."""
    return codec_shapes.to_json(d, drop_none=True)


def decision_from_doc(doc: dict) -> Decision:
    """A stored decision back as a `Decision`; ValueError when its version is not one this
    frostwatch knows (a newer store) or it does not fit the type."""
    v, pv = doc.get("version"), (doc.get("plan") or {}).get("version")
    if v != DECISION_VERSION or pv != PLAN_VERSION:
        raise ValueError(f"decision version {v} / plan version {pv}; this frostwatch reads {DECISION_VERSION} / {PLAN_VERSION}")
    return from_dict(Decision, doc)
