"""A site's state on a broker network: topics, versioned JSON payloads, and what is worth sending.

Pure: no MQTT, no clock (times are passed in). Topics, under the site's `[broker] prefix`:

    {prefix}/{site}/state/{block}   retained, QoS 1: the block's state (STATE_VERSION), sent when it
                                    changes (see `significant_change`) and every `refresh_s`
    {prefix}/{site}/heartbeat       retained, QoS 0 over a bridge: the site is alive, every `heartbeat_s`
    {prefix}/{site}/info            retained, QoS 1: name, number of blocks and current problems, sent
                                    when they change and every `refresh_s`
    {prefix}/{site}/online          retained: "online" on connect, "offline" on a clean stop and as
                                    the publisher connection's last will (the site is not watched)
    {prefix}/{site}/bridge          retained "1"/"0": a Mosquitto bridge's own notification (its will
                                    on the central broker says "0" when the link drops); not ours

A state payload (about 300 bytes) for the central view:

    {"v": 1, "site": "cedar-bench", "block": "east", "level": "ready", "rank": 3,
     "monitored": true, "as_of": "2027-04-15T09:12:00Z", "predicted_min_c": -1.2, "band_c": 0.8,
     "predicted_min_at": "...", "t10_crossing_at": "..." or null, "action": "...",
     "acknowledged": false or null, "reason": "..."}

`rank` is the stable key (0 = all clear, growing with urgency); `level` is shown as sent.
"""

from __future__ import annotations

import datetime as dt
import json
import re
from collections.abc import Iterable, Mapping
from dataclasses import dataclass

STATE_VERSION = 1
HEARTBEAT_VERSION = 1
INFO_VERSION = 1
ONLINE = b"online"
OFFLINE = b"offline"
ACTION_MAX_CHARS = 200  # the action as the site says it, cut for a cellular uplink
PROBLEM_MAX = 6  # site problems carried by the heartbeat, each cut to PROBLEM_MAX_CHARS
PROBLEM_MAX_CHARS = 100
STATE_KEYS = ("level", "rank", "monitored", "as_of", "predicted_min_c", "band_c", "predicted_min_at",
              "t10_crossing_at", "action", "acknowledged", "reason")


@dataclass(frozen=True)
class SiteTopics:
    """The topics of one site under a prefix."""

    prefix: str
    site: str

    @property
    def root(self) -> str:
        return f"{self.prefix.strip('/')}/{self.site}"

    def state(self, block: str) -> str:
        return f"{self.root}/state/{block}"

    @property
    def heartbeat(self) -> str:
        return f"{self.root}/heartbeat"

    @property
    def info(self) -> str:
        return f"{self.root}/info"

    @property
    def online(self) -> str:
        return f"{self.root}/online"

    @property
    def bridge(self) -> str:
        return f"{self.root}/bridge"


def iso_utc(t: dt.datetime | None) -> str | None:
    """An instant as `YYYY-MM-DDTHH:MM:SSZ` (whole seconds: a few bytes less on the uplink)."""
    if t is None:
        return None
    return t.astimezone(dt.UTC).replace(microsecond=0).isoformat().replace("+00:00", "Z")


def parse_utc(text: str | None) -> dt.datetime | None:
    """An ISO 8601 instant with an offset or Z; None for None. Raises ValueError otherwise."""
    if text is None:
        return None
    if not isinstance(text, str):
        raise ValueError(f"{text!r} is not a time")
    t = dt.datetime.fromisoformat(text.replace("Z", "+00:00"))
    if t.tzinfo is None:
        raise ValueError(f"{text!r} has no UTC offset")
    return t.astimezone(dt.UTC)


def _round(x: float | None, nd: int = 1) -> float | None:
    return None if x is None else round(float(x), nd)


def _when(x) -> str | None:
    """An instant (datetime or ISO text) as whole-second UTC text."""
    if x is None:
        return None
    return iso_utc(x if isinstance(x, dt.datetime) else parse_utc(x))


def state_doc(site: str, block: Mapping) -> dict:
    """The versioned state payload of one block from a per-block state dict.

    `block` holds `block`, `level`, `rank`, `monitored`, `as_of` (an ISO instant), and optionally
    `predicted_min_c`, `band_c`, `predicted_min_at`, `t10_crossing_at`, `action`, `acknowledged`
    (True, False, or None when nothing needs acknowledging) and `reason`.
    """
    action = block.get("action")
    if isinstance(action, str) and len(action) > ACTION_MAX_CHARS:
        action = action[: ACTION_MAX_CHARS - 1].rstrip() + "…"
    doc = {
        "v": STATE_VERSION, "site": site, "block": str(block["block"]),
        "level": str(block["level"]), "rank": int(block["rank"]), "monitored": bool(block["monitored"]),
        "as_of": _when(block["as_of"]),
        "predicted_min_c": _round(block.get("predicted_min_c")), "band_c": _round(block.get("band_c")),
        "predicted_min_at": _when(block.get("predicted_min_at")), "t10_crossing_at": _when(block.get("t10_crossing_at")),
        "action": action, "acknowledged": block.get("acknowledged"),
    }
    if block.get("reason"):
        doc["reason"] = str(block["reason"])[:ACTION_MAX_CHARS]
    return doc


def encode(doc: Mapping) -> bytes:
    """Compact JSON (no spaces, UTF-8): the bytes that go over the uplink."""
    return json.dumps(doc, separators=(",", ":"), ensure_ascii=False).encode("utf-8")


def state_messages(prefix: str, site: str, blocks: Iterable[Mapping]) -> list[tuple[str, bytes]]:
    """(topic, payload) of each block's retained state: the site publisher's whole interface."""
    t = SiteTopics(prefix, site)
    return [(t.state(str(b["block"])), encode(state_doc(site, b))) for b in blocks]


def heartbeat_doc(now_utc: dt.datetime, every_s: float, evaluated_at: str | None, changed_at: str | None) -> dict:
    """The site heartbeat (about 120 bytes, every `every_s`): alive at `now_utc`. `evaluated_at` is
    the site's latest evaluation and `changed_at` the `as_of` of the newest state it sent, so the
    centre knows whether it holds every state up to `evaluated_at`. The topic names the site (a
    few bytes less each minute on the uplink)."""
    return {"v": HEARTBEAT_VERSION, "time": iso_utc(now_utc), "every_s": round(every_s),
            "evaluated_at": evaluated_at, "changed_at": changed_at}


def info_doc(site: str, name: str, blocks: int, problems: Iterable[str], now_utc: dt.datetime) -> dict:
    """What rarely changes (sent when it does, and with the hourly refresh): the site's name, how
    many blocks it has, and its current problems (the daemon's and its sensors')."""
    probs = [str(p)[:PROBLEM_MAX_CHARS] for p in problems][:PROBLEM_MAX]
    return {"v": INFO_VERSION, "site": site, "name": name, "blocks": blocks, "problems": probs, "time": iso_utc(now_utc)}


def info_message(prefix: str, doc: Mapping) -> tuple[str, bytes]:
    return SiteTopics(prefix, doc["site"]).info, encode(doc)


def heartbeat_message(prefix: str, site: str, doc: Mapping) -> tuple[str, bytes]:
    return SiteTopics(prefix, site).heartbeat, encode(doc)


def will_message(prefix: str, site: str) -> tuple[str, bytes]:
    """The last will of the site publisher's connection: the site is not being watched."""
    return SiteTopics(prefix, site).online, OFFLINE


def online_message(prefix: str, site: str) -> tuple[str, bytes]:
    return SiteTopics(prefix, site).online, ONLINE


# ---- what is worth sending -------------------------------------------------------------------

EXACT_KEYS = ("level", "rank", "monitored", "acknowledged", "reason")
_NUMBERS = re.compile(r"[-+]?\d[\d.:]*")


def action_shape(action: str | None) -> str | None:
    """The action's wording with its numbers (times, temperatures, minutes) taken out: "get the
    wind machines ready by 04:50" and "... by 04:37" have one shape; "start the wind machines
    now" has another."""
    return None if action is None else _NUMBERS.sub("#", action)
TEMP_KEYS = ("predicted_min_c", "band_c")
TIME_KEYS = ("predicted_min_at", "t10_crossing_at")


def significant_change(old: Mapping | None, new: Mapping, min_change_c: float, min_change_s: float) -> bool:
    """Is `new` worth sending over the uplink after `old` (the last state sent)?

    Any change of level, rank, monitoring, acknowledgement or reason is, and of the action's
    wording (`action_shape`: its numbers alone follow the projection, judged below); a projected
    minimum or band that moved by `min_change_c` or more is; a projected time that moved by
    `min_change_s` or more is; a value appearing or disappearing is. `as_of` alone is not.
    """
    if old is None:
        return True
    if any(old.get(k) != new.get(k) for k in EXACT_KEYS):
        return True
    if action_shape(old.get("action")) != action_shape(new.get("action")):
        return True
    for k in TEMP_KEYS:
        a, b = old.get(k), new.get(k)
        if (a is None) != (b is None) or (a is not None and abs(a - b) >= min_change_c):
            return True
    for k in TIME_KEYS:
        a, b = old.get(k), new.get(k)
        if (a is None) != (b is None):
            return True
        if a is not None and a != b and abs((parse_utc(a) - parse_utc(b)).total_seconds()) >= min_change_s:
            return True
    return False


class StateFilter:
    """Remembers the last state sent per block and picks what to send now: a significant change,
    or any state not sent for `refresh_s` (so a central broker that lost its retained store is
    refilled). Times are monotonic seconds, passed in."""

    def __init__(self, min_change_c: float = 0.5, min_change_s: float = 900.0, refresh_s: float = 3600.0):
        self.min_change_c = min_change_c
        self.min_change_s = min_change_s
        self.refresh_s = refresh_s
        self.sent: dict[str, tuple[dict, float]] = {}

    def select(self, docs: Iterable[dict], now_mono_s: float) -> list[dict]:
        out = []
        for d in docs:
            last = self.sent.get(d["block"])
            if last is None or significant_change(last[0], d, self.min_change_c, self.min_change_s) \
                    or now_mono_s - last[1] >= self.refresh_s:
                out.append(d)
        return out

    def mark_sent(self, docs: Iterable[dict], now_mono_s: float) -> None:
        for d in docs:
            self.sent[d["block"]] = (d, now_mono_s)

    def forget(self) -> None:
        """Send everything again next time (after a reconnect to a broker that may have lost it)."""
        self.sent.clear()


# ---- today's feed: the daemon's published block document -----------------------------------


def block_state_from_status_doc(doc: Mapping, rank: int, acknowledged: bool | None) -> dict:
    """A per-block state dict from the daemon's `{status}/blocks/BLOCK` document: the block as
    `frostwatch status --json` shows it (`frostwatch.status.document.decision_json` of the stored decision),
    so `monitored` and its `reason` are the decision's own."""
    p = doc.get("projection") or {}
    monitored = bool(doc.get("monitored"))
    return {
        "block": doc["block"], "level": doc.get("level") or "rest", "rank": rank, "monitored": monitored,
        "as_of": doc.get("as_of"), "predicted_min_c": p.get("predicted_min_c"), "band_c": p.get("band_c"),
        "predicted_min_at": p.get("predicted_min_at"), "t10_crossing_at": p.get("t10_crossing_at"),
        "action": doc.get("action"), "acknowledged": acknowledged, "reason": None if monitored else doc.get("reason"),
    }
