"""Protection advice: a typed plan per block (`plan_advice`) and its one rendering.

    from frostwatch.advice import plan_advice
    plan = plan_advice(projection, block, now_utc, pressure_hpa, series=window, protection_running=running)

`plan` holds the advice as typed values (`frostwatch.advice.plan`); `frostwatch.advice.render`,
`explain` and `message` turn it into words for every screen. Pure: no clock, no I/O.

The names below are loaded on first use: a reader of the plan's types or of the level words
(`frostwatch.advice.render`, the fleet page) does not load the advice methods and numpy with them.
"""

from __future__ import annotations

import importlib

_WHERE = {"plan_advice": "core", "STOP_AFTER_SUNRISE_H": "core", "AdvicePlan": "plan", "Method": "plan",
          "Risk": "plan", "Step": "plan", "Trigger": "plan", "WhyNot": "plan", "PLAN_VERSION": "plan"}

__all__ = ["plan_advice", "AdvicePlan", "Method", "Risk", "Step", "Trigger", "WhyNot", "PLAN_VERSION",
           "STOP_AFTER_SUNRISE_H"]


def __getattr__(name: str):
    if name not in _WHERE:
        raise AttributeError(f"module 'frostwatch.advice' has no attribute {name!r}")
    return getattr(importlib.import_module(f"frostwatch.advice.{_WHERE[name]}"), name)
