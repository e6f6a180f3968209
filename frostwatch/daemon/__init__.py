"""`frostwatch run`: the unattended daemon. Wiring only: the scheduler, the MQTT client, the
outbox worker, signals and the systemd watchdog. Everything it decides is decided by the pure
modules it calls (pipeline, health); it owns the clock.

Threads: paho's network thread and the ingest writer (frostwatch.ingest.mqtt), APScheduler's
worker pool (evaluations, daily jobs, health, heartbeat), the outbox worker, and the main thread,
which supervises and pings the watchdog only while ingest, scheduler, outbox and store are healthy.

Scheduling (reliability.md 4): one IntervalTrigger tick at the night cadence (no cron at a local
hour, so both DST nights keep their cadence); by day the tick evaluates only every
`day_interval_min`. Daily jobs (the dusk briefing at sunset + 2 h, the morning job at sunrise +
1 h, housekeeping) are due at instants computed from the night and guarded by a per-night record
in the store, so each runs once per night whatever the clock does. misfire_grace_time None,
coalesce, max_instances 1; a failing job is recorded and never fatal.

The package:

    core.py       Core: evaluations, the daily jobs once per night, health checks (clock injected)
    scheduler.py  build_scheduler: the APScheduler with its interval triggers
    service.py    Daemon: threads, signals, watchdog, heartbeat, start and stop; run(cfg)
    journal.py    log format for journald, stack dumps on SIGUSR1, I/O counters

[daemon] settings are read by frostwatch.daemon_settings (outside this package, so that loading a
config does not import the daemon); the store's upkeep (WAL settings, retention, checkpoints) is
in frostwatch.store.maintenance.
"""

from frostwatch.daemon.core import DONE_META, PROMPT_REASON, Core, commit_urgently
from frostwatch.daemon.journal import dump_stacks, setup_logging
from frostwatch.daemon.scheduler import build_scheduler
from frostwatch.daemon.service import CLOCK_JUMP_S, Daemon, run
from frostwatch.daemon_settings import _DAEMON_KEYS, DaemonSettings, daemon_settings
from frostwatch.status.document import HEARTBEAT_META
from frostwatch.store.maintenance import (
    WAL_AUTOCHECKPOINT_BYTES,
    WAL_AUTOCHECKPOINT_PAGES,
    WAL_SIZE_LIMIT_BYTES,
    tune_store,
    wal_autocheckpoint_pages,
)

__all__ = [
    "CLOCK_JUMP_S", "DONE_META", "HEARTBEAT_META", "PROMPT_REASON", "WAL_AUTOCHECKPOINT_BYTES", "WAL_AUTOCHECKPOINT_PAGES",
    "WAL_SIZE_LIMIT_BYTES", "_DAEMON_KEYS", "Core", "Daemon", "DaemonSettings", "build_scheduler", "commit_urgently",
    "daemon_settings", "dump_stacks", "run", "setup_logging", "tune_store", "wal_autocheckpoint_pages",
]
