"""frostwatch.alerts."""
