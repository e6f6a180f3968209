"""Every alert level with its rank (0 = all clear, growing with urgency; DESIGN.md 1.4), and the
step each level shows.

Frost levels, decided by the alert rules (rules.py):

    all-clear      0  nothing to do (also the one "resolved" message when a condition clears)
    safe-to-stop   1  morning: protection may stop (per-method stop rule met)
    frost-possible 2  the dusk outlook: frost possible tonight, with predicted minimum and time
    standby        3  get ready: the projection reaches T10 + margin within the next hours
    act            4  start protection now, given the crew's mobilisation time
    critical       5  at or below T10 now (or protection is not holding the block)

Health levels come from the daemon's checks and share the rank of the frost level of like urgency:

    armed           0  the dusk check passed: sensors, batteries, channels, roster, projection
    sensor-trouble  2  a sensor silent, stale, suspect or low on battery; broker, storage or clock
                       trouble (to a maintainer, like an outlook it asks for attention, not a run)
    degraded        2  the dusk check found something wrong, or remote alerting is failing
    unmonitored     4  a block nobody is watching (its crop-height sensor silent, stuck or never
                       heard; or, on screens, the daemon not running): someone must go and look,
                       as urgent as "act"; at night an alert of its own, routed like a frost alert
"""

from __future__ import annotations

from frostwatch.advice.plan import AdvicePlan, Risk, Step

LEVELS: dict[str, int] = {
    "all-clear": 0,
    "safe-to-stop": 1,
    "frost-possible": 2,
    "standby": 3,
    "act": 4,
    "critical": 5,
}
HEALTH_LEVELS: dict[str, int] = {"armed": 0, "sensor-trouble": 2, "degraded": 2, "unmonitored": 4}
ALL_LEVELS: dict[str, int] = {**LEVELS, **HEALTH_LEVELS}
UNMONITORED = "unmonitored"

_MORNING_STEPS = (Step.SAFE_TO_STOP, Step.WATCH_TO_STOP, Step.WAIT_TO_STOP, Step.NIGHT_OVER)


def rank_of(level: str) -> int:
    return ALL_LEVELS.get(level, 2)


def step_for_level(level: str, plan: AdvicePlan, ran: bool = True) -> Step:
    """The step a screen shows with `level`, so that the two never disagree.

    The level holds for the night (it needs persistence to rise and never falls back but through
    an all-clear), while the plan's own step follows each evaluation. The shown step is the
    plan's where it fits the level, else the one the level stands for: a standby never says
    "start", an act never says "get ready", and running protection is never told to start.
    In the morning, protection that never ran tonight (`ran` False) is never told to keep running
    or that it may stop.
    """
    running = bool(plan.protection_running)
    if level == UNMONITORED or plan.risk is Risk.UNKNOWN:
        return Step.CHECK_SENSORS
    if plan.risk is Risk.MORNING:
        if level == "safe-to-stop":
            return Step.SAFE_TO_STOP
        if level in ("standby", "act", "critical"):
            if not ran:
                return Step.NIGHT_OVER if plan.step in (Step.SAFE_TO_STOP, Step.WATCH_TO_STOP) else Step.NOTHING
            return plan.step if plan.step in _MORNING_STEPS else Step.WAIT_TO_STOP
        return Step.NOTHING
    if level == "critical":
        return Step.NOT_HOLDING if running else Step.AT_CRITICAL
    if level in ("act", "standby"):
        if plan.risk is Risk.LOW:
            return Step.EASING
        if running:
            return Step.KEEP_RUNNING
        return Step.START_NOW if level == "act" else Step.GET_READY
    if level == "frost-possible":
        return Step.KEEP_RUNNING if running and plan.active else Step.WATCH
    if level == "safe-to-stop":
        return Step.SAFE_TO_STOP
    return Step.NOTHING


def wanted_level(plan: AdvicePlan, now_utc) -> str:
    """The frost level the plan's own step asks for (before persistence and the one-way night)."""
    s = plan.step
    if s in (Step.AT_CRITICAL, Step.NOT_HOLDING):
        return "critical"
    if s is Step.START_NOW:
        return "act"
    if s is Step.KEEP_RUNNING:
        due = plan.ready_by_utc is not None and now_utc >= plan.ready_by_utc
        return "act" if due else "standby"
    if s is Step.GET_READY:
        return "standby"
    return "all-clear"
