"""The console/log channel: the alert goes to the log (journald under systemd). Always local."""

from __future__ import annotations

import logging

log = logging.getLogger("frostwatch.alerts.console")


def send(channel, msg, to, base_dir=None) -> str:
    log.warning("ALERT [%s rank %d] %s (key %s%s)%s", msg.level, msg.rank, msg.title, msg.idem_key,
                f", ack code {msg.code}" if msg.code else "", f" for {to}" if to and to != "*" else "")
    return "logged"
