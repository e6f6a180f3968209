"""The alert outbox: every alert and every delivery attempt is written to SQLite before it is sent.

    outbox = Outbox(store, cfg)
    outbox.submit(alerts, now_utc) -> int         # persist new alerts and their first deliveries
    outbox.submit_health(subject, detail, now_utc, urgent=False) -> key
    outbox.deliver_due(now_utc) -> int            # start every due attempt; never raises
    outbox.acknowledge(key, who, via, now_utc) -> bool

How it behaves (reliability.md section 6):

- An alert, its escalation state and its first delivery rows go in one transaction. A delivery is
  one (alert, channel, recipient, seq) with the idempotency key `alert key:seq`; seq 0 is the
  first notice, repeats and escalations count up. The key travels as the email Message-ID, the
  webhook `Idempotency-Key` header and inside MQTT payloads.
- `deliver_due` leases due rows per channel and hands them to that channel's own worker thread,
  so a hung SMTP server (every call has a timeout) delays only email. A lease held by another
  process (one killed with -9) is reclaimed at once, so every alert is delivered at least once
  and a duplicate carries the same key. Failures retry with capped full-jitter backoff; a
  permanent failure (HTTP 4xx, SMTP 5xx, bad config) is not retried and tells a maintainer.
- An update (a standby whose crossing moved earlier) counts against `budget_per_hour` like a
  repeat and waits beyond it; a newer update of the block replaces one still waiting. The first
  notice of a level and an escalation never wait.
- An alert of rank >= `repeat_from_rank` (protect, all-hands, go-look) repeats every
  `repeat_interval_min` until acknowledged, and every `escalate_after_min` it adds the next person
  of the block's roster. Repeats beyond `budget_per_hour` notifications per block wait; the first
  notice of a level and an escalation are never held back. A resolving alert (rest,
  may-stop) stops the block's repeats and goes once to everyone who was told.
- When `degraded_after_failures` remote attempts in a row fail with no remote success, every
  unsent alert also goes out on every local channel (siren, GSM command, console), and one
  "remote alerting degraded" notice is queued on the remote channels for when they return.

Time is injected: the caller passes `now_utc`; workers add the monotonic time they spent.

The outbox is one class in three modules: this one (queuing alerts and health alerts,
acknowledgements), `frostwatch.alerts.delivery` (the channels' workers, attempts, backoff, sending
from memory) and `frostwatch.alerts.escalation` (repeats, escalation, local channels when remote
alerting fails); its SQL is in `frostwatch.store.outbox`.
"""

from __future__ import annotations

import concurrent.futures as cf
import datetime as dt
import logging
import os
import random
import re
import secrets
import threading
from pathlib import Path

from frostwatch.advice.short import notice_body, short_message
from frostwatch.alerts import ackcodes, acks, levels
from frostwatch.alerts.config import AlertsConfig, Contact, load_alerts_config
from frostwatch.alerts.delivery import BROADCAST, Delivering, night_of_key
from frostwatch.alerts.escalation import Escalating, _unique
from frostwatch.alerts.levels import level_name, rank_of
from frostwatch.models import Alert
from frostwatch.store import Store, to_ms
from frostwatch.store import acks as stored_acks
from frostwatch.store import outbox as ob

log = logging.getLogger("frostwatch.alerts")

RESOLVING_LEVELS = levels.RESOLVING_LEVELS


class Outbox(Delivering, Escalating):
    """The alert outbox (see the module docstring); delivering and escalating come from
    frostwatch.alerts.delivery and frostwatch.alerts.escalation."""

    def __init__(self, store: Store, cfg, *, alerts_cfg: AlertsConfig | None = None, owner: str | None = None,
                 rng: random.Random | None = None):
        self.store = store
        self.cfg = cfg
        self.ac = alerts_cfg if alerts_cfg is not None else load_alerts_config(cfg)
        self.owner = owner or f"{os.getpid()}-{secrets.token_hex(4)}"
        self.base_dir = Path(cfg.path).parent if getattr(cfg, "path", None) else None
        self.rng = rng or random.Random()
        self._pools: dict[str, cf.ThreadPoolExecutor] = {}
        self._busy: dict[str, cf.Future] = {}
        self._lock = threading.Lock()
        self._remote_fail_streak = 0
        self._degraded = False
        # set when a new alert is queued: the daemon's delivery loop wakes at once instead of at
        # its next round (alert latency), then clears it
        self.due_event = threading.Event()

    # -- persisting --------------------------------------------------------------------------
    def submit(self, alerts: list[Alert], now_utc: dt.datetime, exclude: tuple[str, ...] = ()) -> int:
        """Persist alerts (idempotent by key) with their first deliveries; returns how many were new.

        `exclude` names channels not to use (a notice about a broken channel skips that channel).
        """
        n = 0
        for a in alerts:
            try:
                if self._submit_one(a, now_utc, exclude):
                    n += 1
                    self.due_event.set()
                    log.warning("[%s rank %d] %s", a.level, a.rank, a.message.splitlines()[0])
            except Exception:  # noqa: BLE001 - one bad alert must not lose the others
                log.exception("could not queue alert %s; storing it bare", a.key)
                try:
                    self.store.add_alert(a)
                except Exception:  # noqa: BLE001 - the store itself fails (disk full, I/O error)
                    log.exception("cannot store alert %s; delivering it from memory on the local channels", a.key)
                    self.deliver_from_memory(a, now_utc)
        return n

    def _submit_one(self, a: Alert, now_utc: dt.datetime, exclude: tuple[str, ...] = ()) -> bool:
        night = night_of_key(a.key)
        roster = self.ac.roster_for(a.block, night)
        wants_answer = a.rank >= self.ac.repeat_from_rank and level_name(a.level) not in RESOLVING_LEVELS
        step = 0
        people: list[Contact]
        earlier = ob.firing_keys(self.store, a.block) if a.block else []
        earlier = [k for k in earlier if night_of_key(k) == night] if night else earlier
        if level_name(a.level) in RESOLVING_LEVELS or a.resolves:
            told = {d["recipient"] for d in ob.deliveries_for(self.store, self._block_keys(a.block, night))}
            people = [c for c in self.ac.contacts if c.name in told] or roster[:1]
        elif level_name(a.level) in (levels.FIX, levels.CHECK):
            people = self.ac.with_role("maintainer") or roster[:1]
        elif level_name(a.level) == levels.GO_LOOK:
            people = _unique(roster[:1] + self.ac.with_role("maintainer"))
        else:
            for k in earlier:  # a new level continues the escalation the block has reached
                st = ob.state_of(self.store, k)
                if st:
                    step = max(step, st["step"])
            people = roster[: step + 1]
        kind = "resolved" if a.resolves else ("update" if a.kind == "update" else "alert")
        rows = self._rows(a.level, people, seq=0, kind=kind, now_utc=now_utc)
        rows = [r for r in rows if r["channel"] not in exclude]
        if kind == "update":  # an update counts against the block's hourly budget, and waits beyond it
            release_ms = self._budget_frees_ms(a.block, now_utc)
            for r in rows:
                r["next_try_ms"] = max(r["next_try_ms"], release_ms)
            ob.cancel_waiting_updates(self.store, self._block_keys(a.block, night), to_ms(now_utc))
        repeat_ms = to_ms(now_utc) + int(self.ac.repeat_interval_min * 60000)
        if wants_answer and len(roster) > step + 1:
            repeat_ms = min(repeat_ms, to_ms(now_utc) + int(self.ac.escalate_after_min * 60000))
        new = ob.add_alert_with_deliveries(self.store, a, rows, wants_answer, repeat_ms)
        if new:
            with self.store.transaction() as c:
                ob.set_step(c, a.key, step)
                if level_name(a.level) in RESOLVING_LEVELS or a.resolves:
                    ob.set_state(c, earlier, "resolved", ("firing", "acked"))
                elif a.rank >= 3:
                    ob.set_state(c, [k for k in earlier if k != a.key], "superseded")
        return new

    def _budget_frees_ms(self, block: str, now_utc: dt.datetime) -> int:
        """Now, while the block has sent fewer than `budget_per_hour` notifications in the last
        hour; else when the oldest of them leaves the hour."""
        now_ms = to_ms(now_utc)
        since = now_ms - 3600_000
        if ob.count_notices(self.store, block, since) < self.ac.budget_per_hour:
            return now_ms
        oldest = ob.oldest_notice_ms(self.store, block, since)
        return now_ms if oldest is None else oldest + 3600_000 + 1000

    def _block_keys(self, block: str, night: dt.date | None) -> list[str]:
        return [k for k in ob.alert_keys_of_block(self.store, block) if night is None or night_of_key(k) == night]

    def _rows(self, level: str, people: list[Contact], seq: int, kind: str, now_utc: dt.datetime,
              only_local: bool = False, every_channel: bool = False) -> list[dict]:
        rows = []
        channels = self.ac.channels_for(level) if not only_local else [c for c in self.ac.channels if c.local]
        if every_channel:
            channels = list(self.ac.channels)
        for ch in channels:
            if ch.address == "none":
                rows.append({"channel": ch.name, "recipient": BROADCAST, "seq": seq, "kind": kind, "local": ch.local,
                             "next_try_ms": to_ms(now_utc)})
                continue
            for p in people:
                if p.address(ch.address):
                    rows.append({"channel": ch.name, "recipient": p.name, "seq": seq, "kind": kind, "local": ch.local,
                                 "next_try_ms": to_ms(now_utc)})
        return rows

    def submit_health(self, subject: str, detail: str, now_utc: dt.datetime, urgent: bool = False,
                      block: str = "farm", level: str | None = None, once_per: str = "night",
                      exclude: tuple[str, ...] = ()) -> str:
        """A health alert (sensor silent, broker down, no healthy sensor, ...). Returns its key.

        The same subject raises once per local night (`once_per="night"`) or hour ("hour");
        urgent ones ("go-look") repeat and escalate like "protect" until acknowledged.
        """
        try:
            self.store.add_event(now_utc, "health", subject, detail)
        except Exception:  # noqa: BLE001 - the store cannot write: the alert still goes out (from memory)
            log.exception("could not record the health event %s", subject)
        level = level_name(level) if level else (levels.GO_LOOK if urgent else levels.FIX)
        tz = getattr(getattr(self.cfg, "site", None), "tz", None) or dt.UTC
        local = (now_utc - dt.timedelta(hours=12)).astimezone(tz)
        stamp = local.date().isoformat() + (now_utc.strftime("T%H") if once_per == "hour" else "")
        slug = re.sub(r"[^A-Za-z0-9_.-]+", "-", subject).strip("-")[:60] or "health"
        key = f"{block}/{stamp}/health-{slug}"
        if detail.startswith("recovered"):  # the daemon's rest for a health condition: one resolved message
            n = ob.count_alerts_with_prefix(self.store, key)
            if n == 0 or n % 2 == 0:
                return key  # nothing raised, or already resolved
            a = Alert(time_utc=now_utc, block=block, level=levels.REST, rank=0, advice="nothing to do",
                      message=f"{subject}: {detail}", key=f"{key}~{n}", resolves=key if n == 1 else f"{key}~{n - 1}")
            self.submit([a], now_utc, exclude)
            return a.key
        n = ob.count_alerts_with_prefix(self.store, key)
        if n % 2 == 0 and n > 0:
            key = f"{key}~{n}"  # raised again after a recovery the same night
        a = Alert(time_utc=now_utc, block=block, level=level, rank=rank_of(level), advice="check the equipment",
                  message=f"{subject}: {detail}", key=key)
        self.submit([a], now_utc, exclude)
        return key

    # -- acknowledgement ---------------------------------------------------------------------
    def acknowledge(self, key: str, who: str, via: str, now_utc: dt.datetime, once: str | None = None) -> bool:
        """Record who answered and stop the alert's repeats (and those of the block's earlier ones).

        `once` is a one-use mark (spent in the same transaction): a second acknowledgement with
        the same mark raises sqlite3.IntegrityError (a replay)."""
        with self.store.transaction() as c:
            if once is not None and ob.alert_exists(c, key):
                stored_acks.spend_mark(c, once, key, who, via, to_ms(now_utc))
            if not ob.record_ack(c, key, who, via, now_utc):
                log.warning("acknowledgement for unknown alert %s (by %s via %s) ignored", key, who, via)
                return False
            night = night_of_key(key)
            others = ob.firing_keys_up_to_rank(c, key)
            ob.set_state(c, [k for k in others if night_of_key(k) == night], "acked")
        log.warning("acknowledged %s by %s via %s", key, who, via)
        return True

    def ack_url(self, alert_key: str, recipient: str, now_utc: dt.datetime) -> str:
        tmpl = self.ac.status_url  # "http://pi:8321" (a token is appended as /ack/TOKEN) or with {token}
        if not tmpl:
            return ""
        token = acks.ack_link_token(self.store, alert_key, recipient, issued_utc=now_utc, cfg=self.cfg)
        return tmpl.replace("{token}", token) if "{token}" in tmpl else tmpl.rstrip("/") + "/ack/" + token


def replay_channel(cfg) -> str:
    """The console channel's name in a config (`replay` records its deliveries there)."""
    try:
        ac = load_alerts_config(cfg)
    except Exception:  # noqa: BLE001 - replay works with an alerts section the daemon would refuse
        return "console"
    return next((c.name for c in ac.channels if c.type == "console"), "console")


def record_replayed(store: Store, a: Alert, channel: str) -> str:
    """Store a replayed alert with its console delivery (sent: replay prints it) and that
    delivery's acknowledgement code; returns the short form as a phone would receive it."""
    ob.add_replayed_alert(store, a, channel)
    code = ackcodes.code_for_delivery(store, a.key, channel, BROADCAST, 0, a.time_utc)
    return short_message(a.short or notice_body(a.block, a.level, a.message or a.key), code)
