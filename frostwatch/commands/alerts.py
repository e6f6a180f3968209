"""`frostwatch ack` and `frostwatch alerts` (the alerts issue fills these in)."""

from __future__ import annotations


def register(sub, common) -> None:
    """No commands yet."""
