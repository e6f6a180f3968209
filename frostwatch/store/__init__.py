"""The SQLite store (the only code that speaks SQL)."""

from frostwatch.store.db import Store, from_ms, to_ms

__all__ = ["Store", "from_ms", "to_ms"]
