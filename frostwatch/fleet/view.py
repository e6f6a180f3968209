"""The central fleet view's model (pure): messages from many sites in, one ordered picture out.

`FleetModel.on_message(topic, payload, received_utc, retained)` takes what the broker delivers on
`{prefix}/+/state/+`, `{prefix}/+/heartbeat`, `{prefix}/+/info`, `{prefix}/+/online` and
`{prefix}/+/bridge` (see
frostwatch.fleet.site); a message it cannot read is counted and kept with its reason, never
raised. `snapshot(now_utc)` gives the contract document of `frostwatch fleet --json`:

    {"sites": [{"site", "last_contact", "reachable", "blocks": [{"block", "level", "rank",
      "monitored", "as_of", ...}], ...}], ...}

A site is reachable only while its heartbeat is fresh (younger than 2.5 of its intervals + 30 s),
its publisher has not said "offline" (its will, or a clean stop) and its bridge has not said "0".
Never green when blind: a site never heard from is unreachable. Sites come highest rank first,
where an unreachable site or a block not monitored counts as BLIND_RANK (as urgent as "protect").
"""

from __future__ import annotations

import datetime as dt
import json
from collections import deque
from dataclasses import dataclass, field

from frostwatch.config import SITE_ID_RE
from frostwatch.fleet.site import HEARTBEAT_VERSION, INFO_VERSION, STATE_VERSION, iso_utc, parse_utc

BLIND_RANK = 4  # an unreachable site or an unmonitored block sorts with "protect" (health level "go-look")
STALE_HEARTBEATS = 2.5  # heartbeats missed before a site is unreachable ...
STALE_SLACK_S = 30.0  # ... plus this for a slow link
CLOCK_AHEAD_S = 120.0  # a heartbeat stamped further ahead of our clock is reported
KEEP_REJECTED = 20
# first levels under the prefix that a site itself uses (its status and acknowledgement topics, and
# site ids may not take them): on a broker shared with a site they are passed over in silence
RESERVED = ("status", "ack")
CAUTION = ("For oversight only: the alert to the person on duty comes from each site's own frostwatch, "
           "never from this view. A site shown unreachable may still be protecting itself; call someone there.")


def _stale_after_s(heartbeat: dict) -> float:
    """How long a site may stay silent after a heartbeat before it is unreachable."""
    return STALE_HEARTBEATS * float(heartbeat["every_s"]) + STALE_SLACK_S


class Rejected(ValueError):
    """A message the fleet view cannot use; the text says why."""


@dataclass
class SiteSeen:
    site: str
    name: str | None = None
    heartbeat: dict | None = None
    info: dict | None = None  # name, blocks, problems
    contact_utc: dt.datetime | None = None  # the newest moment we know the site was in touch
    online: str | None = None  # "online" / "offline" as the site's publisher (or its will) said
    online_at_utc: dt.datetime | None = None
    bridge: str | None = None  # "1" / "0" from the site's bridge notification
    bridge_at_utc: dt.datetime | None = None
    blocks: dict[str, dict] = field(default_factory=dict)
    # the site's own messages this view could not read, by their topic's kind ("state/east",
    # "heartbeat", "info"): shown as the site's problems until a readable one replaces them
    unreadable: dict[str, str] = field(default_factory=dict)

    def holds_nothing(self) -> bool:
        return (self.heartbeat is None and self.info is None and not self.blocks and not self.unreadable
                and self.online is None and self.bridge is None)


def _get_json(payload: bytes, what: str) -> dict:
    try:
        doc = json.loads(payload.decode("utf-8"))
    except (UnicodeDecodeError, ValueError, RecursionError) as exc:  # RecursionError: nested too deep
        raise Rejected(f"{what} is not JSON: {exc}") from None
    if not isinstance(doc, dict):
        raise Rejected(f"{what} is not a JSON object")
    return doc


def _version(doc: dict, known: int, what: str) -> None:
    v = doc.get("v")
    if not isinstance(v, int) or isinstance(v, bool):
        raise Rejected(f"{what} has no version number v")
    if v > known:
        raise Rejected(f"{what} is version {v}; this frostwatch reads up to {known}: upgrade the fleet view")


def _time(doc: dict, key: str, what: str, required: bool = True) -> dt.datetime | None:
    v = doc.get(key)
    if v is None and not required:
        return None
    try:
        t = parse_utc(v)
    except ValueError as exc:
        raise Rejected(f"{what}.{key}: {exc}") from None
    if t is None:
        raise Rejected(f"{what}.{key}: missing")
    return t


def parse_state(site: str, block: str, payload: bytes) -> dict:
    """A block's state payload, checked; raises Rejected with the reason."""
    what = f"state of {site}/{block}"
    doc = _get_json(payload, what)
    _version(doc, STATE_VERSION, what)
    if doc.get("block") != block or doc.get("site", site) != site:
        raise Rejected(f"{what}: the payload names {doc.get('site')}/{doc.get('block')}, not its topic's")
    if not isinstance(doc.get("level"), str):
        raise Rejected(f"{what}.level: missing or not text")
    rank = doc.get("rank")
    if not isinstance(rank, int) or isinstance(rank, bool) or not 0 <= rank <= 100:
        raise Rejected(f"{what}.rank: {rank!r}; expected a whole number 0..100")
    if not isinstance(doc.get("monitored"), bool):
        raise Rejected(f"{what}.monitored: {doc.get('monitored')!r}; expected true or false")
    _time(doc, "as_of", what)
    for k in ("predicted_min_c", "band_c"):
        x = doc.get(k)
        if x is not None and (isinstance(x, bool) or not isinstance(x, int | float) or not -90 <= x <= 90):
            raise Rejected(f"{what}.{k}: {x!r}; expected degrees Celsius or null")
    for k in ("predicted_min_at", "t10_crossing_at"):
        _time(doc, k, what, required=False)
    for k in ("action", "reason"):
        if doc.get(k) is not None and not isinstance(doc[k], str):
            raise Rejected(f"{what}.{k}: expected text or null")
    if doc.get("acknowledged") not in (None, True, False):
        raise Rejected(f"{what}.acknowledged: expected true, false or null")
    return doc


def parse_heartbeat(site: str, payload: bytes) -> dict:
    what = f"heartbeat of {site}"
    doc = _get_json(payload, what)
    _version(doc, HEARTBEAT_VERSION, what)
    if doc.get("site", site) != site:
        raise Rejected(f"{what}: the payload names site {doc.get('site')!r}")
    _time(doc, "time", what)
    every = doc.get("every_s")
    if isinstance(every, bool) or not isinstance(every, int | float) or not 0 < every <= 86400:
        raise Rejected(f"{what}.every_s: {every!r}; expected seconds between heartbeats")
    for k in ("evaluated_at", "changed_at"):
        _time(doc, k, what, required=False)
    return doc


def parse_info(site: str, payload: bytes) -> dict:
    what = f"info of {site}"
    doc = _get_json(payload, what)
    _version(doc, INFO_VERSION, what)
    if doc.get("site", site) != site:
        raise Rejected(f"{what}: the payload names site {doc.get('site')!r}")
    if doc.get("name") is not None and not isinstance(doc["name"], str):
        raise Rejected(f"{what}.name: expected text")
    blocks = doc.get("blocks")
    if blocks is not None and (isinstance(blocks, bool) or not isinstance(blocks, int) or blocks < 0):
        raise Rejected(f"{what}.blocks: {blocks!r}; expected a whole number")
    probs = doc.get("problems", [])
    if not isinstance(probs, list) or not all(isinstance(x, str) for x in probs):
        raise Rejected(f"{what}.problems: expected a list of text")
    return doc


class FleetModel:
    """Every site seen on the central broker under one prefix."""

    def __init__(self, prefix: str = "frostwatch"):
        self.prefix = prefix.strip("/")
        self.sites: dict[str, SiteSeen] = {}
        self.rejected_count = 0
        self.rejected: deque[dict] = deque(maxlen=KEEP_REJECTED)
        self.messages = 0

    # -- messages in -----------------------------------------------------------------------------
    def on_message(self, topic: str, payload: bytes, received_utc: dt.datetime, retained: bool) -> str | None:
        """Take one message; returns None, or the reason it was refused (also kept in `rejected`)."""
        self.messages += 1
        try:
            self._take(topic, payload, received_utc, retained)
            return None
        except Rejected as exc:
            self.rejected_count += 1
            self.rejected.append({"time": iso_utc(received_utc), "topic": topic[:200], "reason": str(exc)[:300]})
            self._note_unreadable(topic, str(exc))
            return str(exc)

    def _site_and_kind(self, topic: str) -> tuple[str, str] | None:
        """(site, kind) of a topic under the prefix with a valid site id; kind is "state/BLOCK",
        "heartbeat", "info", "online" or "bridge" (anything else is None)."""
        pre = self.prefix.split("/")
        levels = topic.split("/")
        rest = levels[len(pre):]
        if levels[: len(pre)] != pre or len(rest) < 2 or rest[0] in RESERVED or not SITE_ID_RE.fullmatch(rest[0]):
            return None
        if rest[1] == "state" and len(rest) == 3:
            return rest[0], f"state/{rest[2]}"
        if rest[1] in ("heartbeat", "info", "online", "bridge") and len(rest) == 2:
            return rest[0], rest[1]
        return None

    def _note_unreadable(self, topic: str, reason: str) -> None:
        """A site's own message that could not be read is that site's problem, named with its
        topic, so a site whose every message is unreadable (a newer version, say) is shown, and
        blind, rather than missing."""
        sk = self._site_and_kind(topic)
        if sk is None:
            return
        s = self._site(sk[0])
        s.unreadable[sk[1]] = f"{topic[:200]} could not be read: {reason[:300]}"

    def _clear(self, site: str, kind: str) -> None:
        """An empty retained message clears that topic (how a removed site's topics are cleared):
        the view forgets what it held there, and forgets the site once nothing of it is left."""
        s = self.sites.get(site)
        if s is None:
            return
        if kind.startswith("state/"):
            s.blocks.pop(kind[len("state/"):], None)
        elif kind == "heartbeat":
            s.heartbeat = None
        elif kind == "info":
            s.info = None
        elif kind == "online":
            s.online, s.online_at_utc = None, None
        elif kind == "bridge":
            s.bridge, s.bridge_at_utc = None, None
        s.unreadable.pop(kind, None)
        if s.holds_nothing():
            del self.sites[site]

    def _site(self, site: str) -> SiteSeen:
        s = self.sites.get(site)
        if s is None:
            s = self.sites[site] = SiteSeen(site)
        return s

    def _contact(self, s: SiteSeen, at_utc: dt.datetime) -> None:
        if s.contact_utc is None or at_utc > s.contact_utc:
            s.contact_utc = at_utc

    def _take(self, topic: str, payload: bytes, received_utc: dt.datetime, retained: bool) -> None:
        levels = topic.split("/")
        pre = self.prefix.split("/")
        rest = levels[len(pre):]
        if levels[: len(pre)] != pre or len(rest) < 2:
            raise Rejected(f"topic {topic!r} is not {self.prefix}/SITE/...")
        site, kind = rest[0], rest[1]
        if site in RESERVED:
            return
        if not SITE_ID_RE.fullmatch(site):
            raise Rejected(f"topic {topic!r}: {site!r} is not a site id")
        sk = self._site_and_kind(topic)
        if sk is not None and not payload:  # a retained message cleared by hand (a removed site)
            self._clear(*sk)
            return
        if sk is not None and site in self.sites:
            self.sites[site].unreadable.pop(sk[1], None)  # a newer message on that topic replaces it
        if kind == "state" and len(rest) == 3:
            block = rest[2]
            doc = parse_state(site, block, payload)
            s = self._site(site)
            doc["_received_utc"] = received_utc
            s.blocks[block] = doc
            as_of = parse_utc(doc["as_of"])
            self._contact(s, received_utc if not retained else min(as_of, received_utc))
        elif kind == "heartbeat" and len(rest) == 2:
            doc = parse_heartbeat(site, payload)
            s = self._site(site)
            t = parse_utc(doc["time"])
            doc["_ahead_s"] = (t - received_utc).total_seconds()
            # live: it arrived now; retained: it is as old as it says (never newer than now). A live
            # one stamped further back than a site may stay silent is an old copy (a bridge that
            # reconnects forwards the site broker's retained heartbeat of a hung daemon as a live
            # message) or a clock far behind: as old as it says, never fresh contact
            old_copy = (received_utc - t).total_seconds() > _stale_after_s(doc)
            contact = received_utc if not (retained or old_copy) else min(t, received_utc)
            doc["_old_live_copy"] = old_copy and not retained
            s.heartbeat = doc
            self._contact(s, contact)
        elif kind == "info" and len(rest) == 2:
            doc = parse_info(site, payload)
            s = self._site(site)
            s.info = doc
            s.name = doc.get("name") or s.name
        elif kind == "online" and len(rest) == 2:
            text = payload.decode("utf-8", "replace").strip()
            if text not in ("online", "offline"):
                raise Rejected(f"{topic}: {text[:40]!r}; expected online or offline")
            s = self._site(site)
            s.online, s.online_at_utc = text, received_utc
        elif kind == "bridge" and len(rest) == 2:
            text = payload.decode("utf-8", "replace").strip()
            if text not in ("0", "1"):
                raise Rejected(f"{topic}: {text[:40]!r}; expected 1 or 0 (a bridge notification)")
            s = self._site(site)
            s.bridge, s.bridge_at_utc = text, received_utc
        else:
            raise Rejected(f"topic {topic!r} is not a fleet topic (state/BLOCK, heartbeat, info, online, bridge)")

    # -- the picture out ---------------------------------------------------------------------------
    def site_status(self, s: SiteSeen, now_utc: dt.datetime) -> tuple[bool, str | None]:
        """(reachable, why not)."""
        hb = s.heartbeat
        if s.online == "offline":
            return False, "frostwatch at the site stopped or lost its broker (its last will)"
        if s.bridge == "0":
            return False, "the link from the site's broker is down (bridge notification)"
        if hb is None and "heartbeat" in s.unreadable:
            return False, "its heartbeat could not be read (see its problems)"
        if hb is None or s.contact_utc is None:
            return False, "no heartbeat received from this site"
        age = (now_utc - s.contact_utc).total_seconds()
        if age > _stale_after_s(hb):
            why = f"no heartbeat for {age / 60:.0f} min (expected every {float(hb['every_s']):.0f} s)"
            if hb["_old_live_copy"]:
                why += (f"; the latest came {-hb['_ahead_s'] / 60:.0f} min after the time it carries "
                        "(an old copy, or the site's clock is behind)")
            return False, why
        return True, None

    def block_doc(self, s: SiteSeen, b: dict) -> dict:
        hb = s.heartbeat or {}
        as_of = b["as_of"]
        # the site's heartbeat says its latest evaluation; a block's state is current as of then
        # when we hold every state the site sent up to it (changed_at)
        ev, changed = hb.get("evaluated_at"), hb.get("changed_at")
        newest = max((parse_utc(x["as_of"]) for x in s.blocks.values()), default=None)
        if ev and parse_utc(ev) > parse_utc(as_of) and (changed is None or (newest and newest >= parse_utc(changed))):
            as_of = ev
        out = {k: v for k, v in b.items() if not k.startswith("_") and k not in ("v", "site")}
        out["as_of"] = iso_utc(parse_utc(as_of))
        out["state_sent_at"] = b["as_of"]
        out.setdefault("reason", None)  # every block carries every key of the README's list (null: monitored)
        return out

    @staticmethod
    def order_rank(block: dict) -> int:
        return block["rank"] if block["monitored"] else max(block["rank"], BLIND_RANK)

    def snapshot(self, now_utc: dt.datetime, only_site: str | None = None) -> dict:
        """The whole picture (or one site's, for a script that watches one)."""
        sites = []
        for s in self.sites.values():
            if only_site is not None and s.site != only_site:
                continue
            if s.heartbeat is None and s.info is None and not s.blocks and not s.unreadable:
                continue  # only a flag (online, bridge) so far: a site shows once it has said who it is
            reachable, why = self.site_status(s, now_utc)
            blocks = sorted((self.block_doc(s, b) for b in s.blocks.values()),
                            key=lambda b: (-self.order_rank(b), b["block"]))
            hb = s.heartbeat or {}
            info = s.info or {}
            problems = list(info.get("problems") or [])
            ahead = hb.get("_ahead_s")
            if ahead is not None and ahead > CLOCK_AHEAD_S:
                problems.append(f"the site's clock is {ahead / 60:.0f} min ahead of this view's")
            problems += [s.unreadable[k] for k in sorted(s.unreadable)]
            unread = sum(1 for k in s.unreadable if k.startswith("state/") and k[len("state/"):] not in s.blocks)
            expected = info.get("blocks")
            if isinstance(expected, int) and expected > len(blocks) + unread:
                problems.append(f"{expected - len(blocks) - unread} of its {expected} blocks have sent no state yet")
            worst = max((self.order_rank(b) for b in blocks), default=0)
            sites.append({
                "site": s.site, "name": s.name, "last_contact": iso_utc(s.contact_utc), "reachable": reachable,
                "why_unreachable": why, "evaluated_at": hb.get("evaluated_at"), "heartbeat_every_s": hb.get("every_s"),
                "problems": problems, "order_rank": max(worst, 0 if reachable else BLIND_RANK), "blocks": blocks,
            })
        sites.sort(key=lambda x: (-x["order_rank"], x["reachable"], x["site"]))
        return {
            "as_of": iso_utc(now_utc), "caution": CAUTION, "sites": sites,
            "rejected": {"count": self.rejected_count, "latest": list(self.rejected)},
        }
