"""Memory probe run inside the daemon process by `python -m bench.soak --probe`: where the resident
memory goes, sampled every few seconds into a JSON-lines file.

Each line: the Python heap as tracemalloc sees it (objects and numpy buffers; only with
`FROSTWATCH_PROBE_TRACE=1`, it slows the daemon), glibc's malloc statistics (mallinfo2: bytes in
use, bytes free inside the heap and arenas, mmapped chunks), SQLite's own heap
(sqlite3_memory_used) and the process's RSS split (anon / file). Comparing them tells native
growth (malloc free lists, arenas per thread) from Python objects and from SQLite's page cache.

Started by the soak as:  python -c "import bench.probe; bench.probe.start(PATH, S); <run the daemon>"
"""

from __future__ import annotations

import ctypes
import ctypes.util
import json
import os
import threading
import time
import tracemalloc


class _Mallinfo2(ctypes.Structure):
    _fields_ = [(n, ctypes.c_size_t) for n in (
        "arena", "ordblks", "smblks", "hblks", "hblkhd", "usmblks", "fsmblks", "uordblks", "fordblks", "keepcost")]


def _libc():
    try:
        lib = ctypes.CDLL(ctypes.util.find_library("c") or "libc.so.6")
        lib.mallinfo2.restype = _Mallinfo2
        return lib
    except (OSError, AttributeError):
        return None


def _sqlite():
    try:
        import sqlite3  # noqa: F401 - loads the library the daemon uses

        lib = ctypes.CDLL(ctypes.util.find_library("sqlite3") or "libsqlite3.so.0")
        lib.sqlite3_memory_used.restype = ctypes.c_int64
        return lib
    except (OSError, AttributeError):
        return None


def sample() -> dict:
    out: dict = {"t": round(time.time(), 1), "threads": threading.active_count()}
    libc = _libc()
    if libc is not None:
        mi = libc.mallinfo2()
        out.update(malloc_heap_kib=mi.arena // 1024, malloc_mmap_kib=mi.hblkhd // 1024,
                   malloc_used_kib=mi.uordblks // 1024, malloc_free_kib=mi.fordblks // 1024)
    lib = _sqlite()
    if lib is not None:
        out["sqlite_heap_kib"] = lib.sqlite3_memory_used() // 1024
    if tracemalloc.is_tracing():
        cur, peak = tracemalloc.get_traced_memory()
        out.update(py_traced_kib=cur // 1024, py_peak_kib=peak // 1024)
        tracemalloc.reset_peak()
    try:
        with open("/proc/self/status") as f:
            for line in f:
                k, _, rest = line.partition(":")
                if k in ("VmRSS", "RssAnon", "RssFile"):
                    out[k] = int(rest.split()[0])
    except OSError:
        pass
    return out


def start(path: str, every_s: float = 10.0) -> threading.Thread:
    """Sample every `every_s` into `path`. FROSTWATCH_PROBE_TRACE=1 also traces the Python heap;
    FROSTWATCH_PROBE_TRIM=1 calls malloc_trim(0) after each sample (an experiment: does giving
    free heap pages back stop the growth?)."""
    if os.environ.get("FROSTWATCH_PROBE_TRACE") == "1":
        tracemalloc.start(1)
    trim = os.environ.get("FROSTWATCH_PROBE_TRIM") == "1"
    libc = _libc()

    def run() -> None:
        while True:
            with open(path, "a") as f:
                f.write(json.dumps(sample()) + "\n")
            if trim and libc is not None:
                libc.malloc_trim(0)
            time.sleep(every_s)

    t = threading.Thread(target=run, name="memory-probe", daemon=True)
    t.start()
    return t
