"""Every alert level with its rank (0 = all clear, growing with urgency; DESIGN.md 1.4).

The frost levels are decided by rules.py (LEVELS). Health levels come from the daemon's checks and
share the rank of the frost level of like urgency:

    armed           0  the dusk check passed: sensors, batteries, channels, roster, projection
    sensor-trouble  2  a sensor silent, stale, suspect or low on battery; broker, storage or clock
                       trouble (to a maintainer, like an outlook it asks for attention, not a run)
    degraded        2  the dusk check found something wrong, or remote alerting is failing
    unmonitored     4  no healthy sensor in a block on a risky night: someone must go and look,
                       as urgent as "act"
"""

from __future__ import annotations

from frostwatch.alerts.rules import LEVELS

HEALTH_LEVELS: dict[str, int] = {"armed": 0, "sensor-trouble": 2, "degraded": 2, "unmonitored": 4}
ALL_LEVELS: dict[str, int] = {**LEVELS, **HEALTH_LEVELS}


def rank_of(level: str) -> int:
    return ALL_LEVELS.get(level, 2)
