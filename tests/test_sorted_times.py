"""frostwatch.sorted_times (issue 19 item 3: the index without a search when the instant lies past
the newest reading or before the oldest) gives np.searchsorted's index on every sorted array:
repeated times, NaN (sorted last, as np.sort puts it), zeros of either sign, empty arrays, and
instants equal to a reading's time, between them, beyond either end, infinite or NaN."""

from __future__ import annotations

import numpy as np
from hypothesis import given
from hypothesis import strategies as st

from frostwatch.sorted_times import count_before, count_up_to

times = st.lists(st.one_of(st.floats(allow_nan=True, allow_infinity=True), st.sampled_from([0.0, -0.0, 60.0, 1.8e9])),
                 max_size=30).map(lambda xs: np.sort(np.array(xs, dtype=float)))


@given(times, st.one_of(st.floats(allow_nan=True, allow_infinity=True), st.sampled_from([0.0, -0.0, 60.0, 1.8e9])))
def test_the_counts_are_np_searchsorted_on_sorted_times(t, at):
    assert count_up_to(t, at) == int(np.searchsorted(t, at, side="right"))
    assert count_before(t, at) == int(np.searchsorted(t, at, side="left"))
    if len(t):  # the instants at the ends themselves, and a view of the array (a window)
        for x in (t[0], t[-1], float(t[len(t) // 2])):
            w = t[1:]
            assert count_up_to(t, x) == int(np.searchsorted(t, x, side="right"))
            assert count_before(t, x) == int(np.searchsorted(t, x, side="left"))
            assert count_up_to(w, x) == int(np.searchsorted(w, x, side="right"))
            assert count_before(w, x) == int(np.searchsorted(w, x, side="left"))


def test_a_window_that_ends_at_now_is_counted_whole_without_a_search():
    t = 1.8e9 + 60.0 * np.arange(500, dtype=float)
    assert count_up_to(t, float(t[-1])) == 500 and count_up_to(t, float(t[-1]) + 30.0) == 500
    assert count_up_to(t, float(t[-1]) - 1.0) == 499 and count_up_to(t, float(t[0]) - 1.0) == 0
    assert count_before(t, float(t[0])) == 0 and count_before(t, float(t[0]) + 1.0) == 1
    assert count_before(t, float(t[-1]) + 1.0) == 500
