"""Repeats and escalation of unacknowledged alerts, and the fall back to the local channels when
remote alerting keeps failing. A frost alert's repeat is worded from the block's latest stored
decision (`frostwatch.alerts.restate`), so it carries the figures of the moment it goes out.

`Escalating` is a part of `frostwatch.alerts.outbox.Outbox`; it uses the outbox's `store`, `ac`,
`cfg`, `_rows`, `submit` and its failure streak under `_lock`.
"""

from __future__ import annotations

import datetime as dt
import logging

from frostwatch.alerts import levels
from frostwatch.alerts.config import Channel, Contact
from frostwatch.alerts.delivery import BROADCAST, night_of_key
from frostwatch.alerts.levels import ALL_LEVELS, level_name
from frostwatch.alerts.restate import RESTATED_LEVELS, Restated, repeat_head, restated
from frostwatch.display import Display
from frostwatch.models import Alert
from frostwatch.store import decisions as stored_decisions
from frostwatch.store import from_ms, to_ms
from frostwatch.store import outbox as ob

log = logging.getLogger("frostwatch.alerts")


class Escalating:
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
            words = self._restated(s, now_utc)
            added = [p.name for p in roster[s["step"] + 1: step + 1]] if escalating else None
            head = repeat_head(seq, elapsed / 60000, from_ms(s["started_utc_ms"]),
                               words.as_of_utc if words else None, self._display(), added)
            body = head + (words.text if words else (s["message"] or key))
            rows = self._rows(s["level"], roster[: step + 1], seq=seq, kind="escalation" if escalating else "repeat",
                              now_utc=now_utc)
            for row in rows:
                row["body"] = body
                row["short_body"] = words.short if words else None
            ob.add_repeat(self.store, key, rows, now_ms, step, nxt)

    def _display(self) -> Display:
        site = getattr(self.cfg, "site", None)
        return Display(getattr(site, "display_unit", "degC"), getattr(site, "tz", None) or "UTC")

    def _restated(self, s: dict, now_utc: dt.datetime) -> Restated | None:
        """A frost alert's words from its block's latest stored decision (one truth: a repeat
        says what the daemon decides now); None keeps the words first sent. Never raises."""
        if level_name(s["level"]) not in RESTATED_LEVELS:
            return None
        try:
            latest = stored_decisions.latest(self.store, [s["block"]], until_utc=now_utc).get(s["block"])
            return restated(s["level"], s["block"], night_of_key(s["alert_key"]), latest, self._display())
        except Exception:  # noqa: BLE001 - a repeat goes out, in the words first sent, rather than not at all
            log.exception("cannot restate %s from the stored decision; repeating it as sent", s["alert_key"])
            return None

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
        for key, seq, level, block, names, body, short_body in pending:
            people = [c for c in self.ac.contacts if c.name in (names or "").split(",")]
            people = people or self.ac.roster_for(block, night_of_key(key))[:1]
            rows = self._rows(level, people, seq=seq, kind="fallback", now_utc=now_utc, only_local=True)
            for row in rows:
                row["body"], row["short_body"] = body, short_body
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


def _unique(people: list[Contact]) -> list[Contact]:
    seen, out = set(), []
    for p in people:
        if p.name not in seen:
            seen.add(p.name)
            out.append(p)
    return out
