"""What a repeat or an escalation of an unacknowledged frost alert says: the block as its latest
stored decision has it now, not the figures of the first notice (pure; the caller reads the
decision from the store).

    words = restated("protect", decision, display)   # None: nothing newer to say, keep the text sent
    words.text, words.short, words.as_of_utc

A frost alert (ready, protect, all-hands) repeats until someone acknowledges it. An hour later the
air it named is not the air now: the repeat is rendered again by `compose` and `short_body`, with
the alert's own level and the step that level shows on the latest decision of the same night
(`step_for_level`), the same way the rules render a new alert. A level that rose since is a new
alert of its own and ends the older one's repeats (the outbox marks it superseded), so a repeat
never speaks of a level below the block's. Health alerts and "go look" alerts are repeated as sent:
their words ("no reading since 02:10") stay true while they fire.
"""

from __future__ import annotations

import datetime as dt
from dataclasses import dataclass

from frostwatch.advice.message import compose
from frostwatch.advice.render import Notice
from frostwatch.advice.short import short_body
from frostwatch.alerts.levels import ALL_HANDS, PROTECT, READY, WAIT, level_name, step_for_level
from frostwatch.decision import Decision
from frostwatch.display import Display

RESTATED_LEVELS = (WAIT, READY, PROTECT, ALL_HANDS)


@dataclass(frozen=True)
class Restated:
    text: str  # the whole message, as the rules write it, from the decision now
    short: str  # the text message's body (the code and the repeat's prefix are added per delivery)
    as_of_utc: dt.datetime  # the decision's evaluation instant


def restated(level: str, block_id: str, night: dt.date | None, decision: Decision | None,
             d: Display) -> Restated | None:
    """The words of a repeat of a frost alert of `level` on `block_id` from its latest stored
    `decision`; None when there is nothing to restate from (not a frost level, no decision, or
    the decision belongs to another night than the alert's)."""
    level = level_name(level)
    if level not in RESTATED_LEVELS or decision is None or decision.block != block_id:
        return None
    if night is not None and decision.night != night:
        return None
    plan = decision.plan
    shown = decision.step if decision.monitored and level_name(decision.frost_level) == level else \
        step_for_level(level, plan)
    msg = compose(block_id, level, shown, plan, decision.projection, d, Notice.LEVEL)
    short = short_body(block_id, level, shown, plan, d, Notice.LEVEL)
    return Restated(text=msg.text, short=short, as_of_utc=decision.as_of_utc)


def repeat_head(seq: int, minutes: float, first_utc: dt.datetime, as_of_utc: dt.datetime | None, d: Display,
                added: list[str] | None = None) -> str:
    """The first words of a repeat or escalation's long form: that it repeats an alert nobody has
    acknowledged, since when, and the time of the figures that follow."""
    figures = f"; the block as of {d.time(as_of_utc)}" if as_of_utc is not None else \
        f"; as first sent at {d.time(first_utc)}"
    if added:
        return (f"ESCALATED (not acknowledged after {minutes:.0f} min, now also to {', '.join(added)}"
                f"{figures}): ")
    return f"REPEAT {seq} (not acknowledged for {minutes:.0f} min{figures}): "
