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
import time
from pathlib import Path

from frostwatch.advice.short import notice_body, short_message
from frostwatch.alerts import ackcodes, acks, levels
from frostwatch.alerts.channels import OutMessage, Permanent, Transient, sender
from frostwatch.alerts.config import AlertsConfig, Channel, Contact, load_alerts_config
from frostwatch.alerts.levels import ALL_LEVELS, level_name, rank_of
from frostwatch.models import Alert
from frostwatch.redact import redact
from frostwatch.store import Store, from_ms, to_ms
from frostwatch.store import acks as stored_acks
from frostwatch.store import outbox as ob

log = logging.getLogger("frostwatch.alerts")

RESOLVING_LEVELS = levels.RESOLVING_LEVELS
DEADLINE_GRACE_S = 2.0  # a send's own deadline (timeout_s) comes first; the worker's wait ends this much later
BROADCAST = "*"


def night_of_key(key: str) -> dt.date | None:
    """The night date inside an alert key (block/YYYY-MM-DD/...), if there is one."""
    m = re.search(r"/(\d{4}-\d{2}-\d{2})(/|$)", key)
    if not m:
        return None
    try:
        return dt.date.fromisoformat(m.group(1))
    except ValueError:
        return None


class Outbox:
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

    def deliver_from_memory(self, a: Alert, now_utc: dt.datetime) -> int:
        """Send an alert the store could not take on every local channel, now, without the store
        (reliability.md 3.4: alerts must not depend on a successful DB write). Returns how many
        sends succeeded; never raises."""
        ok = 0
        people = self.ac.roster_for(a.block, night_of_key(a.key))[:1] or list(self.ac.contacts[:1])
        lines = (a.message or a.key).splitlines() or [a.key]
        short = short_message(a.short or notice_body(a.block, a.level, a.message or a.key), None, "STORAGE FAILING: ")
        msg = OutMessage(idem_key=f"{a.key}:0", alert_key=a.key, seq=0, level=a.level, rank=a.rank, block=a.block,
                         title="STORAGE FAILING - " + lines[0], body="\n".join(lines), kind="alert", ack_url="",
                         short=short)
        for ch in self.ac.channels:
            if not ch.local:
                continue
            targets = [BROADCAST] if ch.address == "none" else [p.address(ch.address) for p in people if p.address(ch.address)]
            for to in targets:
                try:
                    sender(ch.type)(ch, msg, to, self.base_dir)
                    ok += 1
                except Exception:  # noqa: BLE001
                    log.exception("local delivery of %s on %s failed", a.key, ch.name)
        return ok

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

    # -- delivering --------------------------------------------------------------------------
    def deliver_due(self, now_utc: dt.datetime, wait: bool = False) -> int:
        """Plan repeats, then start every due attempt on its channel's worker. Never raises.

        Returns the number of attempts started. `wait=True` waits for them (tests, commands).
        """
        try:
            self._plan_repeats(now_utc)
            self._check_degraded(now_utc)
            now_ms = to_ms(now_utc)
            started = 0
            for name in ob.channels_with_due(self.store, now_ms, self.owner):
                with self._lock:
                    fut = self._busy.get(name)
                    if fut is not None and not fut.done():
                        continue  # this channel is still busy (maybe hung); the others go on
                    ch = self.ac.channel(name)
                    rows = ob.claim_due(self.store, name, now_ms,
                                        lease_ms=int(((ch.timeout_s if ch else 10) * 2 + 30) * 1000 * 20),
                                        owner=self.owner, limit=20)
                    if not rows:
                        continue
                    started += len(rows)
                    if ch is None:
                        for r in rows:
                            ob.finish_delivery(self.store, r["id"], "failed", now_ms,
                                               f"channel {name!r} is no longer configured")
                        continue
                    pool = self._pools.get(name)
                    if pool is None:
                        pool = self._pools[name] = cf.ThreadPoolExecutor(1, thread_name_prefix=f"alert-{name}")
                    self._busy[name] = pool.submit(self._send_rows, ch, rows, now_utc, time.monotonic())
            if wait:
                self.wait_idle()
            return started
        except Exception:  # noqa: BLE001 - the daemon's loop must keep going
            log.exception("alert delivery pass failed; it will run again")
            return 0

    def wait_idle(self, timeout_s: float | None = None) -> bool:
        futs = [f for f in list(self._busy.values()) if f is not None]
        done, not_done = cf.wait(futs, timeout=timeout_s)
        return not not_done

    def close(self, wait: bool = False) -> None:
        for p in self._pools.values():
            p.shutdown(wait=wait, cancel_futures=not wait)

    def _send_rows(self, ch: Channel, rows: list[dict], now0: dt.datetime, t0: float) -> None:
        send = sender(ch.type)
        for r in rows:
            now = now0 + dt.timedelta(seconds=time.monotonic() - t0)
            try:
                self._send_one(send, ch, r, now)
            except Exception:  # noqa: BLE001 - never let one row kill the worker
                log.exception("delivery %s on %s failed unexpectedly", r.get("idem_key"), ch.name)
                self._finish(r, "retry", now, "internal error", self._backoff_ms(r, now))

    def _send_one(self, send, ch: Channel, r: dict, now: dt.datetime) -> None:
        to = BROADCAST
        if r["recipient"] != BROADCAST:
            person = self.ac.contact(r["recipient"])
            to = person.address(ch.address) if person else None
            if not to:
                self._finish(r, "failed", now, f"no {ch.address} for {r['recipient']!r} in [[contacts]]", None)
                return
        msg = self._message(r, now)
        try:
            receipt = self._send_within_deadline(send, ch, msg, to)
        except Permanent as exc:
            log.error("delivery %s on %s refused: %s", msg.idem_key, ch.name, exc)
            self._finish(r, "failed", now, str(exc), None)
            self._note_remote(ch, ok=False, now=now)
            if r["kind"] != "notice":
                self.submit_health(f"channel {ch.name} misconfigured", str(exc), now, once_per="night",
                                   exclude=(ch.name,))
            return
        except Transient as exc:
            age_h = (to_ms(now) - r["alert_time_utc_ms"]) / 3.6e6
            status = "gave_up" if age_h > self.ac.give_up_after_h else "retry"
            log.warning("delivery %s on %s failed (attempt %d, %s): %s", msg.idem_key, ch.name, r["attempt"],
                        "giving up" if status == "gave_up" else "will retry", exc)
            self._finish(r, status, now, str(exc), self._backoff_ms(r, now) if status == "retry" else None)
            self._note_remote(ch, ok=False, now=now)
            return
        self._finish(r, "sent", now, receipt, None)
        self._note_remote(ch, ok=True, now=now)

    def _send_within_deadline(self, send, ch: Channel, msg: OutMessage, to: str) -> str:
        """`send` on a thread of its own that the channel's worker waits for at most the
        channel's `timeout_s` (plus a little): a delivery that outlives it is abandoned and
        counts as a failure to retry, so a server that drips its answer frees the channel (the
        channels also cut their own sockets at that deadline, which ends the abandoned thread)."""
        box: dict = {}

        def run() -> None:
            try:
                box["receipt"] = send(ch, msg, to, self.base_dir)
            except BaseException as exc:  # noqa: BLE001 - handed to the worker below
                box["error"] = exc

        th = threading.Thread(target=run, name=f"send-{ch.name}", daemon=True)
        th.start()
        th.join(ch.timeout_s + DEADLINE_GRACE_S)
        if th.is_alive():
            raise Transient(f"{ch.name}: no complete answer within {ch.timeout_s:g} s; the attempt was abandoned")
        if "error" in box:
            raise box["error"]
        return box.get("receipt", "")

    def _finish(self, r: dict, status: str, now: dt.datetime, detail: str, next_try_ms: int | None) -> None:
        ob.finish_delivery(self.store, r["id"], status, to_ms(now), redact(detail), next_try_ms)

    def _backoff_ms(self, r: dict, now: dt.datetime) -> int:
        n = max(1, int(r.get("attempt") or 1))
        cap = min(self.ac.retry_cap_s, self.ac.retry_base_s * 2 ** (n - 1))
        delay = max(self.ac.retry_base_s, self.rng.uniform(0, cap))  # full jitter, floored at the base
        return to_ms(now) + int(delay * 1000)

    def _message(self, r: dict, now: dt.datetime) -> OutMessage:
        lines = (r.get("body") or r["message"] or "").splitlines() or [r["alert_key"]]
        title, body = lines[0], "\n".join(lines)
        url = ""
        if r["kind"] not in ("notice",) and r["rank"] >= 2 and r["recipient"] != BROADCAST:
            try:
                url = self.ack_url(r["alert_key"], r["recipient"], now)
            except Exception:  # noqa: BLE001
                log.exception("cannot make an acknowledgement link")
        code = ""
        try:  # this delivery's own code (the same on every retry); a failure never holds the alert back
            code = ackcodes.code_for_delivery(self.store, r["alert_key"], r["channel"], r["recipient"], r["seq"], now)
        except Exception:  # noqa: BLE001
            log.exception("cannot make an acknowledgement code for %s", r["alert_key"])
        prefix = {"repeat": f"AGAIN {r['seq']}: ", "escalation": "ESCALATED: "}.get(r["kind"], "")
        base = r.get("short") or notice_body(r["block"], r["level"], r["message"] or r["alert_key"])
        return OutMessage(idem_key=r["idem_key"] or f"{r['alert_key']}:{r['seq']}", alert_key=r["alert_key"],
                          seq=r["seq"], level=r["level"], rank=r["rank"], block=r["block"], title=title, body=body,
                          kind=r["kind"], ack_url=url, short=short_message(base, code or None, prefix), code=code)

    # -- repeats and escalation ----------------------------------------------------------------
    def _plan_repeats(self, now_utc: dt.datetime) -> None:
        now_ms = to_ms(now_utc)
        repeat_ms = int(self.ac.repeat_interval_min * 60000)
        esc_ms = int(self.ac.escalate_after_min * 60000)
        for s in ob.due_repeats(self.store, now_ms):
            key, block = s["alert_key"], s["block"]
            roster = self.ac.roster_for(block, night_of_key(key))
            if level_name(s["level"]) == levels.GO_LOOK:
                roster = _unique(roster + self.ac.with_role("maintainer"))
            elapsed = now_ms - s["started_utc_ms"]
            step = min(max(len(roster) - 1, 0), max(s["step"], elapsed // esc_ms if esc_ms > 0 else 0))
            escalating = step > s["step"]
            nxt = now_ms + repeat_ms
            if len(roster) > step + 1:
                nxt = min(nxt, s["started_utc_ms"] + (step + 1) * esc_ms)
            nxt = max(nxt, now_ms + 1000)
            if not escalating and ob.count_notices(self.store, block, now_ms - 3600_000) >= self.ac.budget_per_hour:
                ob.postpone_repeat(self.store, key, nxt)
                log.info("repeat of %s held back: %d notifications this hour for %s", key, self.ac.budget_per_hour, block)
                continue
            seq = s["notices"]
            minutes = elapsed / 60000
            if escalating:
                head = (f"ESCALATED (no acknowledgement after {minutes:.0f} min, now also to "
                        f"{', '.join(p.name for p in roster[s['step'] + 1: step + 1])}): ")
            else:
                head = f"REPEAT {seq} (not acknowledged for {minutes:.0f} min): "
            body = head + (s["message"] or key)
            rows = self._rows(s["level"], roster[: step + 1], seq=seq, kind="escalation" if escalating else "repeat",
                              now_utc=now_utc)
            for row in rows:
                row["body"] = body
            ob.add_repeat(self.store, key, rows, now_ms, step, nxt)

    # -- remote failure -> local channels ------------------------------------------------------
    def _note_remote(self, ch: Channel, ok: bool, now: dt.datetime) -> None:
        if ch.local:
            return
        with self._lock:
            if ok:
                self._remote_fail_streak = 0
                if self._degraded:
                    self._degraded = False
                    log.warning("remote alerting is back (%s delivered)", ch.name)
            else:
                self._remote_fail_streak += 1

    def _check_degraded(self, now_utc: dt.datetime) -> None:
        if not any(not c.local for c in self.ac.channels):
            return
        with self._lock:
            failing = self._remote_fail_streak >= self.ac.degraded_after_failures
            first = failing and not self._degraded
            if failing:
                self._degraded = True
        if not failing:
            return
        now_ms = to_ms(now_utc)
        pending = ob.unsent_urgent_remote(self.store)
        local_rows = 0
        for key, seq, level, block, names in pending:
            people = [c for c in self.ac.contacts if c.name in (names or "").split(",")]
            people = people or self.ac.roster_for(block, night_of_key(key))[:1]
            rows = self._rows(level, people, seq=seq, kind="fallback", now_utc=now_utc, only_local=True)
            with self.store.transaction() as c:
                local_rows += ob.insert_deliveries(c, key, rows, now_ms)
        if first:
            remote = [c for c in self.ac.channels if not c.local]
            people = self.ac.with_role("maintainer") or self.ac.roster_for("farm", None)[:1]
            tz = getattr(getattr(self.cfg, "site", None), "tz", None) or dt.UTC
            key = f"farm/{(now_utc - dt.timedelta(hours=12)).astimezone(tz).date()}/remote-degraded-{now_utc:%H%M%S}"
            a = Alert(time_utc=now_utc, block="farm", level=levels.CHECK, rank=ALL_LEVELS[levels.CHECK],
                      advice="check the internet link, the mail server and the gateway",
                      message=(f"remote alerting degraded since {from_ms(now_ms).isoformat(timespec='minutes')}: "
                               f"{self._remote_fail_streak} remote deliveries failed in a row "
                               f"({', '.join(c.name for c in remote)}); local channels carried the alerts meanwhile"),
                      key=key)
            rows = []
            for ch in remote:
                targets = [BROADCAST] if ch.address == "none" else [p.name for p in people if p.address(ch.address)]
                rows += [{"channel": ch.name, "recipient": t, "seq": 0, "kind": "notice", "local": False,
                          "next_try_ms": now_ms} for t in targets]
            rows += self._rows(levels.CHECK, people, seq=0, kind="notice", now_utc=now_utc, only_local=True)
            ob.add_alert_with_deliveries(self.store, a, rows, False, None)
            log.error("remote alerting degraded: local channels fire; a notice waits for the remote channels")


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


def _unique(people: list[Contact]) -> list[Contact]:
    seen, out = set(), []
    for p in people:
        if p.name not in seen:
            seen.add(p.name)
            out.append(p)
    return out
