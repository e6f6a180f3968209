"""The daemon's night report, drawn in a short-lived child process.

matplotlib and the report's own arrays cost the daemon about 70 MB that the allocator never gives
back (bench/memory.py: 80 -> 150 MB at the first morning report). A child process
(`frostwatch report --night DATE`, the same program and interpreter) draws the plots and writes
the files, then exits and takes that memory with it. The child only reads the store (WAL: the
daemon keeps writing meanwhile) and reads the same config file as the daemon.

    page = write_night_report_in_child(cfg, evening, out_dir)

Raises UsageError when there is nothing to report for that night (as write_night_report does)
and ReportError when the child fails or outlives `timeout_s`.
"""

from __future__ import annotations

import datetime as dt
import json
import os
import subprocess
import sys
from pathlib import Path

from frostwatch.config import Config
from frostwatch.errors import FrostwatchError, UsageError

TIMEOUT_S = 900.0  # a Pi draws a 12-block night in well under a minute; this only bounds a hang


class ReportError(FrostwatchError):
    """The child that draws the night report failed."""


def report_argv(cfg_path: Path, evening: dt.date, out_dir: Path) -> list[str]:
    """The child's command line: this interpreter running frostwatch's own `report` command."""
    return [sys.executable, "-m", "frostwatch", "report", "--config", str(cfg_path), "--night", evening.isoformat(),
            "--out", str(out_dir), "--json"]


def write_night_report_in_child(cfg: Config, evening: dt.date, out_dir: Path, timeout_s: float = TIMEOUT_S) -> Path:
    """Write the night report of `evening` into `out_dir` from a child process; return the page.

    A config without a file (built in memory, as in some tests) is drawn in this process."""
    if cfg.path is None:
        from frostwatch.reports.night import write_night_report
        from frostwatch.store import Store

        with Store.open(cfg.storage.path) as store:
            return write_night_report(cfg, store, evening, Path(out_dir))
    env = {k: v for k, v in os.environ.items() if k not in ("NOTIFY_SOCKET", "WATCHDOG_USEC", "WATCHDOG_PID")}
    try:
        p = subprocess.run(report_argv(cfg.path, evening, Path(out_dir)), capture_output=True, text=True,
                           timeout=timeout_s, env=env, stdin=subprocess.DEVNULL)
    except subprocess.TimeoutExpired:
        raise ReportError(f"night report for {evening}: the child drawing it did not finish in {timeout_s:.0f} s") from None
    except OSError as exc:
        raise ReportError(f"night report for {evening}: cannot start the child that draws it: {exc}") from None
    why = p.stderr.strip().removeprefix("frostwatch: ")[-1000:]
    if p.returncode == 2:
        raise UsageError(why)
    if p.returncode != 0:
        raise ReportError(f"night report for {evening}: the child drawing it exited {p.returncode}: {why or 'no message'}")
    try:
        return Path(json.loads(p.stdout)["report"])
    except (ValueError, KeyError, TypeError):
        raise ReportError(f"night report for {evening}: the child's answer was not understood: {p.stdout[:200]!r}") from None
