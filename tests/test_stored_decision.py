"""The stored summary of a projection (`decision.summarise_projection`) keeps the curve points and
rounds the values as the plain loop does: curves in order cut by bisection, curves out of order
point by point, every value `round(float(v), 2)` to the bit (0.0 and -0.0, values that round to a
signed zero, numpy floats, ints) whether its rounding is kept from before or not."""

from __future__ import annotations

import datetime as dt
import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from frostwatch import decision
from frostwatch.decision import CURVE_STEP_S, summarise_projection
from frostwatch.models import Projection


def _plain_curve(times, temps):
    kept_t, kept_c, last = [], [], None
    for t, c in zip(times, temps, strict=False):
        if last is None or t - last >= dt.timedelta(seconds=CURVE_STEP_S):
            kept_t.append(t)
            kept_c.append(round(float(c), 2))
            last = t
    if times and (not kept_t or kept_t[-1] != times[-1]):
        kept_t.append(times[-1])
        kept_c.append(round(float(temps[-1]), 2))
    return kept_t, kept_c


def _same_floats(a, b) -> bool:
    return len(a) == len(b) and all(
        type(x) is type(y) and (x == y or (x != x and y != y)) and math.copysign(1, x) == math.copysign(1, y)
        for x, y in zip(a, b, strict=True))


def _projection(times, temps, **kw) -> Projection:
    base = dict(time_utc=times[0], block="b", sunset_utc=times[0], sunrise_utc=times[-1], station="s", air_temp_c=1.0,
                dew_point_c=None, wet_bulb_c=None, predicted_min_c=0.5, predicted_min_at_utc=None, band_c=0.3,
                crossings_utc={}, inversion_c=None, projected_inversion_c=None, inversion_class=None,
                wind_speed_m_s=None, regime="radiation", method="m", notes=(), curve_time_utc=tuple(times),
                curve_air_temp_c=tuple(temps))
    base.update(kw)
    return Projection(**base)


TEMPS = st.one_of(st.floats(-40.0, 40.0), st.sampled_from([0.0, -0.0, -0.001, 0.004, -0.005, 0.005, 0.015, 2.675,
                                                           -2.675, 1e-9, -1e-9, 28.66]),
                  st.integers(-5, 5), st.floats(-40.0, 40.0).map(np.float64))


@settings(max_examples=300, deadline=None)
@given(start_s=st.floats(8e8, 2e9), gaps_s=st.lists(st.sampled_from([-1800.0, -300.0, -0.000001, 0.0, 0.000001, 1.0,
                                                                       300.0, 900.0, 1799.0, 1800.0, 1800.000001,
                                                                       2400.0, 3600.0]), max_size=60),
       temps=st.lists(TEMPS, min_size=61, max_size=61), offset_h=st.sampled_from([0, -5]), short_by=st.integers(0, 2))
def test_the_kept_points_and_their_rounding_are_the_plain_loops(start_s, gaps_s, temps, offset_h, short_by):
    """Times in order or not (negative gaps), equal, microseconds either side of the step, in
    another zone; temperatures the loop rounds to signed zeros; a temperature list shorter than
    the times (zip stops at the shorter; the last point is the times' last)."""
    tz = dt.timezone(dt.timedelta(hours=offset_h))
    times = [dt.datetime.fromtimestamp(start_s, tz)]
    for g in gaps_s:
        times.append(times[-1] + dt.timedelta(seconds=g))
    temps = temps[: max(1, len(times) - short_by)]
    want_t, want_c = _plain_curve(times, temps)
    for _ in range(2):  # the second time every rounding comes from the table
        s = summarise_projection(_projection(times, temps))
        assert list(s.curve_time_utc) == want_t
        assert all(a.utcoffset() == b.utcoffset() for a, b in zip(s.curve_time_utc, want_t, strict=True))
        assert _same_floats(list(s.curve_air_temp_c), want_c)


@pytest.mark.parametrize("value", [0.0, -0.0, -0.001, 0.004, -0.004, 0.005, 2.675, -2.675, 1e300, math.inf, -math.inf,
                                   math.nan, np.float64(-0.0), np.float64(2.675), 3, True, -1e-300])
def test_every_rounded_field_is_round_to_two_places(value, monkeypatch):
    monkeypatch.setattr(decision, "ROUND_CACHE_SIZE", 4)
    monkeypatch.setattr(decision, "_ROUNDED", {})
    t0 = dt.datetime(2027, 4, 14, 3, 0, tzinfo=dt.UTC)
    times = [t0 + dt.timedelta(minutes=5 * i) for i in range(3)]
    want = round(float(value), 2)
    for _ in range(3):
        p = _projection(times, [value, 1.0, -value], air_temp_c=value, dew_point_c=value, predicted_min_c=value,
                        band_c=0.3, inversion_c=value, wind_speed_m_s=value)
        s = summarise_projection(p)
        got = [s.air_temp_c, s.dew_point_c, s.predicted_min_c, s.inversion_c, s.wind_speed_m_s, s.curve_air_temp_c[0]]
        assert _same_floats(got, [want] * len(got))
        assert _same_floats([s.curve_air_temp_c[-1]], [round(float(-value), 2)])
        assert len(decision._ROUNDED) <= 4 and not any(k == 0.0 or k != k for k in decision._ROUNDED)


def test_a_real_nights_summaries_keep_what_the_plain_loop_kept(demo_config, demo_logs):
    """The demo farm's first night, every projection of every evaluation: the kept curve points
    and every rounded field as the plain loop and round() give them."""
    from frostwatch import pipeline
    from frostwatch.commands.logs import _series_from_readings
    from frostwatch.config import load_config
    from frostwatch.ingest.csvlog import read_sensor_log

    cfg = load_config(str(demo_config))
    readings = read_sensor_log(demo_logs[0], {s.id for s in cfg.stations})[0]
    n = 0
    for ev in pipeline.run_replay(cfg, _series_from_readings(readings)):
        for p in ev.projections:
            s = summarise_projection(p)
            want_t, want_c = _plain_curve(p.curve_time_utc, p.curve_air_temp_c) if p.curve_time_utc else ([], [])
            assert list(s.curve_time_utc) == want_t and _same_floats(list(s.curve_air_temp_c), want_c)
            for name in ("air_temp_c", "dew_point_c", "wet_bulb_c", "predicted_min_c", "inversion_c", "wind_speed_m_s"):
                v = getattr(p, name)
                assert (getattr(s, name) is None) if v is None else _same_floats([getattr(s, name)], [round(float(v), 2)])
            n += bool(p.curve_time_utc)
    assert n > 100
