"""Every alert level with its rank (0 = nothing to do, growing with urgency; DESIGN.md 1.4), and the
step each level shows. The rank is the stable contract; the names are plain action words a grower
reads without a manual.

Frost levels, decided by the alert rules (rules.py):

    rest       0  nothing to do (also the dusk message on a safe night, and the one message when a
                  condition clears or the night is over)
    may-stop   1  morning: protection may stop (the stop rule of the block's method is met)
    wait       2  dusk: frost may come tonight; nothing to do yet (with the minimum and its time)
    ready      3  get ready: the projection reaches T10 + margin within the next hours
    protect    4  start protection now (or keep it running), given the crew's mobilisation time
    all-hands  5  at or below T10 now, or protection is not holding the block

Health levels come from the daemon's checks and share the rank of the frost level of like urgency:

    all-set    0  the dusk check passed: sensors, batteries, channels, roster, projection
    fix        2  a sensor silent, stale, suspect or low on battery; broker, storage or clock
                  trouble (to a maintainer: it asks for attention, not a run)
    check      2  the dusk check found something wrong, or remote alerting is failing
    go-look    4  a block nobody is watching (its crop-height sensor silent, stuck or never heard;
                  or, on screens, the daemon not running): someone must go and look, as urgent as
                  "protect"; at night an alert of its own, routed like a frost alert

Release 0.2 renamed them (`OLD_NAMES`); `level_name` reads an old name as the new one, so stored
alerts and decisions, other sites on a fleet and old configs (for one release, with a
deprecation message: frostwatch.alerts.config) still read right.
"""

from __future__ import annotations

from frostwatch.advice.plan import AdvicePlan, Risk, Step

REST, MAY_STOP, WAIT, READY, PROTECT, ALL_HANDS = "rest", "may-stop", "wait", "ready", "protect", "all-hands"
ALL_SET, FIX, CHECK, GO_LOOK = "all-set", "fix", "check", "go-look"

LEVELS: dict[str, int] = {REST: 0, MAY_STOP: 1, WAIT: 2, READY: 3, PROTECT: 4, ALL_HANDS: 5}
HEALTH_LEVELS: dict[str, int] = {ALL_SET: 0, FIX: 2, CHECK: 2, GO_LOOK: 4}
ALL_LEVELS: dict[str, int] = {**LEVELS, **HEALTH_LEVELS}
UNMONITORED = GO_LOOK  # the level of a block nobody is watching
RESOLVING_LEVELS = (REST, MAY_STOP, ALL_SET)

# the names before release 0.2: still read (stored alerts, fleet sites, configs for one release)
OLD_NAMES: dict[str, str] = {
    "all-clear": REST, "safe-to-stop": MAY_STOP, "frost-possible": WAIT, "standby": READY, "act": PROTECT,
    "critical": ALL_HANDS, "armed": ALL_SET, "sensor-trouble": FIX, "degraded": CHECK, "unmonitored": GO_LOOK,
}
RENAMED_IN = "0.2"
OLD_NAMES_UNTIL = "0.3"  # configs with an old name are refused from this release on

_MORNING_STEPS = (Step.SAFE_TO_STOP, Step.WATCH_TO_STOP, Step.WAIT_TO_STOP, Step.NIGHT_OVER)


def level_name(level: str | None) -> str:
    """The current name of a level, whether it was stored or sent under its old name."""
    return OLD_NAMES.get(level or REST, level or REST)


def rank_of(level: str) -> int:
    return ALL_LEVELS.get(level_name(level), 2)


def step_for_level(level: str, plan: AdvicePlan, ran: bool = True) -> Step:
    """The step a screen shows with `level`, so that the two never disagree.

    The level holds for the night (it needs persistence to rise and never falls back but through
    a rest), while the plan's own step follows each evaluation. The shown step is the plan's where
    it fits the level, else the one the level stands for: a ready never says "start", a protect
    never says "get ready", and running protection is never told to start. In the morning,
    protection that never ran tonight (`ran` False) is never told to keep running or that it may
    stop.
    """
    level = level_name(level)
    running = bool(plan.protection_running)
    if level == GO_LOOK or plan.risk is Risk.UNKNOWN:
        return Step.CHECK_SENSORS
    if plan.risk is Risk.MORNING:
        if level == MAY_STOP:
            return Step.SAFE_TO_STOP
        if level in (READY, PROTECT, ALL_HANDS):
            if not ran:
                return Step.NIGHT_OVER if plan.step in (Step.SAFE_TO_STOP, Step.WATCH_TO_STOP) else Step.NOTHING
            return plan.step if plan.step in _MORNING_STEPS else Step.WAIT_TO_STOP
        return Step.NOTHING
    if level == ALL_HANDS:
        return Step.NOT_HOLDING if running else Step.AT_CRITICAL
    if level in (PROTECT, READY):
        if plan.risk is Risk.LOW:
            return Step.EASING
        if running:
            return Step.KEEP_RUNNING
        return Step.START_NOW if level == PROTECT else Step.GET_READY
    if level == WAIT:
        return Step.KEEP_RUNNING if running and plan.active else Step.WATCH
    if level == MAY_STOP:
        return Step.SAFE_TO_STOP
    return Step.NOTHING


def wanted_level(plan: AdvicePlan, now_utc) -> str:
    """The frost level the plan's own step asks for (before persistence and the one-way night)."""
    s = plan.step
    if s in (Step.AT_CRITICAL, Step.NOT_HOLDING):
        return ALL_HANDS
    if s is Step.START_NOW:
        return PROTECT
    if s is Step.KEEP_RUNNING:
        due = plan.ready_by_utc is not None and now_utc >= plan.ready_by_utc
        return PROTECT if due else READY
    if s is Step.GET_READY:
        return READY
    return REST
