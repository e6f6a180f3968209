"""Protection advice: a typed plan per block (`plan_advice`) and its one rendering.

    from frostwatch.advice import plan_advice
    plan = plan_advice(projection, block, now_utc, pressure_hpa, series=window, protection_running=running)

`plan` holds the advice as typed values (`frostwatch.advice.plan`); `frostwatch.advice.render`,
`explain` and `message` turn it into words for every screen. Pure: no clock, no I/O.
"""

from frostwatch.advice.core import STOP_AFTER_SUNRISE_H, plan_advice
from frostwatch.advice.plan import PLAN_VERSION, AdvicePlan, Method, Risk, Step, Trigger, WhyNot

__all__ = ["plan_advice", "AdvicePlan", "Method", "Risk", "Step", "Trigger", "WhyNot", "PLAN_VERSION",
           "STOP_AFTER_SUNRISE_H"]
