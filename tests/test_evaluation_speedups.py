"""The evaluation's speed-ups (issue 19, item 3) change no result: the median reporting interval
is np.median's, and a block with its own healthy tower is projected exactly as when every tower
of the farm is looked at (only the others' states are no longer computed for it)."""

from __future__ import annotations

import datetime as dt

import numpy as np
import pytest
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


# ---- issue 19 (second part): the cycle's remaining repeats, each checked against the plain way --

finite = st.floats(min_value=-40.0, max_value=40.0, allow_nan=False)


@given(st.lists(st.lists(finite, min_size=0, max_size=150), min_size=1, max_size=4))
def test_mean_as_of_is_np_mean_of_the_readings_bit_for_bit(per_station):
    """mean_as_of sums the readings' slices itself; the value is np.mean's of the same list."""
    from frostwatch.forecast.sensors import mean_as_of

    series, vals = {}, []
    for k, values in enumerate(per_station):
        t = 1.8e9 + 60.0 * np.arange(len(values), dtype=float)
        series[(f"s{k}", "wind_speed")] = (t, np.array(values, dtype=float))
        vals += values
    got = mean_as_of(series, [f"s{k}" for k in range(len(per_station))], "wind_speed", 1.8e9 + 1e6, 1e7)
    assert got == (float(np.mean(vals)) if vals else None)


def test_station_state_is_made_once_per_series_and_instant_and_never_reused_across_them(demo_config):
    from frostwatch.config import load_config
    from frostwatch.forecast import sensors

    cfg = load_config(str(demo_config))
    st_ = next(s for s in cfg.stations if s.role == "crop")
    t = 1.8e9 + 300.0 * np.arange(30, dtype=float)
    series = {(st_.id, "air_temperature"): (t, np.linspace(5.0, -1.0, 30))}
    a = sensors.station_state(st_, series, t[10], 3.0)
    assert sensors.station_state(st_, series, t[10], 3.0) is a  # the same evaluation asks again
    assert sensors.station_state(st_, series, t[20], 3.0).latest["air_temperature"] == series[(st_.id, "air_temperature")][1][20]
    other = {(st_.id, "air_temperature"): (t, np.full(30, 7.0))}  # another evaluation's series
    assert sensors.station_state(st_, other, t[10], 3.0).latest["air_temperature"] == 7.0
    assert sensors.station_state(st_, series, t[10], 3.0) == sensors._station_state(st_, series, t[10], 3.0)
    series[(st_.id, "air_temperature")] = (t[:5], np.full(5, -9.0))  # the caller edits its own series
    assert not sensors.station_state(st_, series, t[10], 3.0).healthy
    series[(st_.id, "relative_humidity")] = (t, np.full(30, 80.0))
    assert sensors.station_state(st_, series, t[10], 3.0).latest["relative_humidity"] == 80.0
    assert sensors.station_state(st_, series, t[10], 1.0) == sensors._station_state(st_, series, t[10], 1.0)


def test_four_wet_bulb_crossings_in_one_solve_are_the_four_single_ones():
    from frostwatch import drying

    rng = np.random.default_rng(19)
    for _ in range(200):
        grid = 1.8e9 + 300.0 * np.arange(rng.integers(2, 120))
        air = [np.linspace(rng.uniform(-1, 6), rng.uniform(-6, 2), len(grid)) for _ in range(2)]
        td = [np.minimum(a, rng.uniform(-12, 1)) for a in air]
        thr = [float(rng.uniform(-4, 1)), float(rng.uniform(-4, 1))]
        p = float(rng.uniform(850, 1013))
        got = drying.wet_bulb_crossings_s(grid, air * 2, td * 2, [thr[0], thr[0], thr[1], thr[1]], p)
        one = [drying.wet_bulb_crossing_s(grid, air[k % 2], td[k % 2], thr[k // 2], p) for k in range(4)]
        assert got == one


def test_replay_works_out_sun_times_only_for_nights_near_readings(demo_config):
    """A log of two nights years apart (as a typical-year file splices months of different years)
    is replayed over those two nights only, and over exactly the nights whose window holds a
    reading: the same list as checking every date between them."""
    from frostwatch import pipeline
    from frostwatch.config import load_config

    cfg = load_config(str(demo_config))
    crop = next(s for s in cfg.stations if s.role == "crop")
    ev = pipeline.Evaluator(cfg)
    nights = [ev.night(dt.date(2019, 4, 14)), ev.night(dt.date(2027, 4, 14))]
    t = np.concatenate([n.sunset_utc.timestamp() + 600.0 * np.arange(6 * 12) for n in nights])
    series = {(crop.id, "air_temperature"): (t, np.linspace(8.0, 1.0, len(t)))}
    got = {evs[0].night.date for evs in pipeline.iter_replay(cfg, series) if evs}
    every = [ev.night(nights[0].date + dt.timedelta(days=k)) for k in range((nights[1].date - nights[0].date).days + 1)]
    want = {n.date for n in every
            if pipeline._any_reading([t], (n.sunset_utc - pipeline.LOOKBACK).timestamp(),
                                     n.sunrise_utc.timestamp() + pipeline.MORNING_WATCH_H * 3600.0)}
    assert got == want == {dt.date(2019, 4, 14), dt.date(2027, 4, 14)}


def _plain_to_dict(obj, drop_none=False):
    """The stored form as the codec gave it before its encoders were kept per type."""
    import dataclasses
    import enum
    import math

    if dataclasses.is_dataclass(obj) and not isinstance(obj, type):
        return {f.name: _plain_to_dict(getattr(obj, f.name), drop_none) for f in dataclasses.fields(obj)
                if not (drop_none and getattr(obj, f.name) is None)}
    if isinstance(obj, enum.Enum):
        return obj.value
    if isinstance(obj, dt.datetime):
        return obj.astimezone(dt.UTC).isoformat().replace("+00:00", "Z")
    if isinstance(obj, dt.date):
        return obj.isoformat()
    if isinstance(obj, float) and type(obj) is not bool:
        return obj if math.isfinite(obj) else None
    if isinstance(obj, (list, tuple)):
        return [_plain_to_dict(x, drop_none) for x in obj]
    if isinstance(obj, dict):
        return {str(k): _plain_to_dict(v, drop_none) for k, v in obj.items()}
    return obj


def test_stored_decisions_encode_as_the_plain_recursive_codec(demo_decisions):
    """Every decision and projection of the demo's three nights (plans, verdicts, enums, instants,
    NaN, tuples, dicts; the session's one walk-forward, tests/conftest.py) encodes exactly as a
    plain recursive encoder would, with and without the fields that are None."""
    import enum

    from frostwatch.advice.codec import to_dict

    decisions = demo_decisions
    assert len(decisions) > 1000
    for d in decisions[::7]:
        for drop in (True, False):
            assert to_dict(d, drop) == _plain_to_dict(d, drop)

    class Kind(enum.StrEnum):
        A = "a"

    odd = {"nan": float("nan"), "np": np.float64(2.5), "kind": Kind.A, "when": dt.date(2027, 4, 14), "none": None,
           "t": (1, "x", None, float("inf"))}
    assert to_dict(odd) == _plain_to_dict(odd) == {"nan": None, "np": 2.5, "kind": "a", "when": "2027-04-14",
                                                   "none": None, "t": [1, "x", None, None]}


# ---- issue 19 item 3, third part: what every block asks of the config, and the inversion's fits --


def test_config_lookups_are_the_scans_they_replace(demo_config):
    """The site-wide stations, the stations of a role and a block by id, kept on the config, are
    what a scan of its stations and blocks gives (in the config's order, the first of an id)."""
    from frostwatch.config import load_config

    cfg = load_config(str(demo_config))
    for role in {s.role for s in cfg.stations} | {"nothing"}:
        assert cfg.stations_with_role(role) == tuple(s for s in cfg.stations if s.role == role)
    assert cfg.stations_of(None) == [s for s in cfg.stations if s.block is None]
    assert [s.id for s in cfg.stations_of(None)] == ["shed-sky"]
    for b in cfg.blocks:
        assert cfg.block(b.id) is next(x for x in cfg.blocks if x.id == b.id)
    import pytest

    with pytest.raises(KeyError):
        cfg.block("nowhere")


def _tower_for_block_by_scan(cfg, block, states):
    """towers.tower_for_block as it was: every tower of the farm looked at for every block."""
    from frostwatch.towers import MAX_TOWER_DISTANCE_M, TowerChoice, _distance_m, block_position_m

    def ok(s):
        st_ = states.get(s.id)
        return st_ is not None and st_.healthy and "air_temperature" in st_.latest

    towers = [s for s in cfg.stations if s.role == "tower" and ok(s)]
    if not towers:
        return None
    own = [s for s in towers if s.block == block.id]
    if own:
        return TowerChoice(own[0].id, True, None, False)
    here = block_position_m(cfg, block.id)
    placed = [(d, s) for s in towers if (d := _distance_m(here, s.position_m)) is not None]
    placed = [(d, s) for d, s in placed if d <= MAX_TOWER_DISTANCE_M]
    if placed:
        d, s = min(placed, key=lambda x: x[0])
        return TowerChoice(s.id, False, d, s.block is None)
    site = [s for s in towers if s.block is None and (here is None or s.position_m is None)]
    return TowerChoice(site[0].id, False, _distance_m(here, site[0].position_m), True) if site else None


@given(st.lists(st.sampled_from(["healthy", "sick", "no air", "absent"]), min_size=7, max_size=7),
       st.booleans())
def test_the_blocks_own_tower_first_is_the_choice_of_every_tower(health, positions):
    """A block's own healthy tower looked at first gives the tower the whole farm's scan gives,
    for every block, whichever towers are healthy, with and without positions."""
    from frostwatch.config import config_from_dict
    from frostwatch.models import StationState
    from frostwatch.towers import tower_for_block

    site = {"name": "T", "latitude": 46.4, "longitude": -120.3, "timezone": "America/Los_Angeles"}
    blocks = [{"id": b, "crop": "apple", "stage": "full bloom", "protection": "wind_machine"} for b in ("a", "b", "c")]
    stations = [{"id": f"{b}-low", "block": b, "height_m": 1.5} for b in ("a", "b", "c")]
    towers = [("a-t1", "a"), ("a-t2", "a"), ("b-t", "b"), ("c-t", "c"), ("mast", None), ("mast2", None), ("far", None)]
    for sid, b in towers:
        stations.append({"id": sid, "height_m": 10.0, **({"block": b} if b else {})})
    if positions:
        for k, s in enumerate(stations):
            s.update(x_m=300.0 * k, y_m=0.0)
    cfg = config_from_dict({"site": site, "blocks": blocks, "stations": stations})
    states = {}
    for (sid, _), h in zip(towers, health, strict=True):
        if h != "absent":
            states[sid] = StationState(sid, 10.0, "tower", {} if h == "no air" else {"air_temperature": 3.0}, {},
                                       h != "sick", ())
    for b in cfg.blocks:
        assert tower_for_block(cfg, b, states) == _tower_for_block_by_scan(cfg, b, states)


@given(st.lists(st.floats(min_value=0.0, max_value=20000.0), max_size=60, unique=True),
       st.floats(min_value=-100.0, max_value=21000.0), st.floats(min_value=0.0, max_value=20000.0))
def test_the_readings_since_t0_as_a_slice_are_the_masks(times, t0, span):
    """inversion._since gives the readings with t0 <= t <= now of a sorted series: the same
    values, in the same order, as the mask over the whole series."""
    from frostwatch.forecast.inversion import _since

    t = 1.8e9 + np.sort(np.array(times, dtype=float))
    v = np.sin(t)
    t0_s, now_s = 1.8e9 + t0, 1.8e9 + t0 + span
    sel = (t >= t0_s) & (t <= now_s)
    got_t, got_v = _since((t, v), t0_s, now_s)
    assert got_t.tolist() == t[sel].tolist() and got_v.tolist() == v[sel].tolist()


def test_the_published_headline_and_action_are_the_whole_messages(demo_decisions):
    """The daemon publishes each block's headline and action (status.document.decision_json),
    made without the rest of the message: they are `advice.message.compose`'s, on every decision
    of the demo nights, in both display units."""
    from frostwatch.advice.message import compose
    from frostwatch.advice.render import Notice
    from frostwatch.alerts.levels import level_name
    from frostwatch.display import Display
    from frostwatch.status.document import Liveness, decision_json

    levels = set()
    for unit in ("degC", "degF"):
        d = Display(unit, "America/Los_Angeles")
        for x in demo_decisions[::3]:
            live = Liveness(True, x.as_of_utc, False, 0.0)
            doc = decision_json(x, x.block, x.as_of_utc, live, d, float("inf"), x.block)
            if not doc["monitored"]:
                continue
            msg = compose(x.block, level_name(x.level), x.step, x.plan, x.projection, d, Notice.STATE)
            assert (doc["headline"], doc["action"]) == (msg.headline, msg.action)
            levels.add(doc["level"])
    assert len(levels) >= 3  # the nights reach more than one level


@given(st.lists(st.floats(min_value=-8.0, max_value=8.0), min_size=1, max_size=60),
       st.lists(st.floats(min_value=-9.0, max_value=9.0), min_size=1, max_size=4))
def test_crossing_times_in_one_comparison_are_each_crossing_time(curve, thresholds):
    """curves.crossing_times gives each threshold's curves.crossing_time, to the bit (NaN in the
    curve included)."""
    from frostwatch.forecast.curves import crossing_time, crossing_times

    c = np.array(curve, dtype=float)
    c[::7] = np.where(np.arange(len(c))[::7] % 14 == 7, np.nan, c[::7])
    grid = 1.8e9 + 300.0 * np.arange(len(c), dtype=float)
    # repr: a NaN beside the crossing gives NaN both ways (and NaN != NaN)
    assert [repr(x) for x in crossing_times(grid, c, thresholds)] == [repr(crossing_time(grid, c, thr)) for thr in thresholds]


@given(st.lists(st.floats(min_value=0.0, max_value=20000.0), max_size=80, unique=True),
       st.floats(min_value=-1000.0, max_value=21000.0))
def test_dew_point_history_takes_the_windows_readings_as_a_mask_would(times, now):
    """drying.dew_point_history's slice of the last two hours holds the readings (now - 2 h, now]
    that a mask over the whole series selects, and their dew points are the mask's."""
    from frostwatch import drying
    from frostwatch.physics.humidity import dew_point_c_from_rel_humidity

    t = 1.8e9 + np.sort(np.array(times, dtype=float))
    rh = 60.0 + 30.0 * np.sin(t / 500.0)
    air = 4.0 + np.cos(t / 900.0)
    now_s = 1.8e9 + now
    series = {("s", "relative_humidity"): (t, rh), ("s", "air_temperature"): (t, air)}
    got = drying.dew_point_history(series, ["s"], now_s)
    sel = (t > now_s - drying.TREND_WINDOW_S) & (t <= now_s)
    if not sel.any():
        assert got is None
        return
    want = dew_point_c_from_rel_humidity(np.interp(t[sel], t, air), np.clip(rh[sel], 1.0, 100.0))
    assert got[0].tolist() == t[sel].tolist() and got[1].tolist() == np.asarray(want).tolist()


def test_air_temp_for_wet_bulb_by_rows_is_the_broadcast_function_to_the_bit():
    """physics.wet_bulb.air_temp_c_for_wet_bulb_rows (each target's own terms worked out once) gives
    air_temp_c_for_wet_bulb's values bit for bit: targets above and below 0 degC, dew points above
    the target, NaN and infinite inputs, pressures from a mountain to none."""
    from frostwatch.physics.wet_bulb import air_temp_c_for_wet_bulb, air_temp_c_for_wet_bulb_rows

    rng = np.random.default_rng(3)
    for _ in range(300):
        rows, n = int(rng.integers(1, 6)), int(rng.integers(0, 80))
        tw = rng.uniform(-8.0, 6.0, rows)
        tw[rng.random(rows) < 0.1] = 0.0
        td = rng.uniform(-30.0, 8.0, (rows, n))
        td[rng.random((rows, n)) < 0.03] = np.nan
        td[rng.random((rows, n)) < 0.01] = np.inf
        if rows > 1 and rng.random() < 0.2:
            tw[1] = np.nan
        p = float(rng.choice([1013.25, 850.0, 620.0, 0.0, -5.0, np.nan, float(rng.uniform(500, 1050))]))
        want = np.asarray(air_temp_c_for_wet_bulb(np.broadcast_to(tw[:, None], td.shape), td, p), dtype=float)
        got = air_temp_c_for_wet_bulb_rows(tw, td, p)
        assert got.shape == want.shape and got.tobytes() == want.tobytes()


def _wet_bulb_crossings_plain(grid_s, air_curves_c, dew_points_c, thresholds_c, pressure_hpa):
    """drying.wet_bulb_crossings_s as it was: the broadcast solve, one row at a time after."""
    from frostwatch.drying import _first_crossing_s
    from frostwatch.physics.humidity import air_temp_c_for_wet_bulb

    g = np.asarray(grid_s, dtype=float)
    air = np.asarray(air_curves_c, dtype=float)
    td = np.minimum(np.asarray(dew_points_c, dtype=float), air)
    thr = np.broadcast_to(np.asarray(thresholds_c, dtype=float)[:, None], air.shape)
    air_at = np.asarray(air_temp_c_for_wet_bulb(thr, td, pressure_hpa), dtype=float)
    air_at = np.where(np.isfinite(air_at), air_at, thr)
    return [_first_crossing_s(g, gap) for gap in air - air_at]


def test_wet_bulb_crossings_are_the_broadcast_solves_row_by_row():
    """drying.wet_bulb_crossings_s (targets' terms once, rows compared at once) crosses where the
    plain broadcast solve and a row-by-row search cross, to the bit."""
    from frostwatch import drying

    rng = np.random.default_rng(23)
    for _ in range(400):
        grid = 1.8e9 + 300.0 * np.arange(rng.integers(1, 120))
        air = [np.linspace(rng.uniform(-1, 8), rng.uniform(-8, 3), len(grid)) for _ in range(2)]
        td = [np.minimum(a, rng.uniform(-14, 2)) - np.linspace(0, rng.uniform(0, 3), len(grid)) for a in air]
        thr = [float(rng.uniform(-4, 1)), float(rng.uniform(-4, 1))]
        p = float(rng.uniform(600, 1040))
        args = (grid, air * 2, td * 2, [thr[0], thr[0], thr[1], thr[1]], p)
        assert drying.wet_bulb_crossings_s(*args) == _wet_bulb_crossings_plain(*args)


@given(st.lists(st.one_of(st.floats(allow_nan=True, allow_infinity=True),
                          st.floats(allow_nan=True).map(np.float64), st.integers(-5, 5),
                          st.floats(allow_nan=False, allow_infinity=False, width=32).map(np.float32)), min_size=1, max_size=5))
def test_physics_inputs_of_floats_are_the_broadcast_ones(values):
    """physics._broadcast._inputs gives floats (and numpy float64) 0-d float arrays without
    broadcasting: the same dtype, shape, values and independence as the broadcast path."""
    from frostwatch.physics._broadcast import _inputs

    got, scalar = _inputs(*values)
    want = [np.array(a, dtype=float) for a in np.broadcast_arrays(*(np.asarray(v, dtype=float) for v in values))]
    assert scalar is True
    assert [(a.dtype, a.shape, a.tobytes(), a.flags.writeable) for a in got] == \
        [(a.dtype, a.shape, a.tobytes(), a.flags.writeable) for a in want]
    got[0][...] = 7.0  # each its own array, as the copies below are
    assert all(a is not got[0] and (len(got) == 1 or a.base is not got[0]) for a in got[1:])


def test_newton_inversion_with_the_arrays_own_methods_is_np_clip_and_np_all():
    """saturation._invert_ln_curve (the arrays' clip and all) gives what the loop with np.clip and
    np.all gave, bit for bit, for dew and frost points of arrays and of single values."""
    from frostwatch.physics import saturation as sat
    from frostwatch.physics.dew_frost_point import _dew_point_c

    def plain(ln_target_pa, first_guess_c, ln_curve, dln_curve, lo_c, hi_c):
        temp_k = np.clip(first_guess_c, lo_c, hi_c) + sat.ZERO_CELSIUS_K
        for _ in range(sat._NEWTON_ITERATIONS):
            step = (ln_curve(temp_k) - ln_target_pa) / dln_curve(temp_k)
            step = np.where(np.isfinite(step), step, 0.0)
            temp_k = np.clip(temp_k - step, lo_c + sat.ZERO_CELSIUS_K - 1.0, hi_c + sat.ZERO_CELSIUS_K + 1.0)
            if np.all(np.abs(step) < sat._NEWTON_TOLERANCE_K):
                break
        temp_c = temp_k - sat.ZERO_CELSIUS_K
        ok = np.isfinite(ln_target_pa) & (temp_c >= lo_c - 1e-9) & (temp_c <= hi_c + 1e-9)
        return np.where(ok, np.clip(temp_c, lo_c, hi_c), np.nan)

    import frostwatch.physics.dew_frost_point as dfp

    rng = np.random.default_rng(5)
    for shape in [(), (1,), (7,), (120,), (3, 40)]:
        for _ in range(40):
            e = np.asarray(rng.uniform(0.05, 60.0, shape))
            if e.ndim:
                e[rng.random(shape) < 0.05] = np.nan
            got = np.asarray(_dew_point_c(e))
            real, dfp._invert_ln_curve = dfp._invert_ln_curve, plain  # the dew point solved the old way
            try:
                want = np.asarray(_dew_point_c(e))
            finally:
                dfp._invert_ln_curve = real
            assert got.tobytes() == want.tobytes()


def test_the_published_inputs_ages_and_local_times_are_worked_out_afresh_per_instant(demo_decisions):
    """status.document's input ages (kept per evaluation instant) and Display.time (kept per
    instant and zone) are the plain expressions: for decisions read at several instants in turn,
    back again, and across a DST change in two zones, and a page's thread asking at another
    instant between two blocks of an evaluation."""
    import datetime as dt
    from zoneinfo import ZoneInfo

    from frostwatch.display import Display
    from frostwatch.status.document import Liveness, decision_json

    d = Display("degC", "America/Los_Angeles")
    some = [x for x in demo_decisions[::7] if x.inputs_utc][:40]
    assert some
    for x in some:
        for late_s in (0.0, 61.25, 3599.96, 0.0, -12.5):
            now = x.as_of_utc + dt.timedelta(seconds=late_s)
            doc = decision_json(x, x.block, now, Liveness(True, now, False, 0.0), d, float("inf"), x.block)
            want = {k: round((now - t).total_seconds(), 1) for k, t in x.inputs_utc.items()}
            assert {k: v["age_s"] for k, v in doc["inputs"].items()} == want
            other = now + dt.timedelta(seconds=17.0)  # a page asks meanwhile at another instant
            decision_json(x, x.block, other, Liveness(True, other, False, 0.0), d, float("inf"), x.block)
    spring = dt.datetime(2027, 3, 14, 9, 30, tzinfo=dt.UTC)  # 01:30 PST, an hour before the change
    for zone in ("America/Los_Angeles", "Europe/Berlin", "UTC"):
        dz = Display("degC", zone)
        for k in range(0, 12 * 3600, 1234):
            t = spring + dt.timedelta(seconds=k)
            assert dz.time(t) == t.astimezone(ZoneInfo(zone)).strftime("%H:%M")
    assert d.time(None) == Display("degC", "UTC").time(None)


@given(st.lists(st.floats(min_value=0.0, max_value=8.0), max_size=80), st.floats(min_value=-5.0, max_value=5.0),
       st.sampled_from([0.0, 0.05, 0.05 + 1e-12, 0.049999999]))
def test_the_inversion_fit_on_a_sorted_series_is_the_masked_fit(elapsed, t0_c, extra):
    """inversion.sqrt_b_fit_sorted (the readings after the minimum elapsed time as a slice) gives
    sqrt_b_fit's value (a mask over the same readings) to the bit, elapsed times at the minimum
    itself included."""
    from frostwatch.forecast.inversion import sqrt_b_fit, sqrt_b_fit_sorted

    e = np.sort(np.array(elapsed + [extra], dtype=float))
    temps = 5.0 - 2.0 * np.sqrt(e) + np.cos(e * 7.0)
    assert sqrt_b_fit_sorted(e, temps, t0_c) == sqrt_b_fit(e, temps, t0_c)


def test_the_nowcast_sums_recent_slope_is_the_np_mean_one():
    """nowcast._sums (the recent slope's means as np.mean's sum over its count) gives the slope
    with ndarray.mean, to the bit, on readings every minute and at odd intervals."""
    from frostwatch.forecast import nowcast

    rng = np.random.default_rng(8)
    for _ in range(300):
        n = int(rng.integers(3, 400))
        t = 1.8e9 + np.cumsum(rng.choice([60.0, 61.0, 300.0, 3.5], n))
        v = np.round(6.0 - 0.4 * np.sqrt((t - t[0]) / 3600.0) + rng.normal(0, 0.05, n), 2)
        t0_s, t0_c = float(t[0]) - 100.0, float(v[0])
        j = n - int(rng.integers(0, 3))
        i2 = int(np.searchsorted(t, t[j - 1] - nowcast.RECENT_SLOPE_S, side="right"))
        got = nowcast._sums(t, v, t0_s, t0_c, j, i2)
        if got is None:
            continue
        slope = 0.0
        if j - i2 >= 2:
            tt = (t[i2:j] - t0_s) / 3600.0
            dt_ = tt - tt.mean()
            den = float(np.dot(dt_, dt_))
            if den > 1e-12:
                slope = float(np.dot(dt_, v[i2:j] - v[i2:j].mean()) / den)
        assert got[2] == slope


def test_the_shared_night_grid_is_each_blocks_own():
    """curves.night_grid (one grid per instant, shared by every block of an evaluation) is the
    grid, square-root clock and curve instants each block made itself: instants in turn and back
    again, now before and after sunrise, off the whole second, sunrise on the grid and off it,
    another t0; the shared arrays cannot be written."""
    from frostwatch.forecast.curves import grid_utc, night_grid

    rng = np.random.default_rng(4)
    sunrise = 1.8e9 + 40_000.0
    cases = [(sunrise - 3600.0 * k - off, sunrise + sh, sunrise - 30_000.0 + t0)
             for k in (0, 1, 5, 9) for off in (0.0, 0.4, 150.0) for sh in (0.0, 300.0, -12.5) for t0 in (0.0, 7.0)]
    cases += [(sunrise + 60.0, sunrise, sunrise - 30_000.0), (sunrise, sunrise, sunrise)]
    for now, rise, t0 in cases + cases[::-1] + [cases[int(i)] for i in rng.integers(0, len(cases), 40)]:
        grid, e_grid, instants = night_grid(now, rise, t0, 300.0)
        want = np.arange(now, max(now, rise) + 1.0, 300.0)
        if want[-1] < rise:
            want = np.concatenate((want, (rise,)))
        assert grid.tobytes() == want.tobytes()
        assert e_grid.tobytes() == np.sqrt(np.maximum(0.0, (want - t0) / 3600.0)).tobytes()
        for every in (1, 2, 3):
            assert instants(every) == grid_utc(want, every, 300.0)
        with pytest.raises(ValueError):
            grid[0] = 0.0


def test_a_readings_instant_kept_by_its_time_is_the_rounded_one():
    """monitoring._utc (kept by the time as given) is the instant of the time rounded to the
    millisecond, for numpy and Python floats, both zeros, fractions of a millisecond either side of
    a half, asked again after others; NaN still raises."""
    import datetime as dt

    from frostwatch import monitoring

    rng = np.random.default_rng(2)
    times = [0.0, -0.0, 1.8e9, 1.8e9 + 0.0004999, 1.8e9 + 0.0005, 1.8e9 + 0.0015, 1234.5675, -86400.25]
    times += (1.8e9 + rng.uniform(0, 86400, 300)).tolist() + (1.8e9 + 60.0 * rng.integers(0, 1440, 300)).tolist()
    for x in times + times[::-1]:
        for v in (x, np.float64(x)):
            assert monitoring._utc(v) == dt.datetime.fromtimestamp(round(float(v), 3), tz=dt.UTC)
    with pytest.raises(ValueError):
        monitoring._utc(float("nan"))
