"""frostwatch.ingest."""
