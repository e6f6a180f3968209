"""Delivering the outbox: each channel's own worker thread, one attempt at a time under the
channel's deadline, retries with capped full-jitter backoff, and sending from memory when the
store cannot take an alert.

`Delivering` is a part of `frostwatch.alerts.outbox.Outbox`; it uses the outbox's `store`, `ac`
(the alerts config), `owner`, `base_dir`, `rng`, its worker pools and locks, and its `submit_health`,
`ack_url` and the escalation part's `_plan_repeats`, `_check_degraded` and `_note_remote`.
"""

from __future__ import annotations

import concurrent.futures as cf
import datetime as dt
import logging
import re
import threading
import time

from frostwatch.advice.short import notice_body, short_message
from frostwatch.alerts import ackcodes
from frostwatch.alerts.channels import OutMessage, Permanent, Transient, sender
from frostwatch.alerts.config import Channel
from frostwatch.models import Alert
from frostwatch.redact import redact
from frostwatch.store import outbox as ob
from frostwatch.store import to_ms

log = logging.getLogger("frostwatch.alerts")

DEADLINE_GRACE_S = 2.0  # a send's own deadline (timeout_s) comes first; the worker's wait ends this much later
BROADCAST = "*"
REPEAT_PREFIX = "NOT ACKED: "  # a repeat's text message: the alert nobody has acknowledged, as things are now
ESCALATED_PREFIX = "ESCALATED: "  # both fit frostwatch.advice.short.PREFIX_ROOM


def night_of_key(key: str) -> dt.date | None:
    """The night date inside an alert key (block/YYYY-MM-DD/...), if there is one."""
    m = re.search(r"/(\d{4}-\d{2}-\d{2})(/|$)", key)
    if not m:
        return None
    try:
        return dt.date.fromisoformat(m.group(1))
    except ValueError:
        return None


class Delivering:
    # -- when the store cannot take an alert -----------------------------------------------------
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
        prefix = {"repeat": REPEAT_PREFIX, "escalation": ESCALATED_PREFIX}.get(r["kind"], "")
        base = r.get("short_body") or r.get("short") or notice_body(r["block"], r["level"], r["message"] or r["alert_key"])
        return OutMessage(idem_key=r["idem_key"] or f"{r['alert_key']}:{r['seq']}", alert_key=r["alert_key"],
                          seq=r["seq"], level=r["level"], rank=r["rank"], block=r["block"], title=title, body=body,
                          kind=r["kind"], ack_url=url, short=short_message(base, code or None, prefix), code=code)

