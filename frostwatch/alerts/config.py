"""The alert sections of a config: [alerts], [[alerts.roster]], [[contacts]], [[channels]].

    [alerts]
    repeat_interval_min = 10      # an unanswered protect/all-hands/go-look alert repeats this often
    escalate_after_min = 15       # ... and adds the next person of the roster after this long
    repeat_from_rank = 4          # alerts of this rank and above want an answer (protect and up)
    budget_per_hour = 6           # notifications per block per rolling hour; repeats and updates beyond it wait
    update_earlier_min = 30       # a standby is updated when its crossing moves earlier by more than
                                  # this or the block's mobilisation_min, whichever is less
    retry_base_s = 5              # delivery retries: full-jitter backoff from this ...
    retry_cap_s = 300             # ... capped here
    give_up_after_h = 12          # a delivery still failing after this is given up (and logged)
    degraded_after_failures = 2   # remote failures in a row, with no remote success, before the
                                  # local channels fire and a "remote alerting degraded" notice waits
    status_url = ""               # e.g. "http://192.168.1.20:8321": one-use ack links in messages
    ack_secret_file = ""          # optional; else a secret made once and kept in the store
    [alerts.route]                # level name (or "default") -> channel names
    default = ["console"]
    [alerts.armed]
    max_sensor_age_min = 15       # a sensor older than this at dusk is reported
    min_battery_v = 3.3           # battery_voltage below this is reported
    test_channels = false         # send a test message on every channel at dusk

    [[alerts.roster]]             # ordered people for some blocks ("*" = all), optionally dated
    blocks = ["*"]
    order = ["ana", "ben"]
    # from = "2027-04-17"         # local night dates, inclusive: cover for a weekend
    # to = "2027-04-18"

    [[contacts]]
    name = "ana"
    roles = ["grower"]            # grower, maintainer, manager
    email = "ana@example.org"
    phone = "+15550100"           # used by channels with address = "phone"

    [[channels]]
    name = "console"
    type = "console"              # email, webhook, mqtt, command, console

Secrets are never written in the config: `password_file` (a file only its owner may read) or
`password_credential` (a systemd credential name read from $CREDENTIALS_DIRECTORY), both read by
frostwatch.secrets. Problems are collected and raised together as ConfigError, each as
`section.key: what is wrong, what is expected`. The [[channels]] tables are checked in
frostwatch.alerts.channel_settings.
"""

from __future__ import annotations

import datetime as dt
import logging
from dataclasses import dataclass, field

from frostwatch.alerts.channel_settings import (  # noqa: F401 - re-exported
    ADDRESS_FIELDS,
    CHANNEL_TYPES,
    DEFAULT_ADDRESS,
    DEFAULT_TIMEOUT_S,
    LOCAL_BY_DEFAULT,
    Channel,
    _tname,
    _typed,
    channels_from_config,
)
from frostwatch.alerts.channels.template import DEFAULT_WEBHOOK_BODY  # noqa: F401 - re-exported
from frostwatch.errors import ConfigError

log = logging.getLogger("frostwatch.alerts.config")
_WARNED: set[str] = set()

ROUTED_LIKE = {"go-look": "protect"}  # a level without a route of its own takes this one's
ROLES = ("grower", "maintainer", "manager")

_ALERT_KEYS = {
    "repeat_interval_min": (float, 10.0), "escalate_after_min": (float, 15.0), "repeat_from_rank": (int, 4),
    "budget_per_hour": (int, 6), "retry_base_s": (float, 5.0), "retry_cap_s": (float, 300.0),
    "give_up_after_h": (float, 12.0), "degraded_after_failures": (int, 2), "status_url": (str, ""),
    "ack_secret_file": (str, ""), "ack_topic": (str, ""), "update_earlier_min": (float, 30.0),
}
_ARMED_KEYS = {"max_sensor_age_min": (float, 15.0), "min_battery_v": (float, 3.3), "test_channels": (bool, False)}
_CONTACT_KEYS = {"name": str, "roles": list, "email": str, "phone": str, "webhook": str, "command": str,
                 "ack_secret_file": str, "ack_secret_credential": str}


@dataclass(frozen=True)
class Contact:
    name: str
    roles: tuple[str, ...]
    addresses: dict
    # where this person's acknowledgement secret lives (ack_secret_file / ack_secret_credential):
    # with it, an MQTT acknowledgement may name an alert key instead of carrying a signed token
    ack_secret: dict = field(default_factory=dict)

    def address(self, field_name: str) -> str | None:
        return self.addresses.get(field_name) or None


@dataclass(frozen=True)
class RosterEntry:
    blocks: tuple[str, ...]
    order: tuple[str, ...]
    start: dt.date | None = None
    end: dt.date | None = None


@dataclass(frozen=True)
class AlertsConfig:
    repeat_interval_min: float = 10.0
    escalate_after_min: float = 15.0
    repeat_from_rank: int = 4
    budget_per_hour: int = 6
    retry_base_s: float = 5.0
    retry_cap_s: float = 300.0
    give_up_after_h: float = 12.0
    degraded_after_failures: int = 2
    status_url: str = ""
    ack_secret_file: str = ""
    ack_topic: str = ""
    update_earlier_min: float = 30.0
    route: dict = field(default_factory=lambda: {"default": ["*"]})
    deprecations: tuple[str, ...] = ()  # old names read from the config, each as a sentence to show
    armed: dict = field(default_factory=lambda: {k: v[1] for k, v in _ARMED_KEYS.items()})
    roster: tuple[RosterEntry, ...] = ()
    contacts: tuple[Contact, ...] = ()
    channels: tuple[Channel, ...] = ()

    def channel(self, name: str) -> Channel | None:
        return next((c for c in self.channels if c.name == name), None)

    def contact(self, name: str) -> Contact | None:
        return next((c for c in self.contacts if c.name == name), None)

    def channels_for(self, level: str) -> list[Channel]:
        """The channels of a level's route; `go-look` without a route of its own goes the way of
        `protect` (a block nobody watches at night is as urgent as a call to protect), else
        `default`. A level stored under its old name is routed as the new one."""
        from frostwatch.alerts.levels import level_name

        level = level_name(level)
        names = self.route.get(level)
        if names is None and level in ROUTED_LIKE:
            names = self.route.get(ROUTED_LIKE[level])
        if names is None:
            names = self.route.get("default", ["*"])
        if "*" in names:
            return list(self.channels)
        return [c for c in self.channels if c.name in names]

    def roster_for(self, block: str, night: dt.date | None) -> list[Contact]:
        """The ordered people for a block on a night: dated cover first, block-specific first."""
        def score(e: RosterEntry) -> tuple[int, int] | None:
            if block not in e.blocks and "*" not in e.blocks:
                return None
            dated = e.start is not None or e.end is not None
            if dated:
                if night is None:
                    return None
                if (e.start and night < e.start) or (e.end and night > e.end):
                    return None
            return (1 if dated else 0, 1 if block in e.blocks else 0)

        scored = [(score(e), i, e) for i, e in enumerate(self.roster)]
        scored = [s for s in scored if s[0] is not None]
        if scored:
            best = max(scored, key=lambda s: (s[0], -s[1]))[2]
            people = [self.contact(n) for n in best.order]
            return [p for p in people if p is not None]
        growers = [c for c in self.contacts if "grower" in c.roles]
        return growers or list(self.contacts)

    def with_role(self, role: str) -> list[Contact]:
        return [c for c in self.contacts if role in c.roles]


def _date(value, where: str, problems: list[str]) -> dt.date | None:
    if isinstance(value, dt.date) and not isinstance(value, dt.datetime):
        return value
    if isinstance(value, str):
        try:
            return dt.date.fromisoformat(value)
        except ValueError:
            pass
    problems.append(f"{where}: {value!r} is not a date, expected YYYY-MM-DD (the local date of the evening)")
    return None


def load_alerts_config(cfg) -> AlertsConfig:
    """Validate the alert sections of a frostwatch Config; ConfigError lists every problem."""
    raw = getattr(cfg, "raw", None) or {}
    alerts_raw = raw.get("alerts", getattr(cfg, "alerts", {}) or {})
    problems: list[str] = []
    values: dict = {}
    known = set(_ALERT_KEYS) | {"route", "armed", "roster"}
    for k in alerts_raw:
        if k not in known:
            problems.append(f"alerts.{k}: unknown key, expected one of {', '.join(sorted(known))}")
    for k, (typ, default) in _ALERT_KEYS.items():
        v = alerts_raw.get(k, default)
        types = (int, float) if typ is float else typ
        if not _typed(v, types):
            problems.append(f"alerts.{k}: {v!r} is not {_tname(types)}, expected {_tname(types)} (default {default!r})")
            continue
        if typ in (int, float) and v < 0:
            problems.append(f"alerts.{k}: {v!r} is negative, expected a value >= 0")
            continue
        values[k] = typ(v)
    if values.get("repeat_interval_min", 1) <= 0:
        problems.append("alerts.repeat_interval_min: must be above 0, expected minutes between repeats (e.g. 10)")
    if values.get("update_earlier_min", 1) <= 0:
        problems.append("alerts.update_earlier_min: must be above 0, expected minutes (e.g. 30)")
    if values.get("budget_per_hour", 1) < 1:
        problems.append("alerts.budget_per_hour: must be at least 1, expected notifications per block per hour (e.g. 6)")

    # contacts
    contacts: list[Contact] = []
    contacts_raw = raw.get("contacts", getattr(cfg, "contacts", ()) or ())
    for i, c in enumerate(contacts_raw):
        where = f"contacts[{i}]"
        if not isinstance(c, dict):
            problems.append(f"{where}: is not a table, expected [[contacts]] with name and addresses")
            continue
        for k, v in c.items():
            if k not in _CONTACT_KEYS:
                problems.append(f"{where}.{k}: unknown key, expected one of {', '.join(_CONTACT_KEYS)}")
            elif not _typed(v, _CONTACT_KEYS[k]):
                problems.append(f"{where}.{k}: {v!r} is not {_tname(_CONTACT_KEYS[k])}, expected {_tname(_CONTACT_KEYS[k])}")
        name = c.get("name")
        if not isinstance(name, str) or not name.strip():
            problems.append(f"{where}.name: missing, expected a short unique name (e.g. \"ana\")")
            continue
        if any(x.name == name for x in contacts):
            problems.append(f"{where}.name: {name!r} is used twice, expected unique contact names")
        roles = c.get("roles", ["grower"])
        if isinstance(roles, list):
            bad = [r for r in roles if r not in ROLES]
            if bad:
                problems.append(f"{where}.roles: {bad!r} unknown, expected some of {', '.join(ROLES)}")
        else:
            roles = ["grower"]
        addr = {k: c[k] for k in ("email", "phone", "webhook", "command") if isinstance(c.get(k), str)}
        if "email" in addr and "@" not in addr["email"]:
            problems.append(f"{where}.email: {addr['email']!r} is not an address, expected name@domain")
        ack_secret = {k: c[k] for k in ("ack_secret_file", "ack_secret_credential") if isinstance(c.get(k), str)}
        contacts.append(Contact(name, tuple(r for r in roles if r in ROLES), addr, ack_secret))
    names = {c.name for c in contacts}

    # channels
    channels = channels_from_config(raw.get("channels", ()) or (), problems)
    chan_names = {c.name for c in channels}

    # route (level names before 0.2 are read, each with a deprecation message)
    route_raw = alerts_raw.get("route", {"default": ["*"]})
    route: dict = {}
    deprecations: list[str] = []
    if not isinstance(route_raw, dict):
        problems.append("alerts.route: is not a table, expected level = [channel names]")
    else:
        from frostwatch.alerts.levels import ALL_LEVELS, OLD_NAMES, OLD_NAMES_UNTIL, RENAMED_IN
        for old_lvl, lst in route_raw.items():
            lvl = OLD_NAMES.get(old_lvl, old_lvl)
            if lvl != "default" and lvl not in ALL_LEVELS:
                problems.append(f"alerts.route.{lvl}: not a level, expected default or one of {', '.join(ALL_LEVELS)}")
                continue
            if lvl != old_lvl:
                deprecations.append(
                    f"alerts.route.{old_lvl}: the level {old_lvl!r} is called {lvl!r} since frostwatch {RENAMED_IN}; "
                    f"the old name is read in this release and refused from {OLD_NAMES_UNTIL}: rename the key to {lvl}")
                if lvl in route_raw:
                    problems.append(f"alerts.route.{old_lvl}: both {old_lvl} (the old name) and {lvl} are given, "
                                    f"expected only {lvl}")
                    continue
            if not isinstance(lst, list) or not all(isinstance(x, str) for x in lst):
                problems.append(f"alerts.route.{lvl}: {lst!r} is not a list of channel names, expected e.g. [\"sms\", \"mail\"]")
                continue
            bad = [x for x in lst if x != "*" and x not in chan_names]
            if bad:
                problems.append(f"alerts.route.{lvl}: unknown channel {bad!r}, expected names from [[channels]]: {', '.join(sorted(chan_names))}")
            route[lvl] = lst
        route.setdefault("default", ["*"])

    # armed check
    armed_raw = alerts_raw.get("armed", {})
    armed = {k: v[1] for k, v in _ARMED_KEYS.items()}
    if isinstance(armed_raw, dict):
        for k, v in armed_raw.items():
            if k not in _ARMED_KEYS:
                problems.append(f"alerts.armed.{k}: unknown key, expected one of {', '.join(_ARMED_KEYS)}")
                continue
            typ = _ARMED_KEYS[k][0]
            types = (int, float) if typ is float else typ
            if not _typed(v, types):
                problems.append(f"alerts.armed.{k}: {v!r} is not {_tname(types)}, expected {_tname(types)}")
            else:
                armed[k] = typ(v)
    else:
        problems.append("alerts.armed: is not a table, expected [alerts.armed] with max_sensor_age_min, ...")

    # roster
    roster: list[RosterEntry] = []
    block_ids = {b.id for b in getattr(cfg, "blocks", ())}
    roster_raw = alerts_raw.get("roster", [])
    if not isinstance(roster_raw, list):
        problems.append("alerts.roster: is not an array of tables, expected [[alerts.roster]] entries")
        roster_raw = []
    for i, e in enumerate(roster_raw):
        where = f"alerts.roster[{i}]"
        if not isinstance(e, dict):
            problems.append(f"{where}: is not a table, expected blocks and order")
            continue
        for k in e:
            if k not in ("blocks", "order", "from", "to"):
                problems.append(f"{where}.{k}: unknown key, expected blocks, order, from, to")
        blocks = e.get("blocks", ["*"])
        if not isinstance(blocks, list) or not all(isinstance(b, str) for b in blocks):
            problems.append(f"{where}.blocks: {blocks!r} is not a list of block ids, expected e.g. [\"east\"] or [\"*\"]")
            blocks = ["*"]
        for b in blocks:
            if b != "*" and block_ids and b not in block_ids:
                problems.append(f"{where}.blocks: {b!r} is not a block, expected one of {', '.join(sorted(block_ids))} or \"*\"")
        order = e.get("order")
        if not isinstance(order, list) or not order or not all(isinstance(n, str) for n in order):
            problems.append(f"{where}.order: {order!r} is not a list of contact names, expected e.g. [\"ana\", \"ben\"]")
            continue
        for n in order:
            if n not in names:
                problems.append(f"{where}.order: {n!r} is not a contact, expected names from [[contacts]]: {', '.join(sorted(names)) or '(none)'}")
        start = _date(e["from"], f"{where}.from", problems) if "from" in e else None
        end = _date(e["to"], f"{where}.to", problems) if "to" in e else None
        if start and end and end < start:
            problems.append(f"{where}.to: {end} is before from {start}, expected to >= from")
        roster.append(RosterEntry(tuple(blocks), tuple(order), start, end))

    if problems:
        raise ConfigError(str(getattr(cfg, "path", None) or "<config>"), problems)
    for text in deprecations:
        if text not in _WARNED:  # once per process: the daemon reloads its config
            _WARNED.add(text)
            log.warning("%s: %s", getattr(cfg, "path", None) or "<config>", text)
    return AlertsConfig(**values, route=route, armed=armed, roster=tuple(roster), contacts=tuple(contacts),
                        channels=tuple(channels), deprecations=tuple(deprecations))
