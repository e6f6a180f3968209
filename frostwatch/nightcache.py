"""The daemon's in-memory series of tonight: read from the store once, then kept up to date with
exactly the readings the ingest writer has just committed.

    cache = NightCache(store, evaluator.night_at, LOOKBACK)
    cache.push(readings)          # writer thread, after each commit
    series = cache.series(now)    # {(station, quantity): (t_s, values)}, as Store.readings_window
    series, since_s = cache.snapshot(now)   # the same, and the earliest reading added since the last snapshot

Why: an evaluation needs every reading from sunset - 6 h up to now (about 300,000 rows for 50
blocks of 4 stations at 02:00). Reading and regrouping them from SQLite each cycle cost ~350 ms;
a snapshot of this cache costs a dictionary of array views (bench/evaluation.py).

How it stays equal to the store (tests/daemon/test_nightcache.py):
- the window is the one `Core.evaluate` used to read: from the night's sunset - `lookback`, with
  no upper bound (a reading may be up to `max_future_s` ahead; evaluations slice at `now`);
- the first value of a (time, station, quantity) is kept, as `Store.add_readings` keeps it; a
  pushed reading at a time already held is a duplicate or a conflict and is skipped;
- a late or out-of-order reading is inserted at its place in time (copy on write, so a
  snapshot handed to an evaluation never changes under it); appends write past every snapshot's
  end, so they need no copy;
- readings pushed while the store window is being loaded are kept aside and merged after the
  load (duplicates of loaded rows are then skipped);
- a new night trims what is older than its window start; a night whose window starts before
  what is held (the clock stepped back) is loaded from the store again.

`snapshot` also says from when the series may differ from the previous snapshot's: readings are
only ever added (never edited or removed) between loads, so the readings before the earliest one
added since are those the previous snapshot held. The daemon's evaluations carry what those
readings alone decide (the dusk forecast) from one cycle to the next (`pipeline.Evaluator`).

Only readings pushed here join between loads: rows another process writes into the store while
the daemon runs (`frostwatch import`) join at the next load (a new night, `invalidate()`, or a
restart).
"""

from __future__ import annotations

import datetime as dt
import math
import threading
from collections.abc import Callable, Iterable

import numpy as np

from frostwatch.models import Reading
from frostwatch.night import Night
from frostwatch.store import Store, to_ms

Key = tuple[str, str]
Series = dict[Key, tuple[np.ndarray, np.ndarray]]

_FAR_FUTURE = dt.datetime(9999, 1, 1, tzinfo=dt.UTC)


class _Column:
    """One (station, quantity) series: sorted times and values with spare capacity at the end."""

    __slots__ = ("t", "v", "n")

    def __init__(self, t: np.ndarray, v: np.ndarray):
        n = len(t)
        if n > 1 and not np.all(t[1:] > t[:-1]):  # the store's key is time first, but be sure
            t, i = np.unique(t, return_index=True)
            v = np.asarray(v)[i]
            n = len(t)
        cap = max(64, 2 * n)
        self.t = np.empty(cap)
        self.v = np.empty(cap)
        self.t[:n] = t
        self.v[:n] = v
        self.n = n

    def view(self) -> tuple[np.ndarray, np.ndarray]:
        return self.t[: self.n], self.v[: self.n]

    def _grow(self, need: int) -> None:
        cap = max(64, 2 * need)
        t, v = np.empty(cap), np.empty(cap)
        t[: self.n] = self.t[: self.n]
        v[: self.n] = self.v[: self.n]
        self.t, self.v = t, v  # snapshots keep the old arrays, unchanged

    def add(self, ts: np.ndarray, vs: np.ndarray) -> int:
        """Add readings (sorted by time, unique times); keep the held value where a time exists.
        Returns how many were added."""
        n = self.n
        if n == 0 or ts[0] > self.t[n - 1]:
            if n + len(ts) > len(self.t):
                self._grow(n + len(ts))
            self.t[n: n + len(ts)] = ts
            self.v[n: n + len(ts)] = vs
            self.n = n + len(ts)
            return len(ts)
        held = self.t[:n]
        idx = np.searchsorted(held, ts, side="left")
        new = ~((idx < n) & (held[np.minimum(idx, n - 1)] == ts))
        if not new.any():
            return 0
        ts, vs, idx = ts[new], vs[new], idx[new]
        # out of order: a fresh array (copy on write), never an in-place shift under a snapshot
        t = np.insert(held, idx, ts)
        v = np.insert(self.v[:n], idx, vs)
        self.t, self.v, self.n = t, v, len(t)
        if self.n == len(self.t):
            self._grow(self.n + 1)
        return len(ts)

    def trim(self, start_s: float) -> None:
        i = int(np.searchsorted(self.t[: self.n], start_s, side="left"))
        if i:
            keep_t, keep_v = self.t[i: self.n].copy(), self.v[i: self.n].copy()
            self.__init__(keep_t, keep_v)


class NightCache:
    """Tonight's readings window in memory (thread-safe: one writer pushes, evaluations read)."""

    def __init__(self, store: Store, night_at: Callable[[dt.datetime], Night], lookback: dt.timedelta):
        self.store = store
        self.night_at = night_at
        self.lookback = lookback
        self._lock = threading.Lock()
        self._load_lock = threading.Lock()
        self._cols: dict[Key, _Column] = {}
        self._night: dt.date | None = None
        self._start_s: float | None = None
        self._pending: list[Reading] | None = None  # pushes that arrive while loading
        self.loads = 0  # store reads of a whole window (a test and the benchmark count them)
        # the earliest reading time added since the last snapshot (-inf: loaded, trimmed or
        # forgotten since; inf: nothing added)
        self._earliest_added_s = -math.inf
        self.pushed = 0

    # -- the writer side ----------------------------------------------------------------------
    def push(self, readings: Iterable[Reading]) -> None:
        """Readings just committed to the store (any order, duplicates allowed)."""
        readings = list(readings)
        if not readings:
            return
        with self._lock:
            self.pushed += len(readings)
            if self._pending is not None:
                self._pending.extend(readings)
                return
            if self._night is None:
                return  # nothing held yet: the first load reads these from the store
            self._add(readings)

    def _add(self, readings: list[Reading]) -> None:
        groups: dict[Key, list[tuple[float, float]]] = {}
        start = self._start_s
        earliest = self._earliest_added_s
        for r in readings:
            ts = to_ms(r.time_utc) / 1000.0  # exactly the store's representation
            if start is not None and ts < start:
                continue
            groups.setdefault((r.station, r.quantity), []).append((ts, float(r.value)))
            if ts < earliest:
                earliest = ts
        self._earliest_added_s = earliest
        for key, pts in groups.items():
            # first value per time within the batch, as the store keeps the first
            seen: dict[float, float] = {}
            for ts, v in pts:
                seen.setdefault(ts, v)
            ts = np.fromiter(sorted(seen), float, len(seen))
            vs = np.fromiter((seen[x] for x in ts.tolist()), float, len(seen))
            col = self._cols.get(key)
            if col is None:
                self._cols[key] = _Column(ts, vs)
            else:
                col.add(ts, vs)

    # -- the evaluation side ------------------------------------------------------------------
    def series(self, now_utc: dt.datetime) -> Series:
        """The window of the night at `now_utc` (from its sunset - lookback), as array views
        that never change afterwards. Loads from the store only for a night not yet held."""
        self._ensure(self.night_at(now_utc))
        with self._lock:
            return {k: c.view() for k, c in self._cols.items() if c.n}

    def snapshot(self, now_utc: dt.datetime) -> tuple[Series, float]:
        """`series(now_utc)` and the earliest time [s] of a reading added since the previous
        snapshot: every reading before it is in the previous snapshot, and every reading of the
        previous snapshot is here (math.inf: nothing added; -math.inf: the window was loaded,
        trimmed or forgotten since, so nothing is known). For one caller, the daemon's
        evaluations: each snapshot restarts the count."""
        self._ensure(self.night_at(now_utc))
        with self._lock:
            since_s, self._earliest_added_s = self._earliest_added_s, math.inf
            return {k: c.view() for k, c in self._cols.items() if c.n}, since_s

    def invalidate(self) -> None:
        """Forget everything; the next `series` reads the window from the store again."""
        with self._load_lock, self._lock:
            self._cols, self._night, self._start_s = {}, None, None
            self._earliest_added_s = -math.inf

    def _ensure(self, night: Night) -> None:
        start_s = to_ms(night.sunset_utc - self.lookback) / 1000.0
        with self._load_lock:
            with self._lock:
                if self._night == night.date:
                    return
                if self._night is not None and self._start_s is not None and start_s >= self._start_s:
                    # a later night: everything since the old start is held; drop what is older
                    for c in self._cols.values():
                        c.trim(start_s)
                    self._cols = {k: c for k, c in self._cols.items() if c.n}
                    self._night, self._start_s = night.date, start_s
                    self._earliest_added_s = -math.inf
                    return
                self._pending = []
            try:
                data = self.store.readings_window(night.sunset_utc - self.lookback, _FAR_FUTURE)
            except BaseException:
                with self._lock:
                    self._pending = None
                raise
            with self._lock:
                self._cols = {k: _Column(t, v) for k, (t, v) in data.items()}
                self._night, self._start_s = night.date, start_s
                self._earliest_added_s = -math.inf
                pending, self._pending = self._pending, None
                if pending:
                    self._add(pending)
                self.loads += 1

    def stats(self) -> dict:
        with self._lock:
            return {"night": self._night.isoformat() if self._night else None, "keys": len(self._cols),
                    "rows": sum(c.n for c in self._cols.values()), "loads": self.loads, "pushed": self.pushed}


__all__ = ["NightCache"]
