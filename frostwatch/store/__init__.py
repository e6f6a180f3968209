"""frostwatch.store."""
