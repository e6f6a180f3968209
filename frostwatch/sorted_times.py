"""Where an instant falls among a series' reading times (sorted, as every series is): the index
`np.searchsorted` gives, told without the search when the instant lies past the newest reading or
before the oldest. An evaluation's readings window ends at now, so most of what it asks ("the
readings up to now", "the newest reading at or before now") is of that kind, a few thousand
times a cycle (issue 19 item 3).

    j = count_up_to(t_s, now_s)      # == int(t_s.searchsorted(now_s, side="right"))
    i = count_before(t_s, start_s)   # == int(t_s.searchsorted(start_s, side="left"))

tests/test_sorted_times.py holds both to np.searchsorted on sorted arrays with repeated times,
NaN, zeros of either sign and empty arrays.
"""

from __future__ import annotations

import numpy as np


def count_up_to(t_s: np.ndarray, end_s: float) -> int:
    """How many of the sorted times are at or before `end_s`: `t_s.searchsorted(end_s, side="right")`."""
    n = len(t_s)
    if n and t_s[n - 1] <= end_s:  # the newest at or before: all of them (False for NaN either side)
        return n
    return int(t_s.searchsorted(end_s, side="right"))


def count_before(t_s: np.ndarray, start_s: float) -> int:
    """How many of the sorted times are before `start_s`: `t_s.searchsorted(start_s, side="left")`."""
    if len(t_s) and t_s[0] >= start_s:  # the oldest at or after: none of them (False for NaN either side)
        return 0
    return int(t_s.searchsorted(start_s, side="left"))
