"""The [daemon] section: its keys, defaults and validation, without importing the daemon
(`load_config` checks every section for every command, and `frostwatch --help`, `calc` or
`status` should not pay for the scheduler, MQTT client and pipeline).
"""

from __future__ import annotations

import os
from dataclasses import dataclass
from pathlib import Path
from typing import TYPE_CHECKING

from frostwatch.errors import ConfigError

if TYPE_CHECKING:  # frostwatch.config imports this module to validate its section
    from frostwatch.config import Config


@dataclass(frozen=True)
class DaemonSettings:
    """The [daemon] section (all optional)."""

    night_interval_min: float = 2.0
    day_interval_min: float = 15.0
    debounce_s: float = 30.0
    report_dir: Path | None = None
    batch_rows: int = 200
    # a reading waits at most this long for its commit and PUBACK: each commit costs about 8.5 KiB
    # of writes (synchronous=FULL, WAL), so this is the SD-card wear knob (bench/ingest.py)
    batch_delay_s: float = 20.0  # SD-card wear; readings near a trigger are committed within urgent_delay_s
    urgent_delay_s: float = 1.0  # ... but a reading near a block's trigger in the watch window waits at most this
    # the heartbeat lives in memory and on the status topic; the store gets it this often
    # (`frostwatch status` judges staleness against it)
    heartbeat_store_s: float = 300.0
    queue_max: int = 5000
    session_expiry_s: int = 7 * 24 * 3600
    status_topic: str = ""
    heartbeat_s: float = 15.0
    silent_after_intervals: float = 3.0
    battery_low_v: float = 3.3
    risk_band_c: float = 3.0
    learn_nights: int = 60
    outbox_interval_s: float = 5.0
    health_interval_s: float = 60.0
    max_future_s: float = 600.0
    broker_down_alert_s: float = 60.0
    store_stall_s: float = 30.0


_DAEMON_KEYS: dict[str, tuple[type | tuple, str]] = {
    "night_interval_min": ((int, float), "minutes between evaluations from an hour before sunset to two after sunrise"),
    "day_interval_min": ((int, float), "minutes between evaluations by day"),
    "debounce_s": ((int, float), "seconds; at most one reading-triggered evaluation this often"),
    "report_dir": ((str,), "a folder for the morning reports (relative to the config file)"),
    "batch_rows": ((int,), "readings per commit at most"),
    "batch_delay_s": ((int, float), "seconds a reading may wait for its commit (and its acknowledgement)"),
    "urgent_delay_s": ((int, float), "seconds a reading near a block's trigger (watch window) may wait for its commit"),
    "queue_max": ((int,), "messages buffered unacknowledged at most"),
    "session_expiry_s": ((int,), "seconds the broker keeps the session while the daemon is away"),
    "status_topic": ((str,), "the retained status topic root"),
    "heartbeat_s": ((int, float), "seconds between heartbeats"),
    "heartbeat_store_s": ((int, float), "seconds between heartbeats written to the store (each write wears the SD card)"),
    "silent_after_intervals": ((int, float), "a sensor silent this many intervals is reported"),
    "battery_low_v": ((int, float), "volts; a battery below this is reported"),
    "risk_band_c": ((int, float), "degC above the trigger that still counts as a risky night"),
    "learn_nights": ((int,), "past nights learned at start-up"),
    "outbox_interval_s": ((int, float), "seconds between outbox delivery rounds"),
    "health_interval_s": ((int, float), "seconds between sensor-health checks"),
    "max_future_s": ((int, float), "seconds a reading's time may be ahead of its receipt"),
    "broker_down_alert_s": ((int, float), "seconds without the broker before a health event"),
    "store_stall_s": ((int, float), "seconds the store may fail to take readings before the daemon reports it"),
}


def daemon_settings(cfg: Config) -> DaemonSettings:
    """Validate [daemon]; raise ConfigError with `daemon.key: ...` lines."""
    raw = cfg.raw.get("daemon", {}) or {}
    problems: list[str] = []
    vals: dict = {}
    for k, v in raw.items():
        if k not in _DAEMON_KEYS:
            import difflib

            close = difflib.get_close_matches(k, list(_DAEMON_KEYS), n=1)
            hint = f" (did you mean {close[0]!r}?)" if close else ""
            problems.append(f"daemon.{k}: unknown key{hint}; known keys are {', '.join(_DAEMON_KEYS)}")
            continue
        types, what = _DAEMON_KEYS[k]
        if isinstance(v, bool) or not isinstance(v, types):
            problems.append(f"daemon.{k}: {v!r} is not valid; expected {what}")
            continue
        if isinstance(v, (int, float)) and not v > 0:
            problems.append(f"daemon.{k}: {v!r} must be positive; expected {what}")
            continue
        vals[k] = v
    if "night_interval_min" not in vals:
        vals["night_interval_min"] = float(cfg.forecast.evaluation_interval_min)
    if "silent_after_intervals" not in vals:
        vals["silent_after_intervals"] = float(cfg.forecast.stale_after_intervals)
    if vals.get("day_interval_min", 15.0) < vals["night_interval_min"]:
        problems.append("daemon.day_interval_min: shorter than the night interval; expected at least night_interval_min")
    base = cfg.path.parent if cfg.path else Path.cwd()
    rd = Path(os.path.expanduser(vals.pop("report_dir"))) if "report_dir" in vals else cfg.storage.path.parent / "reports"
    vals["report_dir"] = rd if rd.is_absolute() else (base / rd).resolve()
    vals.setdefault("status_topic", f"{cfg.broker.prefix.strip('/')}/status")
    seg = vals["status_topic"].strip("/").split("/")
    pre = cfg.broker.prefix.strip("/").split("/")
    if seg[: len(pre)] == pre and len(seg) > len(pre) and cfg.station(seg[len(pre)]) is not None:
        problems.append(f"daemon.status_topic: {vals['status_topic']!r} clashes with station {seg[len(pre)]!r}; choose another")
    if problems:
        raise ConfigError(str(cfg.path or "<config>"), problems)
    return DaemonSettings(**vals)
