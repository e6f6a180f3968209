"""The SQLite store (the only code that speaks SQL).

    db.py           Store: opening, migrations, transactions, projections, alerts, events, meta
    readings.py     the readings and rejections tables (a part of Store)
    schema.py       the tables and their migrations
    failures.py     what went wrong, in one sentence (disk full, damaged file, newer schema)
    times.py        instants as stored: milliseconds since 1970 UTC
    bulk.py         a season of readings at once (replay)
    outbox.py       alerts, deliveries, escalation state, acknowledgements
    acks.py         the acknowledgement secret, one-use marks and codes
    decisions.py    each block's decisions
    daemon_state.py what the daemon writes once per evaluation
    reports.py      what the night report reads
    latest.py       the newest reading of every station
    maintenance.py  the daemon's WAL settings, retention, checkpoints
"""

from frostwatch.store.db import Store, from_ms, to_ms

__all__ = ["Store", "from_ms", "to_ms"]
