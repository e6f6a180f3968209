"""The alert outbox: every alert is written to SQLite before anything sends it.

Interface used by the daemon and `replay` (the alerts issue fills in delivery, escalation and
channels behind it):

    outbox = Outbox(store, cfg)
    outbox.submit(alerts, now_utc)        # persist alerts (idempotent by key) and queue deliveries
    outbox.submit_health(event, now_utc)  # a health event (sensor silent, broker down, ...) for a maintainer
    outbox.deliver_due(now_utc) -> int    # try every delivery that is due; never raises; returns attempts
    outbox.acknowledge(key, who, via, now_utc) -> bool

This first version only stores alerts and writes them to the log (console channel).
"""

from __future__ import annotations

import datetime as dt
import logging

from frostwatch.config import Config
from frostwatch.models import Alert
from frostwatch.store import Store

log = logging.getLogger("frostwatch.alerts")


class Outbox:
    def __init__(self, store: Store, cfg: Config):
        self.store = store
        self.cfg = cfg

    def submit(self, alerts: list[Alert], now_utc: dt.datetime) -> int:
        n = 0
        for a in alerts:
            if self.store.add_alert(a):
                n += 1
                log.warning("[%s rank %d] %s", a.level, a.rank, a.message.splitlines()[0])
        return n

    def submit_health(self, subject: str, detail: str, now_utc: dt.datetime, urgent: bool = False) -> None:
        self.store.add_event(now_utc, "health", subject, detail)
        log.warning("health: %s: %s%s", subject, detail, " (urgent)" if urgent else "")

    def deliver_due(self, now_utc: dt.datetime) -> int:
        return 0

    def acknowledge(self, key: str, who: str, via: str, now_utc: dt.datetime) -> bool:
        return False
