"""The fixed words of advice: level words, method names, start phrases, cautions, alternatives.

`frostwatch.advice.render` builds sentences from these; every screen that only needs a word (a
level, a caution) takes it from here or through `render`, which re-exports them.
"""

from __future__ import annotations

from enum import StrEnum

from frostwatch.advice.plan import Alternative, Caution, Method, Trigger
from frostwatch.display import Display


class Notice(StrEnum):
    """What a message announces (the same level can be announced for different reasons)."""

    STATE = "state"  # a screen showing the block's current state (page, status, report)
    LEVEL = "level"  # a new level was reached
    OUTLOOK = "outlook"  # the dusk outlook
    RESOLVED = "resolved"  # the projection is back above the line
    NIGHT_OVER = "night-over"  # morning, a block with no protection: the night is over
    UPDATE = "update"  # the ready-by time moved earlier
    MONITORED_AGAIN = "monitored-again"  # the block's sensor is reporting again


METHOD_NAME = {
    Method.WIND_MACHINE: "wind machines",
    Method.OVERTREE_SPRINKLER: "over-tree sprinklers",
    Method.UNDERTREE_SPRINKLER: "under-tree sprinklers",
    Method.HEATERS: "heaters",
    Method.NONE: "protection",
}
START = {
    Method.WIND_MACHINE: "start the wind machines",
    Method.OVERTREE_SPRINKLER: "start the over-tree sprinklers",
    Method.UNDERTREE_SPRINKLER: "start the under-tree sprinklers",
    Method.HEATERS: "light the heaters",
}
LIGHTING = "; light the upwind border and the low spots first"  # heaters (lighting order, common practice)
LEVEL_WORD = {
    "all-hands": "ALL HANDS", "protect": "PROTECT", "ready": "READY", "wait": "WAIT", "may-stop": "MAY STOP",
    "rest": "REST", "go-look": "GO LOOK", "all-set": "ALL SET", "fix": "FIX", "check": "CHECK",
}


# the level names before release 0.2 (frostwatch.alerts.levels.OLD_NAMES; kept here, since the
# alert levels import this module)
OLD_LEVEL_NAMES = {"all-clear": "rest", "safe-to-stop": "may-stop", "frost-possible": "wait", "standby": "ready",
              "act": "protect", "critical": "all-hands", "armed": "all-set", "sensor-trouble": "fix",
              "degraded": "check", "unmonitored": "go-look"}


def level_word(level: str) -> str:
    """The level as a person reads it ("READY"), for any level name stored or received (a level
    stored under its old name reads as the new one)."""
    level = OLD_LEVEL_NAMES.get(level, level)
    return LEVEL_WORD.get(level, level.replace("-", " ").upper())


TRIGGER_WORD = {Trigger.AIR: "air", Trigger.WET_BULB: "wet-bulb"}
CAUTION_TEXT = {
    Caution.GROWER_DECIDES: "frostwatch advises; the grower decides.",
    Caution.CHECK_THERMOMETERS: "Check with your own calibrated thermometers at bud height before acting.",
    Caution.LOCAL_RULES: "Local agronomic advice, codes and water rights prevail.",
    Caution.FAN_SAFETY: "Keep clear of wind machines when starting them.",
    Caution.SPRINKLER_SAFETY: "Ice-loaded trees and wet ground are hazards under sprinklers.",
    Caution.HEATER_SAFETY: "Heaters are a fire hazard: keep fuel and people clear and follow local burning rules.",
    Caution.AIR_QUALITY: "Orchard heaters are regulated for smoke: follow your air district's rules (no waste oil, "
                         "no smudge pots) and log the hours they burn.",
    Caution.SUPPLY_SHORT: "The water supply cannot run the whole block at the full rate: sprinkle only the part it "
                          "can feed, never the whole block at a lower rate.",
}
# the cautions of every report and calculator output (all methods)
GENERAL_CAUTIONS = tuple(CAUTION_TEXT[c] for c in (
    Caution.GROWER_DECIDES, Caution.CHECK_THERMOMETERS, Caution.LOCAL_RULES, Caution.FAN_SAFETY,
    Caution.SPRINKLER_SAFETY, Caution.HEATER_SAFETY))


def alternative_text(a: Alternative, d: Display) -> str:
    """What else helps, in one short clause (sources in the report's notes, never here)."""
    return {
        Alternative.ADVECTIVE: ("in wind little works well: heaters lose their heat downwind and over-tree sprinklers "
                                f"need far more water (none above about {d.wind_limit(4.5)}); protect what you can and "
                                "ask your adviser"),
        Alternative.FOG_HEATERS_OR_SPRINKLERS: "in fog use heaters or sprinklers, not fans",
        Alternative.HEATERS_WITH_FANS: "with little warm air aloft, heaters with the fans, or sprinklers, help more",
        Alternative.ADD_HEATERS: "add heaters to the fans, or use sprinklers where you have them",
        Alternative.SPRINKLERS_ASK_ADVISER: ("too little water leaves the buds colder than dry ones: ask your adviser "
                                             "before relying on the sprinklers"),
        Alternative.UNDERTREE_NOT_ENOUGH: (f"under-tree sprinklers add only about {d.delta(0.6)} to {d.delta(1.4)}, and "
                                           "only with warm air aloft: add wind machines or heaters where you have them"),
        Alternative.MORE_HEATERS: ("the heaters may fall short tonight: light them all, add more on the borders "
                                   "(double on the upwind side), or run wind machines with them"),
        Alternative.HEATERS_WEAK_INVERSION: ("with little warm air aloft most of the heaters' heat rises away: "
                                             "sprinklers, or heaters with wind machines, hold more"),
        Alternative.COVERS_OR_MOIST_SOIL: ("covers for small plantings, or watering dry ground in the afternoon "
                                           "(moist soil gives back more heat), help a little"),
    }[a]


def method_name(method: Method) -> str:
    return METHOD_NAME[method]
