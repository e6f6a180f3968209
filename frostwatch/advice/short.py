"""The short form of every message: one text message (160 GSM-7 characters) a grower reads half
awake, rendered from the same plan and step as the long form (`frostwatch.advice.message`).

    body = short_body("east", "protect", Step.START_NOW, plan, display)  # stored with the alert
    text = short_message(body, code="K7QM4X")                           # what a phone receives

    "east PROTECT: start wind machines now. Air 0.7C now, may reach -0.2C by 22:55. Ack: reply K7QM4X"

The body holds the block, the level's word and the action, the trigger temperature now, the line
it must not reach (T10 + margin, or T10) and by when; the acknowledgement code is added for each
delivery (`frostwatch.alerts.ackcodes`), since each recipient gets a code of their own. Only the
GSM 7-bit alphabet is used (no "°": "C" and "F"). The body is kept short enough that a prefix
("NOT ACKED: " on a repeat, "ESCALATED: ") and the code always fit in 160. A repeat's body is
rendered again from the block's latest decision (`frostwatch.alerts.restate`).
"""

from __future__ import annotations

import datetime as dt

from frostwatch.advice.plan import AdvicePlan, Condition, Method, Risk, Step, StopBasis, Trigger
from frostwatch.advice.render import Notice, level_word
from frostwatch.decision import MonitorReason
from frostwatch.display import Display
from frostwatch.gsm7 import SMS_SEPTETS, fit, septets, to_gsm7

CODE_CHARS = 6
ACK_TAIL = " Ack: reply "  # + the code
PREFIX_ROOM = len("ESCALATED: ")
BODY_SEPTETS = SMS_SEPTETS - len(ACK_TAIL) - CODE_CHARS - PREFIX_ROOM  # 131

SHORT_METHOD = {
    Method.WIND_MACHINE: "wind machines",
    Method.OVERTREE_SPRINKLER: "sprinklers",
    Method.UNDERTREE_SPRINKLER: "sprinklers",
    Method.HEATERS: "heaters",
    Method.NONE: "protection",
}
_MORNING = (Step.SAFE_TO_STOP, Step.WATCH_TO_STOP, Step.WAIT_TO_STOP, Step.NIGHT_OVER)


def short_message(body: str, code: str | None = None, prefix: str = "") -> str:
    """What a phone receives: `prefix`, the stored body and "Ack: reply CODE"; at most 160
    septets of the GSM 7-bit alphabet."""
    tail = f"{ACK_TAIL}{code}" if code else ""
    text = to_gsm7(prefix) + to_gsm7(body)
    return fit(text, SMS_SEPTETS - septets(tail)) + tail


def _finish(head: str, what: str, facts: str) -> str:
    """'head: what. facts.' in the GSM alphabet, the action shortened first when it is too long."""
    head, what, facts = to_gsm7(head), to_gsm7(what), to_gsm7(facts)
    tail = f" {facts}." if facts else ""
    room = BODY_SEPTETS - septets(head) - 2 - septets(tail) - 1
    if room < 12:  # a very long block name: keep the facts, cut the whole
        return fit(f"{head}: {what}.{tail}", BODY_SEPTETS)
    return f"{head}: {fit(what, room)}.{tail}"


def _trig(plan: AdvicePlan) -> str:
    return "Wet bulb" if plan.trigger is Trigger.WET_BULB else "Air"


def _now(plan: AdvicePlan, d: Display) -> str:
    if plan.trigger_now_c is None:
        return f"{_trig(plan)} unknown now"
    return f"{_trig(plan)} {d.plain_temp(plan.trigger_now_c)} now"


def _when(plan: AdvicePlan, d: Display) -> str:
    """'may reach -0.2C by 22:55' (the crossing, the by-when), or 'act at -0.2C' without one."""
    line = d.plain_temp(plan.line_c)
    if plan.trigger_now_c is not None and plan.trigger_now_c <= plan.line_c:
        return f"at or below {line} already"
    if plan.crossing_utc is not None:
        return f"may reach {line} by {d.time(plan.crossing_utc)}"
    return f"act at {line}"


def _going(plan: AdvicePlan, d: Display) -> str:
    return f"{_now(plan, d)}, {_when(plan, d)}"


def _at_t10(plan: AdvicePlan, d: Display) -> str:
    air = "Air unknown" if plan.air_temp_c is None else f"Air {d.plain_temp(plan.air_temp_c)}"
    return f"{air} now, at or below T10 {d.plain_temp(plan.t10_c)}"


def _stop_facts(plan: AdvicePlan, d: Display) -> str:
    s = plan.stop
    if s is None or s.now_c is None:
        return _now(plan, d)
    what = f"Wet bulb at {s.reference_station}" if s.basis is StopBasis.REFERENCE_WET_BULB else "Air"
    name = "T10 " if s.basis is StopBasis.REFERENCE_WET_BULB else ""
    now, limit = d.plain_temp(s.now_c), d.plain_temp(s.limit_c)
    rising = "" if s.trend_c_per_h is None else (" and rising" if s.stop_ok else ", not rising yet")
    if s.now_c > s.limit_c and now != limit:
        return f"{what} {now} now, above {name}{limit}{rising}"
    if s.now_c > s.limit_c:
        return f"{what} has just passed {name}{limit}{rising}"
    return f"{what} {now} now, stop once above {name}{limit} and rising"


def _if_aloft(plan: AdvicePlan, d: Display) -> str:
    """' if tower 1.5C warmer' while the warm air aloft is still building (fans on that condition)."""
    v = plan.verdict
    if v is None or v.fans is None or Condition.WARM_AIR_ALOFT not in v.conditions:
        return ""
    return f" if tower {d.delta(v.fans.min_useful_inversion_c).replace(' ', '')} warmer"


def _frost_what(step: Step, plan: AdvicePlan, d: Display, level: str) -> str:
    m = plan.method
    name = SHORT_METHOD[m]
    advised = plan.advised
    if step is Step.GET_READY:
        ahead = plan.ready_by_utc is not None and plan.ready_by_utc > plan.time_utc
        by = f"by {d.time(plan.ready_by_utc)}" if ahead else "now"
        if advised:
            return f"get {name} ready {by}"
        if m is Method.NONE:
            return f"get ready to protect the block {by}"
        return f"get ready {by} to protect by other means ({name} not advised)"
    if step is Step.START_NOW:
        if advised:
            return f"start {name} now{_if_aloft(plan, d)}" if m is not Method.HEATERS else "light heaters now"
        if m is Method.NONE:
            return "protect the block now if you can"
        return f"protect by other means now ({name} not advised)"
    if step is Step.AT_CRITICAL:
        if advised and m.is_sprinkler:
            return "start sprinklers now, keep them on without a break"
        if advised:
            return f"start {name} now{_if_aloft(plan, d)}" if m is not Method.HEATERS else "light heaters now"
        return "protect the block now if you can" if m is Method.NONE else "protect by other means now"
    if step is Step.NOT_HOLDING:
        return f"{name} running but not holding: check them, add more"
    if step is Step.KEEP_RUNNING:
        return f"keep {name} running"
    if step is Step.EASING:
        low = f" (min {d.plain_temp(plan.predicted_min_c)})" if plan.predicted_min_c is not None else ""
        return f"projection eased{low}; keep protection on until told"
    if step is Step.WATCH:
        return "frost may come later tonight; nothing to do yet"
    if step is Step.SAFE_TO_STOP:
        return f"{name} may stop" + (" once the ice melts" if m.is_sprinkler else "")
    if step is Step.WATCH_TO_STOP:
        return f"{name} may stop soon: watch the trend first"
    if step is Step.WAIT_TO_STOP:
        return f"keep {name} running for now"
    if step is Step.NIGHT_OVER:
        return "night over, block warming; check the buds later today"
    if step is Step.CHECK_SENSORS:
        return "go and look: frostwatch cannot see the block"
    return "nothing to do"


def short_body(block_id: str, level: str, step: Step, plan: AdvicePlan, d: Display, notice: Notice = Notice.LEVEL,
               previous_ready_by_utc: dt.datetime | None = None) -> str:
    """The short form's body for `level` shown with `step` (the code is added per delivery)."""
    head = f"{block_id} {level_word(level)}"
    pmin = "" if plan.predicted_min_c is None else f"min {d.plain_temp(plan.predicted_min_c)}"
    cap = lambda text: text[:1].upper() + text[1:]  # noqa: E731
    around = f" about {d.time(plan.predicted_min_at_utc)}" if plan.predicted_min_at_utc and pmin else ""
    if notice is Notice.OUTLOOK:
        what = "frost may come tonight; nothing to do yet" if plan.active else "tonight looks safe"
        return _finish(head, what, cap(f"{pmin}{around}, act at {d.plain_temp(plan.line_c)}. {_now(plan, d)}"))
    if notice is Notice.RESOLVED:
        return _finish(head, f"projection back above {d.plain_temp(plan.line_c)}; nothing to do",
                       f"{cap(pmin)}. {_now(plan, d)}" if pmin else _now(plan, d))
    if notice is Notice.NIGHT_OVER or step is Step.NIGHT_OVER:
        air = "Air unknown" if plan.air_temp_c is None else f"Air {d.plain_temp(plan.air_temp_c)} now"
        return _finish(head, _frost_what(Step.NIGHT_OVER, plan, d, level), f"{air}, {pmin}{around}" if pmin else air)
    if notice is Notice.UPDATE:
        was = f" (was {d.time(previous_ready_by_utc)})" if previous_ready_by_utc else ""
        what = f"earlier: get ready by {d.time(plan.ready_by_utc)}{was}"
        return _finish(head, what, _going(plan, d))
    what = _frost_what(step, plan, d, level)
    if notice is Notice.MONITORED_AGAIN:
        what = f"sensor back; {what}"
    if step in (Step.AT_CRITICAL, Step.NOT_HOLDING):
        facts = _at_t10(plan, d)
    elif step in _MORNING:
        facts = _stop_facts(plan, d)
    elif plan.risk is Risk.UNKNOWN:
        facts = f"act at {d.plain_temp(plan.line_c)}"
    else:
        facts = _going(plan, d)
    return _finish(head, what, facts)


def not_monitored_body(block_id: str, level: str, since_utc: dt.datetime | None, stations: tuple[str, ...],
                       plan: AdvicePlan | None, d: Display, reason: MonitorReason | None = None,
                       doubts: tuple = ()) -> str:
    """'hill GO LOOK: no reading since 02:10 (hill-low); judge the block by hand. Act at -2.4C.'
    `reason` words a sensor never heard ("no reading yet": `since_utc`
    is then only when frostwatch started looking) and a stuck one ("sensor stuck")."""
    where = f" ({', '.join(stations)})" if stations else ""
    if reason == MonitorReason.NO_DATA:
        what = f"no reading yet{where}"
    elif reason == MonitorReason.STUCK:
        what = f"sensor stuck{where}"
    elif reason == MonitorReason.IMPLAUSIBLE and any(x.left_out for x in doubts):
        x = next(x for x in doubts if x.left_out)
        what = _doubt_short(x, d)
    elif reason == MonitorReason.NO_CROP_SENSOR:
        what = "no crop-height sensor set up"
    else:
        what = f"no reading{f' since {d.time(since_utc)}' if since_utc is not None else ''}{where}"
    line = f"Act at {d.plain_temp(plan.line_c)}" if plan is not None else ""
    return _finish(f"{block_id} {level_word(level)}", f"{what}; judge the block by hand", line)


def _doubt_short(x, d: Display) -> str:
    """'north-low reads 38.5C, farm 3.4-4.1C: sending F?' (a sensor the cross-check left out)."""
    from frostwatch.forecast.crosscheck import JUMP, fahrenheit_fits

    cause = "sending F?" if fahrenheit_fits(x) else "check it"
    if x.kind == JUMP:
        return f"{x.station} jumped {d.plain_temp(x.jump_from_c)} to {d.plain_temp(x.air_temp_c)}: {cause}"
    lo, hi = d.plain_temp(x.peers_low_c), d.plain_temp(x.peers_high_c)
    return f"{x.station} reads {d.plain_temp(x.air_temp_c)}, farm {lo if lo == hi else f'{lo[:-1]}-{hi}'}: {cause}"


def notice_body(block_id: str, level: str, text: str) -> str:
    """A health or farm notice's short form: the block, the level's word and the first line."""
    first = (text or "").splitlines()[0] if text else ""
    word = level_word(level)
    own = f"{block_id}: {word} "
    if first.startswith(own):  # 'farm: CHECK before tonight ...' names itself: not 'farm CHECK: farm: CHECK ...'
        return fit(to_gsm7(f"{block_id} {word} {first[len(own):]}"), BODY_SEPTETS)
    return fit(to_gsm7(f"{block_id} {word}: {first}"), BODY_SEPTETS)
