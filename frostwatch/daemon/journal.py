"""The daemon's log lines for the journal (a syslog priority prefix under journald, URL query
strings redacted), every thread's stack on SIGUSR1, and the process's bytes written (SD-card wear).
"""

from __future__ import annotations

import logging
import os
import sys
import threading
import traceback

log = logging.getLogger("frostwatch.daemon")


def _io_counters() -> str:
    """This process's bytes written to storage (Linux /proc/self/io), for the wear budget."""
    try:
        with open("/proc/self/io", encoding="ascii") as f:
            io = dict(line.split(": ") for line in f.read().splitlines())
        return f"io write_bytes {int(io['write_bytes'])}"
    except (OSError, KeyError, ValueError):
        return "io counters unavailable"


def dump_stacks() -> None:
    """SIGUSR1: every thread's stack to the log."""
    names = {t.ident: t.name for t in threading.enumerate()}
    for ident, frame in sys._current_frames().items():
        log.warning("thread %s (%s):\n%s", names.get(ident, "?"), ident, "".join(traceback.format_stack(frame)))


class _JournalFormatter(logging.Formatter):
    """A `<N>` syslog priority prefix when stderr goes to journald (reliability.md 5.2)."""

    PRI = {logging.DEBUG: 7, logging.INFO: 6, logging.WARNING: 4, logging.ERROR: 3, logging.CRITICAL: 2}

    def __init__(self, journal: bool):
        super().__init__("%(levelname)s %(name)s: %(message)s" if journal else "%(asctime)s %(levelname)s %(name)s: %(message)s")
        self.journal = journal

    def format(self, record: logging.LogRecord) -> str:
        s = super().format(record)
        return f"<{self.PRI.get(record.levelno, 6)}>{s}" if self.journal else s


def setup_logging() -> None:
    from frostwatch import redact

    h = logging.StreamHandler(sys.stderr)
    h.setFormatter(_JournalFormatter(bool(os.environ.get("JOURNAL_STREAM"))))
    redact.install(h)  # no URL query string (a webhook's api_key) reaches the journal, library lines included
    root = logging.getLogger()
    root.handlers[:] = [h]
    root.setLevel(os.environ.get("FROSTWATCH_LOG_LEVEL", "INFO").upper())
    logging.getLogger("apscheduler").setLevel(logging.WARNING)
