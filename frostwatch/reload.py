"""A config change taking effect at the daemon's next evaluation, without a restart.

During bloom the stage moves every few days (`frostwatch stage` rewrites the block's `stage`
line), and with it T10 and T90: the daemon must use the new thresholds at its next evaluation,
not after a restart someone forgets. The daemon notes the config file's identity (inode, size,
modification time) and, at each evaluation or on SIGHUP, reloads the file when it changed.

What applies live: every key of the existing `[[blocks]]` (stage, critical temperatures,
margins, protection, rates, reference stations, ...). Anything else (stations, the broker,
alerts, channels, a block added or removed) needs a restart: the daemon keeps the old values for
those, applies the blocks, and says what waits for the restart. A file that does not load is
refused whole and the config in force stays.
"""

from __future__ import annotations

import dataclasses
import os
from pathlib import Path

from frostwatch.config import Config, load_config
from frostwatch.errors import ConfigError

Fingerprint = tuple[int, int, int] | None


def fingerprint(path: Path | None) -> Fingerprint:
    """(inode, size, mtime in ns) of the config file, None when it cannot be read. An atomic
    rewrite (`frostwatch stage`) changes the inode; an edit in place changes size or time."""
    if path is None:
        return None
    try:
        st = os.stat(path)
    except OSError:
        return None
    return (st.st_ino, st.st_size, st.st_mtime_ns)


@dataclasses.dataclass(frozen=True)
class Reload:
    """The outcome of a reload: the config now in force and what was said about it."""

    cfg: Config
    applied: tuple[str, ...] = ()  # "hill: stage 'tight cluster' -> 'full bloom', T10 -4.4 -> -2.2 C"
    waiting: tuple[str, ...] = ()  # sections changed that need a restart
    error: str | None = None  # the file did not load: nothing applied

    @property
    def changed(self) -> bool:
        return bool(self.applied)


def _block_changes(old, new) -> str:
    parts = []
    for f in dataclasses.fields(old):
        a, b = getattr(old, f.name), getattr(new, f.name)
        if a == b or f.name in ("critical_source",):
            continue
        if f.name == "kill_10pct_c":
            parts.append(f"T10 {a:g} -> {b:g} C")
        elif f.name == "kill_90pct_c":
            parts.append(f"T90 {a:g} -> {b:g} C")
        else:
            parts.append(f"{f.name} {a!r} -> {b!r}")
    return f"{old.id}: " + ", ".join(parts)


def apply_config_change(current: Config) -> Reload:
    """Reload `current.path` and apply what can be applied live (the blocks' keys).

    Returns
    -------
    Reload
        `cfg` the config to use from now on (the current one when nothing applies or the file
        does not load), with the applied block changes, the sections waiting for a restart, and
        the load error, if any.
    """
    try:
        new = load_config(current.path)
    except ConfigError as exc:
        return Reload(current, error="; ".join(exc.problems))
    waiting = []
    old_ids = [b.id for b in current.blocks]
    new_ids = [b.id for b in new.blocks]
    if old_ids != new_ids:
        waiting.append(f"blocks added, removed or reordered ({', '.join(old_ids)} -> {', '.join(new_ids)})")
    for section in ("site", "stations", "storage", "broker", "forecast"):
        if getattr(current, section) != getattr(new, section):
            waiting.append(f"[{section}]")
    for section in ("alerts", "contacts", "report", "channels", "mappings", "status_page", "daemon"):
        if current.raw.get(section) != new.raw.get(section):
            waiting.append(f"[{section}]")
    if old_ids != new_ids:
        return Reload(current, waiting=tuple(waiting))
    applied = tuple(_block_changes(a, b) for a, b in zip(current.blocks, new.blocks, strict=True) if a != b)
    if not applied:
        return Reload(current, waiting=tuple(waiting))
    raw = dict(current.raw)
    raw["blocks"] = new.raw.get("blocks", [])
    return Reload(dataclasses.replace(current, blocks=new.blocks, raw=raw), applied=applied, waiting=tuple(waiting))
