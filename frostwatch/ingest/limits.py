"""How much a flood of bad input may cost (issue 18, item 3): pure, clock passed in.

A sensor gone wrong, or someone hostile, can send bad messages as fast as the broker takes them.
Each source (an MQTT topic) may put `per_hour` rejection rows into the store (and lines into the
log) per hour; beyond that its rejections are counted, and when its hour is over one summary row
says how many there were, when, and what the last one was. The number of sources tracked is
bounded too: beyond `max_sources`, new ones share one bucket.

    limiter = RejectionLimiter(per_hour=60)
    to_store = limiter.admit(rejections, now_s)   # at most per_hour per source and hour
    to_store += limiter.due(now_s)                # summaries of the hours that have ended
"""

from __future__ import annotations

import datetime as dt
from dataclasses import dataclass

from frostwatch.models import Rejection

WINDOW_S = 3600.0
OTHER_SOURCES = "mqtt:(other topics, over the number tracked)"


@dataclass
class _Window:
    start_s: float
    stored: int = 0
    counted: int = 0
    last: Rejection | None = None


def _hhmm(t_s: float) -> str:
    return dt.datetime.fromtimestamp(t_s, dt.UTC).strftime("%Y-%m-%d %H:%M")


class RejectionLimiter:
    def __init__(self, per_hour: int = 60, max_sources: int = 500):
        self.per_hour = max(1, int(per_hour))
        self.max_sources = max(1, int(max_sources))
        self._windows: dict[str, _Window] = {}
        self.counted_total = 0  # rejections counted but not stored one by one, since start

    def snapshot(self) -> tuple:
        return {k: _Window(w.start_s, w.stored, w.counted, w.last) for k, w in self._windows.items()}, self.counted_total

    def restore(self, snap: tuple) -> None:
        """Back to a snapshot (a commit failed: what it admitted was not stored)."""
        self._windows, self.counted_total = snap[0], snap[1]

    def admit(self, rejections: list[Rejection], now_s: float) -> list[Rejection]:
        """The rejections to store now (plus summaries of windows that these close)."""
        out: list[Rejection] = []
        for r in rejections:
            key = r.source
            if key not in self._windows and len(self._windows) >= self.max_sources:
                key = OTHER_SOURCES
            w = self._windows.get(key)
            if w is not None and now_s - w.start_s >= WINDOW_S:
                out += self._close(key, now_s)
                w = None
            if w is None:
                w = self._windows[key] = _Window(now_s)
            if w.stored < self.per_hour:
                w.stored += 1
                out.append(r)
            else:
                w.counted += 1
                w.last = r
                self.counted_total += 1
        return out

    def due(self, now_s: float) -> list[Rejection]:
        """Summary rows of the windows that have ended (and forget those windows)."""
        out: list[Rejection] = []
        for key in [k for k, w in self._windows.items() if now_s - w.start_s >= WINDOW_S]:
            out += self._close(key, now_s)
        return out

    def flush(self, now_s: float) -> list[Rejection]:
        """Summary rows of every window with counted rejections (on the way out)."""
        out: list[Rejection] = []
        for key in list(self._windows):
            out += self._close(key, now_s)
        return out

    def _close(self, key: str, now_s: float) -> list[Rejection]:
        w = self._windows.pop(key)
        if not w.counted or w.last is None:
            return []
        end_s = min(now_s, w.start_s + WINDOW_S)
        reason = (f"{w.counted} more rejected messages from this source between {_hhmm(w.start_s)} and "
                  f"{_hhmm(end_s)} UTC were counted, not stored one by one (at most {self.per_hour} rows an hour "
                  f"per source, [storage] rejections_per_source_per_hour); the last one: {w.last.reason}")
        return [Rejection(key if key == OTHER_SOURCES else w.last.source, None, reason[:500], w.last.raw)]
