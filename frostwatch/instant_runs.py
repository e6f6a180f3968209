"""Tuples of instants made a whole number of seconds apart (the projection's curve, made by
`forecast.curves.grid_utc`), told by the tuple itself: the one made is noted with its spacing, and
a reader that gets that very object (a tuple cannot change) knows its instants are regular without
comparing them (`decision.summarise_projection` thins the curve to half-hour points).

    note(times, every_s, m)        # times[:m] are times[0] + k * every_s seconds, every_s > 0
    spacing_of(times) -> (every_s, m) or None (not a tuple noted here, or no longer kept)

Only the last RUNS_KEPT tuples are kept (an evaluation reads its curve's right after making it).
"""

from __future__ import annotations

import datetime as dt

RUNS_KEPT = 8
_NOTED: dict[int, tuple[tuple[dt.datetime, ...], int, int]] = {}  # id -> (the tuple itself, every_s, m)


def note(times: tuple[dt.datetime, ...], every_s: int, m: int) -> None:
    """Note that `times[:m]` are whole seconds `every_s` (> 0) apart, in order."""
    if type(times) is not tuple or every_s <= 0 or not 0 <= m <= len(times):
        return
    if len(_NOTED) >= RUNS_KEPT:
        # the oldest: list() copies the keys in one step, where next(iter(...)) could meet another
        # thread's insertion between its two steps ("dictionary changed size during iteration")
        for old in list(_NOTED)[: len(_NOTED) - RUNS_KEPT + 1]:
            _NOTED.pop(old, None)  # another thread may have taken it
    _NOTED[id(times)] = (times, int(every_s), m)  # held, so the id is not reused while noted


def spacing_of(times) -> tuple[int, int] | None:
    """(every_s, m) noted for this very tuple, or None."""
    got = _NOTED.get(id(times))
    return None if got is None or got[0] is not times else (got[1], got[2])
