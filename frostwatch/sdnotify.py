"""sd_notify without libsystemd: one datagram to $NOTIFY_SOCKET (the protocol is the API;
reliability.md 5.3). Standard library only; every function is a no-op outside systemd."""

from __future__ import annotations

import os
import socket


def notify(state: str) -> bool:
    """Send e.g. "READY=1", "WATCHDOG=1", "STATUS=...", "STOPPING=1". False when not under systemd."""
    addr = os.environ.get("NOTIFY_SOCKET")
    if not addr or addr[0] not in "@/":
        return False
    if addr[0] == "@":
        addr = "\0" + addr[1:]  # Linux abstract namespace
    try:
        with socket.socket(socket.AF_UNIX, socket.SOCK_DGRAM | socket.SOCK_CLOEXEC) as s:
            s.connect(addr)
            s.sendall(state.encode("utf-8", "replace"))
    except OSError:
        return False
    return True


def watchdog_interval_s() -> float | None:
    """Seconds between WATCHDOG=1 pings (half of WatchdogSec=), or None when no watchdog is set."""
    usec, pid = os.environ.get("WATCHDOG_USEC"), os.environ.get("WATCHDOG_PID")
    if not usec:
        return None
    try:
        if pid and int(pid) != os.getpid():
            return None
        return int(usec) / 2e6
    except ValueError:
        return None
