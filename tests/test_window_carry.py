"""What a replay carries from one evaluation to the next while the readings window stays the same
(`frostwatch.forecast.carry`: the stations' states, the last hour's means, the block's monitoring
state) is what each evaluation works out afresh: at every 2-minute instant, with sensors that go
silent and come back, a stuck sensor, a reading that starts a new window, and a station whose
settings change under the same memo. The whole pipeline with these faults is checked against an
evaluator that keeps nothing (the daemon's), decision for decision."""

from __future__ import annotations

import dataclasses

import numpy as np
import pytest

from frostwatch.config.model import Station
from frostwatch.forecast import carry, sensors

T0_S = 1_700_000_000.0 - (1_700_000_000.0 % 3600.0)  # an hour mark
STEP_S = 120.0  # the daemon's cadence at night


def _faulty_series(interval_s: float, seed: int) -> dict:
    """A crop sensor and a tower every `interval_s` for 12 h: the whole logger down 2.5 h (one
    window in which the sensors go from healthy to silent), the crop sensor stuck an hour and a
    half and then silent alone 2.5 h, and wind from a second station that skips readings (the
    last hour's mean then falls back on an older one)."""
    rng = np.random.default_rng(seed)
    t = T0_S + np.arange(0.0, 12 * 3600.0, interval_s)
    air = 8.0 - np.cumsum(rng.normal(0.05, 0.1, len(t)))
    down = (t > T0_S + 3 * 3600) & (t < T0_S + 5.5 * 3600)  # the whole logger down: one window for hours
    silent = (t > T0_S + 8.5 * 3600) & (t < T0_S + 11 * 3600)  # the crop sensor alone
    stuck = (t >= T0_S + 6 * 3600) & (t < T0_S + 7.5 * 3600)
    air[stuck] = 4.2
    tw = t[~down & ~silent]
    wind_t = t[~down & (rng.random(len(t)) > 0.5)]
    return {
        ("crop-a", "air_temperature"): (tw, air[~down & ~silent]),
        ("tower-a", "air_temperature"): (t[~down], air[~down] + 1.5),
        ("mast", "wind_speed"): (wind_t, rng.uniform(0.0, 4.0, len(wind_t))),
        ("crop-a", "wind_speed"): (tw[::3], rng.uniform(0.0, 3.0, len(tw[::3]))),
    }


def _windows(series: dict):
    """(now, the window and its memo as a replay hands them, the same window sliced afresh)."""
    from frostwatch.night import slice_series
    from frostwatch.pipeline import WindowMemo

    memo = WindowMemo()
    start_s = T0_S - 600.0
    for now_s in np.arange(T0_S + 60.0, T0_S + 12 * 3600.0, STEP_S):
        window, values = memo.window(series, start_s, float(now_s))
        yield float(now_s), window, values, slice_series(series, start_s, float(now_s))


def _stations(interval_s: float | None) -> list[Station]:
    return [Station(id="crop-a", block="b1", height_m=1.5, role="crop", interval_s=interval_s),
            Station(id="tower-a", block="b1", height_m=10.0, role="tower", interval_s=interval_s)]


@pytest.mark.parametrize("interval_s, configured", [(300.0, True), (300.0, False), (3600.0, True), (3600.0, False)])
def test_carried_station_states_are_the_states_made_afresh(interval_s, configured):
    """Healthy, silent (its age in the words), stuck, and back: every carried state is the one
    `sensors.station_state` makes afresh from the same readings at that instant, and most are
    carried."""
    series = _faulty_series(interval_s, seed=int(interval_s))
    stations = _stations(interval_s if configured else None)
    carried = n = 0
    kinds = set()
    for now_s, window, memo, fresh_window in _windows(series):
        for st in stations:
            had = memo.get(("state", st.id, 2.0))
            got = carry.station_state(st, window, now_s, 2.0, memo)
            want = sensors.station_state(st, fresh_window, now_s, 2.0)
            assert got == want, (st.id, now_s)
            carried += had is not None and got is had[1]
            n += 1
            kinds.add((got.healthy, tuple(p.split(":")[1].split()[0] for p in got.problems)))
    assert {(True, ()), (False, ("silent",))} <= kinds  # healthy and silent seen
    assert (False, ("air",)) in kinds or interval_s * sensors.STUCK_MIN_READINGS > sensors.STUCK_WINDOW_S  # and stuck
    assert carried > n // (2 if interval_s >= 3600 else 4)


def test_a_station_changed_under_the_same_memo_is_not_given_the_old_state():
    """A station's settings changed (a config reload) with the memo kept: its state is made again
    with the new settings, never the one kept for the old."""
    series = _faulty_series(300.0, seed=3)
    st = _stations(300.0)[0]
    strict = dataclasses.replace(st, interval_s=60.0)  # 2 minutes of silence is already too long
    for now_s, window, memo, fresh_window in _windows(series):
        carry.station_state(st, window, now_s, 2.0, memo)
        assert carry.station_state(strict, window, now_s, 2.0, memo) == sensors.station_state(strict, fresh_window, now_s, 2.0)


@pytest.mark.parametrize("interval_s", [300.0, 3600.0])
def test_carried_hour_means_are_the_means_made_afresh(interval_s):
    """The last hour's mean of one or two stations, also when one of them has no reading in the
    hour (the fallback on an older reading): the carried mean is `sensors.mean_as_of`'s, and a
    new reading (a new window) is seen at once."""
    series = _faulty_series(interval_s, seed=7)
    carried = n = 0
    for now_s, window, memo, fresh_window in _windows(series):
        for ids in (["mast"], ["crop-a", "mast"], ["crop-a"], ["nobody"]):
            key = ("mean", tuple(ids), "wind_speed", 3600.0)
            had = memo.get(key)
            got = carry.mean_as_of(window, ids, "wind_speed", now_s, 3600.0, memo)
            want = sensors.mean_as_of(fresh_window, ids, "wind_speed", now_s, 3600.0)
            assert (got is None and want is None) or got == want, (ids, now_s)
            carried += had is not None and memo.get(key) is had
            n += 1
    assert carried > n // 4


@pytest.mark.parametrize("every_s", [0.0, 3600.0])
def test_a_replay_with_silent_and_stuck_sensors_decides_as_the_daemons_path(demo_config, demo_logs, every_s):
    """The demo's frost night with its crop sensors silent for four and a half hours and stuck
    for one and a half, at its own rate and thinned to hourly readings: the evaluator that carries (a replay's)
    gives every projection, decision and alert of the one that keeps nothing (the daemon's),
    the monitoring states (silent, stuck, back) included."""
    from frostwatch import pipeline
    from frostwatch.commands.logs import _series_from_readings
    from frostwatch.config import load_config
    from frostwatch.ingest.csvlog import read_sensor_log

    cfg = load_config(str(demo_config))
    readings = [r for r in read_sensor_log(demo_logs[0], {s.id for s in cfg.stations})[0]]
    series = _series_from_readings(readings)
    first = min(float(t[0]) for t, _ in series.values())
    last = max(float(t[-1]) for t, _ in series.values())
    crop = {s.id for s in cfg.stations if s.role == "crop"}
    dusk = pipeline.covered_nights(cfg, series)[0].sunset_utc.timestamp()
    out = {}
    for (sid, q), (t, v) in series.items():
        keep = np.ones(len(t), dtype=bool)
        if every_s:
            keep &= (t % every_s) == 0
        if sid in crop and q == "air_temperature":
            keep &= ~((t > dusk + 1800) & (t < dusk + 5 * 3600))  # silent 4.5 hours (longer than two hourly intervals)
            v = np.where((t >= dusk + 6 * 3600) & (t < dusk + 7.5 * 3600), 1.0, v)  # stuck
        if keep.any():
            out[(sid, q)] = (t[keep], v[keep])
    kept, fresh = pipeline.Evaluator(cfg, fixed_series=True), pipeline.Evaluator(cfg)
    reasons = set()
    for night in pipeline.covered_nights(cfg, out):
        for now in pipeline.evaluation_times(night, cfg.forecast.evaluation_interval_min, first, last):
            a, b = kept.evaluate(now, out), fresh.evaluate(now, out)
            assert a.projections == b.projections and a.decisions == b.decisions and a.alerts == b.alerts, now
            reasons |= {d.monitoring.reason.value for d in a.decisions}
    assert {"ok", "silent"} <= reasons


@pytest.mark.parametrize("interval_s", [300.0, 3600.0])
def test_the_evening_slope_kept_for_a_cut_gives_the_curve_made_afresh(interval_s):
    """Before dusk the evening curve's slope is kept per cut of the readings (`memo`): at every
    instant the curve is the one worked out without it, as new readings come."""
    from frostwatch.forecast.curves import evening_curve_c

    t, v = _faulty_series(interval_s, seed=11)[("crop-a", "air_temperature")]
    sunset_s, sunrise_s = T0_S + 1800.0, T0_S + 12 * 3600.0
    memo: dict = {}
    seen = set()
    for now_s in np.arange(T0_S, T0_S + 4 * 3600.0, STEP_S):
        upto = t <= now_s
        got = evening_curve_c(t[upto], v[upto], sunset_s, float(now_s), 7.0, sunrise_s, memo)
        want = evening_curve_c(t[upto], v[upto], sunset_s, float(now_s), 7.0, sunrise_s)
        assert got == want or (got is None and want is None), now_s
        seen.add(got is None)
    assert seen == {True, False}
