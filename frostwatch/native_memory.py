"""glibc's allocator, tuned for a daemon that runs for months (issue 18, item 6).

Measured (bench/soak.py --probe, 50 readings/s): the Python heap stayed flat while the process
grew about 1.4 MiB a minute. glibc's statistics showed where: bytes in use stayed flat, bytes
*free* inside malloc's heaps grew without end. Each health check built a large, growing, short-
lived result (90 minutes of readings), on a different worker thread each time; every thread gets
its own malloc arena, and the freed memory stayed mapped in all of them. Two levers, both no-ops
where the C library is not glibc:

- `limit_arenas(2)`: at most two malloc arenas (mallopt M_ARENA_MAX, as MALLOC_ARENA_MAX=2 would),
  set before the daemon starts its threads;
- `trim()`: malloc_trim(0) after each health check gives free pages back to the system.

The health check itself no longer materialises rows as Python objects (Store.readings_window).
"""

from __future__ import annotations

import ctypes
import ctypes.util
import logging

log = logging.getLogger("frostwatch.memory")

_M_ARENA_MAX = -8  # glibc malloc.h


def _libc():
    try:
        lib = ctypes.CDLL(ctypes.util.find_library("c") or "libc.so.6")
        lib.mallopt.argtypes = [ctypes.c_int, ctypes.c_int]
        lib.malloc_trim.argtypes = [ctypes.c_size_t]
        return lib
    except (OSError, AttributeError):  # not glibc (musl, macOS): nothing to tune
        return None


_LIBC = _libc()


def limit_arenas(n: int = 2) -> bool:
    """At most `n` malloc arenas for the whole process; True when glibc took the setting."""
    if _LIBC is None:
        return False
    return bool(_LIBC.mallopt(_M_ARENA_MAX, n))


def trim() -> bool:
    """Give free heap pages back to the system; True when some memory was released."""
    if _LIBC is None:
        return False
    try:
        return bool(_LIBC.malloc_trim(0))
    except Exception:  # noqa: BLE001 - an optimisation, never a failure
        log.debug("malloc_trim failed", exc_info=True)
        return False
