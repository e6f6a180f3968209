"""paho callbacks that cannot kill paho's network thread: an exception in one is logged and dropped.

Shared by the daemon's ingest client and the fleet view's listener (small: the fleet page imports it).
"""

from __future__ import annotations

import logging
from collections.abc import Callable


def guarded(fn: Callable, log: logging.Logger, what: str) -> Callable:
    """`fn` wrapped so that any exception is logged on `log` as "<what>: error in MQTT callback <name>
    (ignored, the client keeps running)" instead of ending paho's thread without a word."""

    def wrapped(*a, **k):
        try:
            fn(*a, **k)
        except Exception:  # noqa: BLE001 - an exception here would silently kill paho's thread
            log.exception("%s: error in MQTT callback %s (ignored, the client keeps running)", what, fn.__name__)

    wrapped.__name__ = fn.__name__
    return wrapped
