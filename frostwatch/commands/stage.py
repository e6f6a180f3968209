"""`frostwatch stage`: record a block's bud stage as the buds develop (the advice issue fills this in)."""

from __future__ import annotations


def register(sub, common) -> None:
    """No commands yet."""
