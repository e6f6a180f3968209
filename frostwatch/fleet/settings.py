"""The site's `[fleet]` section: how this site shows itself to a fleet view (all keys optional).

    [fleet]
    publish = true          # publish {prefix}/{site}/state/BLOCK, heartbeat and online (retained)
    heartbeat_s = 60        # seconds between site heartbeats; the view calls a site unreachable
                            # after about 2.5 heartbeats without one
    refresh_min = 60        # every state is sent again this often even when unchanged
    min_change_c = 0.5      # a projected minimum or band that moved less is not sent (uplink bytes)
    min_change_min = 15     # nor a projected time that moved less
    will_delay_s = 0        # MQTT 5 Will Delay Interval of the publisher's connection

The site's id is `[site] id` (default: a slug of `[site] name`). Raises `ConfigError` listing every
problem as `fleet.key: ...`.
"""

from __future__ import annotations

import difflib
from dataclasses import dataclass
from typing import TYPE_CHECKING

from frostwatch.errors import ConfigError

if TYPE_CHECKING:  # frostwatch.config imports this module to validate its section
    from frostwatch.config import Config


@dataclass(frozen=True)
class FleetSettings:
    publish: bool = True
    heartbeat_s: float = 60.0
    refresh_min: float = 60.0
    min_change_c: float = 0.5
    min_change_min: float = 15.0
    will_delay_s: int = 0


_KEYS: dict[str, tuple[tuple[type, ...], float, float, str]] = {
    # key: (types, lowest, highest, what is expected)
    "heartbeat_s": ((int, float), 5, 3600, "seconds between site heartbeats, 5..3600"),
    "refresh_min": ((int, float), 1, 7 * 24 * 60, "minutes between full re-sends of every state, 1..10080"),
    "min_change_c": ((int, float), 0, 5, "degC a projection must move before it is sent again, 0..5"),
    "min_change_min": ((int, float), 0, 240, "minutes a projected time must move before it is sent again, 0..240"),
    "will_delay_s": ((int,), 0, 3600, "whole seconds the broker waits before sending the will, 0..3600"),
}


def fleet_settings(cfg: Config) -> FleetSettings:
    raw = cfg.raw.get("fleet", {}) or {}
    where = str(cfg.path or "<config>")
    problems: list[str] = []
    vals: dict = {}
    for k, v in raw.items():
        if k == "publish":
            if not isinstance(v, bool):
                problems.append(f"fleet.publish: {v!r} is not valid; expected true or false")
            else:
                vals[k] = v
            continue
        if k not in _KEYS:
            known = ["publish", *_KEYS]
            close = difflib.get_close_matches(k, known, n=1)
            hint = f" (did you mean {close[0]!r}?)" if close else ""
            problems.append(f"fleet.{k}: unknown key{hint}; known keys are {', '.join(known)}")
            continue
        types, lo, hi, what = _KEYS[k]
        if isinstance(v, bool) or not isinstance(v, types) or not lo <= v <= hi:
            problems.append(f"fleet.{k}: {v!r} is not valid; expected {what}")
            continue
        vals[k] = v
    site = cfg.site.id
    prefix = cfg.broker.prefix.strip("/")
    taken = {"status": "the daemon's status topic", "ack": "the acknowledgement topic"}
    daemon = cfg.raw.get("daemon", {}) or {}
    alerts = cfg.raw.get("alerts", {}) or {}
    for topic, what in ((daemon.get("status_topic"), "the daemon's status topic ([daemon] status_topic)"),
                        (alerts.get("ack_topic") if isinstance(alerts, dict) else None, "[alerts] ack_topic")):
        if isinstance(topic, str) and topic.strip("/").startswith(prefix + "/"):
            taken[topic.strip("/")[len(prefix) + 1:].split("/")[0]] = what
    if site in taken:
        problems.append(f"site.id: {site!r} is also the first level of {taken[site]} under {prefix}/; "
                        "set [site] id to another name")
    if problems:
        raise ConfigError(where, problems)
    return FleetSettings(**vals)
