"""The per-block alert state machine (pure): the advice plan in, level changes and alerts out.

Levels and ranks are in `frostwatch.alerts.levels`. Separate on and off thresholds, persistence
over consecutive evaluations, and a one-way night (nothing is re-announced below the level already
reached) keep it from flapping (grower-needs E3). Every message is rendered from the plan by
`frostwatch.advice.message.compose` with the step the level shows (`levels.step_for_level`), so a
headline and its advice never disagree.

Alerts of one block from one evaluation are merged into the most urgent of them (`merged`): a
grower gets one message, never two in the same minute.

Beyond the frost levels:

- a block that is not monitored (no fresh crop-height sensor) gets a `go-look` alert of its
  own inside the night's watch window, once, and one "monitored again" message when its sensor
  has reported for two evaluations; meanwhile the frost rules hold (no dusk message, no rest);
- at ready, when the projected crossing moves earlier by more than the block's mobilisation
  time or `update_earlier_min` (whichever is less) for two evaluations, one update goes out with
  the new ready-by time; the next update needs another such move, and comes at least
  `update_earlier_min` later unless the ready-by time is nearer than that.

Time is injected; nothing here reads a clock.
"""

from __future__ import annotations

import dataclasses
import datetime as dt
from dataclasses import dataclass

from frostwatch.advice.message import compose, not_monitored
from frostwatch.advice.plan import AdvicePlan, Method, Risk, Step
from frostwatch.advice.render import Notice
from frostwatch.advice.short import not_monitored_body, short_body
from frostwatch.alerts.levels import (
    ALL_HANDS,
    LEVELS,
    MAY_STOP,
    PROTECT,
    READY,
    REST,
    UNMONITORED,
    WAIT,
    rank_of,
    step_for_level,
    wanted_level,
)
from frostwatch.config import Block
from frostwatch.decision import Monitoring
from frostwatch.display import Display
from frostwatch.models import Alert, Projection
from frostwatch.night import Night

PERSISTENCE = {READY: 2, PROTECT: 2, ALL_HANDS: 1}  # consecutive evaluations before raising
CLEAR_PERSISTENCE = 3  # consecutive evaluations beyond the off threshold before clearing
MONITORED_PERSISTENCE = 2  # evaluations with a fresh sensor before "monitored again"
UPDATE_PERSISTENCE = 2  # evaluations with the crossing moved before an update goes out
OFF_HYSTERESIS_C = 0.5  # the off threshold sits this far above the on threshold
UPDATE_EARLIER_MIN = 30.0  # default of [alerts] update_earlier_min


@dataclass(frozen=True)
class RuleSettings:
    """Tunable parts of the rules ([alerts] update_earlier_min)."""

    update_earlier_min: float = UPDATE_EARLIER_MIN


def rule_settings(cfg) -> RuleSettings:
    """The rules' settings from a config (validated by `frostwatch.alerts.config`)."""
    raw = (getattr(cfg, "raw", None) or {}).get("alerts", {}) or {}
    v = raw.get("update_earlier_min", UPDATE_EARLIER_MIN)
    return RuleSettings(update_earlier_min=float(v) if isinstance(v, (int, float)) and v > 0 else UPDATE_EARLIER_MIN)


@dataclass(frozen=True)
class BlockAlertState:
    """What the rules remember about a block between evaluations."""

    night: str = ""
    level: str = REST
    candidate: str = REST
    candidate_count: int = 0
    clear_count: int = 0
    outlook_sent: bool = False
    last_key: str | None = None
    sequence: int = 0
    peak_level: str = REST
    unmonitored_key: str | None = None  # the open "go-look" alert, until monitored again
    unmonitored_since_utc: dt.datetime | None = None
    monitored_count: int = 0
    announced_crossing_utc: dt.datetime | None = None  # the crossing the last ready/update gave
    announced_at_utc: dt.datetime | None = None  # when the last ready/update went out
    announced_ready_by_utc: dt.datetime | None = None  # its ready-by time, where set earlier than the crossing's
    update_count: int = 0
    ran_tonight: bool = False  # the block's running flag read "running" at least once tonight
    told_to_start: bool = False  # a protect or all-hands alert told the grower to run the block's method


_STATE_FIELDS = frozenset(f.name for f in dataclasses.fields(BlockAlertState))


def _replaced(state: BlockAlertState, changes: dict) -> BlockAlertState:
    """`dataclasses.replace(state, **changes)` without its per-call field walk (a block's state
    changes a few times at every evaluation): the same fields and values, a new frozen object."""
    unknown = changes.keys() - _STATE_FIELDS
    if unknown:
        raise TypeError(f"BlockAlertState has no field {sorted(unknown)[0]!r}")
    new = object.__new__(BlockAlertState)
    fields = new.__dict__
    fields.update(state.__dict__)
    fields.update(changes)
    return new


_TIME_FIELDS = frozenset(f.name for f in dataclasses.fields(BlockAlertState) if f.name.endswith("_utc"))


def state_to_json(state: BlockAlertState) -> dict:
    """A block's rule state as plain JSON values (instants as ISO 8601 UTC), for the store: the
    daemon keeps it across a restart, so a restart in the night neither re-sends what was sent
    nor forgets what was acknowledged."""
    return {k: (v.isoformat() if k in _TIME_FIELDS and v is not None else v) for k, v in state.__dict__.items()}


def state_from_json(doc: dict) -> BlockAlertState:
    """`state_to_json` read back; keys it does not know (a newer version's) are left out."""
    kw = {k: (dt.datetime.fromisoformat(v) if k in _TIME_FIELDS and v is not None else v)
          for k, v in doc.items() if k in _STATE_FIELDS}
    return BlockAlertState(**kw)


def protection_ran(state: BlockAlertState) -> bool:
    """Whether the block's protection may have run tonight: its running flag said so, or a protect or
    all-hands alert told the grower to start the block's own method (a flag can be wrong; a grower
    who was told to start must hear when to stop). Protection that never ran (no running flag and
    no such alert) gets no stop message in the morning, at most the night-over summary."""
    return state.ran_tonight or state.told_to_start


def _clear_enough(plan: AdvicePlan) -> bool:
    """The off threshold: the projected minimum is safely above the on threshold again."""
    if plan.predicted_min_c is None or plan.risk is not Risk.LOW:
        return False
    band = plan.band_c or 0.0
    return plan.predicted_min_c - band > plan.line_c + OFF_HYSTERESIS_C


def _morning_stop_ok(plan: AdvicePlan) -> bool:
    """Per-method stop rule: the plan's stop check (trend, after sunrise). Without a trend, fans and
    heaters may stop with the air above its limit; sprinklers never: their published rule needs
    the wet bulb rising (FAO-FP p. 168), and stopping too soon cools the wet buds."""
    s = plan.stop
    if s is None:
        return False
    if s.stop_ok is not None:
        return bool(s.stop_ok)
    if plan.method.is_sprinkler:
        return False
    return s.now_c is not None and s.now_c > s.limit_c


def _moved_earlier_min(plan: AdvicePlan, state: BlockAlertState, mobilisation_min: float) -> float:
    """How far the ready-by time moved earlier than the one last announced [min] (the announced
    crossing less the mobilisation time, or the plan's when the ready-by time was set earlier)."""
    if plan.crossing_utc is None:
        return 0.0
    if state.announced_crossing_utc is None:
        return float("inf")  # ready went out without a time; now there is one
    announced = state.announced_crossing_utc - dt.timedelta(minutes=mobilisation_min)
    ready_by = plan.ready_by_utc or plan.crossing_utc - dt.timedelta(minutes=mobilisation_min)
    if state.announced_ready_by_utc is not None:
        announced = min(announced, state.announced_ready_by_utc)
    return (announced - ready_by).total_seconds() / 60.0


def _set_early(plan: AdvicePlan) -> dt.datetime | None:
    """The plan's ready-by time where it is earlier than its crossing less the mobilisation time."""
    if plan.ready_by_utc is None or plan.crossing_utc is None:
        return None
    return plan.ready_by_utc if plan.ready_by_utc < plan.crossing_utc - dt.timedelta(minutes=plan.mobilisation_min) else None


class _Run:
    """One evaluation of one block: the state as it changes, and the alerts made."""

    def __init__(self, state: BlockAlertState, plan: AdvicePlan, proj: Projection, block: Block, now: dt.datetime,
                 key_night: str, d: Display):
        self.state, self.plan, self.proj, self.block, self.now, self.key_night, self.d = (
            state, plan, proj, block, now, key_night, d)
        self.alerts: list[Alert] = []

    def set(self, **kw) -> None:
        self.state = _replaced(self.state, kw)

    def _key(self, suffix: str) -> str:
        seq = self.state.sequence + 1
        key = f"{self.block.id}/{self.key_night}/{seq:03d}-{suffix}"
        self.set(sequence=seq, last_key=key)
        return key

    def send(self, level: str, shown: Step, notice: Notice, resolves: str | None = None, kind: str = "alert",
             previous: dt.datetime | None = None) -> None:
        key = self._key(level + ("-update" if kind == "update" else ""))
        msg = compose(self.block.id, level, shown, self.plan, self.proj, self.d, notice, previous)
        short = short_body(self.block.id, level, shown, self.plan, self.d, notice, previous)
        self.alerts.append(Alert(time_utc=self.now, block=self.block.id, level=level, rank=rank_of(level),
                                 advice=msg.action, message=msg.text, key=key, resolves=resolves, kind=kind,
                                 short=short))

    def send_unmonitored(self, m: Monitoring) -> None:
        key = self._key(UNMONITORED)
        msg = not_monitored(self.block.id, m, self.plan, self.d, self.now, self.state.level)
        short = not_monitored_body(self.block.id, UNMONITORED, m.since_utc, m.stations, self.plan, self.d,
                                   m.reason, m.doubts)
        self.alerts.append(Alert(time_utc=self.now, block=self.block.id, level=UNMONITORED, rank=rank_of(UNMONITORED),
                                 advice=msg.action, message=msg.text, key=key, short=short))
        self.set(unmonitored_key=key)


def step(
    state: BlockAlertState,
    plan: AdvicePlan,
    proj: Projection,
    block: Block,
    now: dt.datetime,
    night: Night,
    display: Display,
    monitoring: Monitoring | None = None,
    settings: RuleSettings = RuleSettings(),
) -> tuple[BlockAlertState, list[Alert]]:
    """One evaluation of one block: the new state and the alerts to send (maybe none).

    `monitoring` (from `frostwatch.monitoring.block_monitoring`) decides whether the block is
    watched; without it, a plan with no projection counts as not monitored (and raises no alert).
    """
    key_night = night.date.isoformat()
    if state.night != key_night:
        state = BlockAlertState(night=key_night)
    if plan.protection_running and not state.ran_tonight:
        state = dataclasses.replace(state, ran_tonight=True)
    run = _Run(state, plan, proj, block, now, key_night, display)
    monitored = monitoring.monitored if monitoring is not None else plan.risk is not Risk.UNKNOWN
    if not monitored:
        since = state.unmonitored_since_utc or (monitoring.since_utc if monitoring else None) or now
        run.set(monitored_count=0, unmonitored_since_utc=since)
        if state.unmonitored_key is None and monitoring is not None and night.contains(now):
            run.send_unmonitored(dataclasses.replace(monitoring, since_utc=since))
        return run.state, run.alerts  # no data: the frost rules hold (no dusk message, no rest)

    back = False
    if state.unmonitored_key is not None:
        n = state.monitored_count + 1
        back = n >= MONITORED_PERSISTENCE
        run.set(monitored_count=n)
    else:
        run.set(unmonitored_since_utc=None)
    _frost_rules(run, night, settings)
    if back:
        reopened = run.state.unmonitored_key
        if run.alerts:
            run.alerts[0] = dataclasses.replace(run.alerts[0], resolves=run.alerts[0].resolves or reopened)
        else:
            lvl = run.state.level
            run.send(lvl, step_for_level(lvl, plan, protection_ran(run.state)), Notice.MONITORED_AGAIN, resolves=reopened)
        run.set(unmonitored_key=None, unmonitored_since_utc=None, monitored_count=0)
    if len(run.alerts) > 1:
        kept = merged(run.alerts)
        run.alerts = [kept]
        run.set(last_key=kept.key)
    return run.state, run.alerts


def merged(alerts: list[Alert]) -> Alert:
    """One message for a block's alerts of the same instant: the most urgent (the later one of
    equal rank), carrying what the others resolve. The dusk message and a rise to ready in the
    same evaluation, say, reach the grower once, as ready."""
    kept = max(enumerate(alerts), key=lambda ia: (ia[1].rank, ia[0]))[1]
    resolves = kept.resolves or next((a.resolves for a in alerts if a.resolves), None)
    return dataclasses.replace(kept, resolves=resolves)


def _frost_rules(run: _Run, night: Night, settings: RuleSettings) -> None:
    """The dusk outlook, the morning stop, level rises, the rest and the ready updates."""
    plan, now, st = run.plan, run.now, run.state
    # the dusk outlook, once a night, for a monitored block only
    if not st.outlook_sent and now >= night.dusk_utc and plan.risk is not Risk.MORNING:
        run.set(outlook_sent=True)
        if LEVELS[st.level] < LEVELS[WAIT]:
            if plan.active:
                run.send(WAIT, step_for_level(WAIT, plan), Notice.OUTLOOK)
                run.set(level=WAIT)
            else:
                run.send(REST, Step.NOTHING, Notice.OUTLOOK)

    st = run.state
    # morning: one safe-to-stop message where protection was called for
    if plan.risk is Risk.MORNING:
        if st.level == WAIT:
            run.set(level=REST)  # the night is over without a call to protect
        elif LEVELS[st.level] >= LEVELS[READY] and _morning_stop_ok(plan):
            if plan.method is Method.NONE or not protection_ran(st):  # nothing ran: nothing to stop
                run.send(REST, Step.NIGHT_OVER, Notice.NIGHT_OVER, resolves=st.last_key)
                run.set(level=REST, candidate=REST, candidate_count=0)
            else:
                run.send(MAY_STOP, Step.SAFE_TO_STOP, Notice.LEVEL, resolves=st.last_key)
                run.set(level=MAY_STOP, candidate=MAY_STOP, candidate_count=0)
        return

    wanted = wanted_level(plan, now)
    if LEVELS[wanted] > LEVELS[st.level] and wanted != REST:
        count = st.candidate_count + 1 if LEVELS[st.candidate] >= LEVELS[wanted] else 1
        cand = wanted if LEVELS[wanted] >= LEVELS[st.candidate] or count == 1 else st.candidate
        run.set(candidate=cand, candidate_count=count, clear_count=0)
        if count >= PERSISTENCE[wanted]:
            run.send(wanted, step_for_level(wanted, plan), Notice.LEVEL)
            peak = wanted if LEVELS[wanted] > LEVELS[st.peak_level] else st.peak_level
            told = st.told_to_start or (LEVELS[wanted] >= LEVELS[PROTECT] and plan.advised)
            run.set(level=wanted, candidate=wanted, candidate_count=0, peak_level=peak, told_to_start=told,
                    announced_crossing_utc=plan.crossing_utc, announced_at_utc=now, update_count=0,
                    announced_ready_by_utc=_set_early(plan))
    elif LEVELS[st.level] >= LEVELS[READY] and _clear_enough(plan):
        n = st.clear_count + 1
        run.set(clear_count=n, candidate=REST, candidate_count=0)
        if n >= CLEAR_PERSISTENCE:
            run.send(REST, Step.NOTHING, Notice.RESOLVED, resolves=st.last_key)
            run.set(level=REST, clear_count=0)
    else:
        run.set(clear_count=0, candidate=st.level if wanted == REST else st.candidate,
                candidate_count=st.candidate_count if LEVELS[wanted] > LEVELS[st.level] else 0)
        _ready_update(run, settings)


def _ready_update(run: _Run, settings: RuleSettings) -> None:
    """One update when the crossing has moved earlier by more than the allowance (the block's
    mobilisation time or `update_earlier_min`, whichever is less) for two evaluations in a row.

    Updates of one block are at least `update_earlier_min` apart unless the new ready-by time is
    nearer than that: a projection still settling after dusk then sends one update with all the
    movement so far, not one per evaluation.
    """
    plan, st, now = run.plan, run.state, run.now
    if st.level != READY or plan.step is not Step.GET_READY or plan.ready_by_utc is None or plan.ready_by_utc <= now:
        run.set(update_count=0)
        return
    allowance = min(run.block.mobilisation_min, settings.update_earlier_min)
    if _moved_earlier_min(plan, st, run.block.mobilisation_min) <= allowance:
        run.set(update_count=0)
        return
    n = st.update_count + 1
    spacing = dt.timedelta(minutes=settings.update_earlier_min)
    spaced = st.announced_at_utc is None or now - st.announced_at_utc >= spacing
    urgent = plan.ready_by_utc - now <= spacing
    if n < UPDATE_PERSISTENCE or not (spaced or urgent):
        run.set(update_count=n)
        return
    previous = None
    if st.announced_crossing_utc is not None:
        previous = st.announced_crossing_utc - dt.timedelta(minutes=run.block.mobilisation_min)
        if st.announced_ready_by_utc is not None:
            previous = min(previous, st.announced_ready_by_utc)
    run.send(READY, Step.GET_READY, Notice.UPDATE, kind="update", previous=previous)
    run.set(announced_crossing_utc=plan.crossing_utc, announced_at_utc=now, update_count=0,
            announced_ready_by_utc=_set_early(plan))
