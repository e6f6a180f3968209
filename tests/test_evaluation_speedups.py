"""The evaluation's speed-ups (issue 19, item 3) change no result: the median reporting interval
is np.median's, and a block with its own healthy tower is projected exactly as when every tower
of the farm is looked at (only the others' states are no longer computed for it)."""

from __future__ import annotations

import numpy as np
from hypothesis import given
from hypothesis import strategies as st

from frostwatch.forecast import projection
from frostwatch.forecast.sensors import DEFAULT_INTERVAL_S, MIN_INTERVAL_S, usual_interval_s


@given(st.lists(st.sampled_from([0.0, 30.0, 59.0, 60.0, 61.5, 120.0, 300.0, 3600.0]), max_size=40))
def test_usual_interval_is_the_median_of_the_last_gaps(steps):
    t = np.cumsum(np.array(steps, dtype=float)) + 1.8e9
    gaps = np.diff(t[-20:])
    gaps = gaps[gaps > 0]
    want = DEFAULT_INTERVAL_S if len(t) < 3 or not len(gaps) else max(MIN_INTERVAL_S, float(np.median(gaps)))
    assert usual_interval_s(t, None) == want


def test_curve_times_are_the_same_instants(demo_config):
    assert projection._utc(1807753680.4) == projection._utc(1807753680.0)
    assert projection._utc(1807753680.6).timestamp() == 1807753681.0
    assert projection._utc(None) is None
