"""Instants as the store keeps them: integer milliseconds since 1970-01-01 UTC."""

from __future__ import annotations

import datetime as dt


def to_ms(t: dt.datetime) -> int:
    """An aware datetime -> integer milliseconds since 1970-01-01 UTC."""
    return int(round(t.timestamp() * 1000))


def from_ms(ms: int) -> dt.datetime:
    """Integer milliseconds since the epoch -> an aware UTC datetime."""
    return dt.datetime.fromtimestamp(ms / 1000.0, tz=dt.UTC)
