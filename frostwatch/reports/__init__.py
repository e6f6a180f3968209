"""frostwatch.reports."""
