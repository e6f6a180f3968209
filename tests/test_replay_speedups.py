"""The season replay's speed-ups (issue 19, item 1) change no result, each checked against the
plain way: the energy-balance path reused across night lengths (an evaluation before dusk asks
for the clear-night prior with the same inputs and a night two minutes shorter each time) is the
plain loop's, bit for bit; the alert rules' state replaced field by field is dataclasses.replace's.
(The stored decision's encoding is checked against a plain recursive encoder in
tests/test_evaluation_speedups.py; the whole replay against the daemon's path in
tests/test_replay_scale.py.)"""

from __future__ import annotations

import dataclasses
import datetime as dt
import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from frostwatch.constants import SECONDS_PER_HOUR_S
from frostwatch.physics import night_energy_balance as neb
from frostwatch.physics.clear_night_prior import clear_night_minimum_prior_c
from frostwatch.physics.sqrt_time_cooling import GROUND_ADMITTANCE_DEFAULT_J_M2_K_S05, SQRT_PI


def _plain_path_c(start_c, dew_c, hours, step_s, wind, cloud, p_hpa, aloft_c=None, onset_h=0.0):
    """The energy-balance loop as it was before the kernel was kept (frostwatch 0.2, issue 19)."""
    n_steps = math.ceil(hours * SECONDS_PER_HOUR_S / step_s - 1e-9)
    elapsed_s = np.minimum(np.arange(n_steps + 1) * float(step_s), hours * SECONDS_PER_HOUR_S)
    temps = np.full(n_steps + 1, math.nan)
    aloft_c = start_c if aloft_c is None else aloft_c
    vp0 = neb._start_vp_hpa(start_c, dew_c)
    if not math.isfinite(vp0):
        return temps
    top_i = math.ceil(max(start_c, aloft_c) / neb.PROJECTION_GRID_STEP_K) + 1
    bottom_i = math.ceil(max(neb.AIR_TEMP_MIN_C, start_c - neb.PROJECTION_GRID_SPAN_K) / neb.PROJECTION_GRID_STEP_K)
    grid_top_c = top_i * neb.PROJECTION_GRID_STEP_K
    grid_c = np.arange(top_i, bottom_i - 1, -1) * neb.PROJECTION_GRID_STEP_K
    grid_vp = np.minimum(vp0, neb._saturation_vp_hpa(grid_c))
    loss = -np.asarray(neb.net_longwave_w_m2(grid_c, grid_vp, cloud, grid_c, neb.SURFACE_EMISSIVITY_DEFAULT_FRAC,
                                             "brutsaert_1975", "jacobs_1978"), dtype=float)
    loss_list = loss.tolist()
    last = len(loss_list) - 1

    def loss_at(temp_c):
        x = (grid_top_c - temp_c) / neb.PROJECTION_GRID_STEP_K
        if not (0.0 <= x <= last):
            return math.nan
        i = min(int(x), last - 1) if last > 0 else 0
        f = x - i
        return loss_list[i] * (1.0 - f) + loss_list[min(i + 1, last)] * f

    rho_cp = p_hpa * 100.0 / (neb.R_DRY_AIR_J_KG_K * (aloft_c + neb.ZERO_CELSIUS_K)) * neb.CP_DRY_AIR_J_KG_K
    k_neutral = rho_cp * neb.NEUTRAL_TRANSFER_COEFF_FRAC * wind
    ri_per_k = (neb.GRAVITY_M_S2 * neb.ANEMOMETER_HEIGHT_M / ((aloft_c + neb.ZERO_CELSIUS_K) * wind**2)
                if wind > 1e-6 else 0.0)
    mu = GROUND_ADMITTANCE_DEFAULT_J_M2_K_S05 + neb.AIR_ADMITTANCE_EFFECTIVE_J_M2_K_S05
    onset_s = onset_h * SECONDS_PER_HOUR_S
    temp = start_c
    temps[0] = temp
    root_prev = math.sqrt(onset_s)
    for n in range(1, n_steps + 1):
        root = math.sqrt(onset_s + elapsed_s[n])
        ds = 2.0 / SQRT_PI * (root - root_prev)
        root_prev = root
        lq = loss_at(temp)
        if not math.isfinite(lq):
            temp = math.nan
        else:
            ri = ri_per_k * max(0.0, aloft_c - temp)
            k_mix = k_neutral / (1.0 + 3.0 * neb.LOUIS_B * ri * math.sqrt(1.0 + neb.LOUIS_D * ri))
            a = ds / mu
            temp = (temp - a * lq + a * k_mix * aloft_c) / (1.0 + a * k_mix)
        temps[n] = temp
    return temps


def _kernel_path_c(start_c, dew_c, hours, step_s, wind, cloud, p_hpa, aloft_c=None, onset_h=0.0):
    _, temps = neb._project_path_c(start_c, dew_c, hours, step_s, wind, cloud, p_hpa,
                                   GROUND_ADMITTANCE_DEFAULT_J_M2_K_S05, neb.AIR_ADMITTANCE_EFFECTIVE_J_M2_K_S05,
                                   aloft_c, onset_h, neb.SURFACE_EMISSIVITY_DEFAULT_FRAC, "brutsaert_1975",
                                   "jacobs_1978")
    return temps


def _same(a: np.ndarray, b: np.ndarray) -> bool:
    return a.shape == b.shape and a.tobytes() == b.tobytes()  # bit for bit, NaN and the sign of zero included


@settings(max_examples=60, deadline=None)
@given(start=st.floats(-10.0, 25.0), depression=st.floats(0.0, 15.0), wind=st.floats(0.0, 6.0),
       cloud=st.floats(0.0, 1.0), p_hpa=st.floats(850.0, 1030.0), onset=st.sampled_from([0.0, 2.0]),
       aloft=st.sampled_from([None, 3.0]),
       hours=st.lists(st.floats(0.0001, 16.0), min_size=1, max_size=8))
def test_the_kept_path_is_the_plain_loop_for_any_night_length_in_any_order(start, depression, wind, cloud, p_hpa,
                                                                           onset, aloft, hours):
    for h in hours + [max(hours) + 1.0, min(hours) / 2.0]:  # longer and shorter than any asked before
        for step_s in (300.0, 120.0):
            want = _plain_path_c(start, start - depression, h, step_s, wind, cloud, p_hpa, aloft, onset)
            got = _kernel_path_c(start, start - depression, h, step_s, wind, cloud, p_hpa, aloft, onset)
            assert _same(got, want), (h, step_s)


def test_the_prior_before_dusk_is_the_plain_loops_minimum_as_the_night_shortens():
    """An evaluation every 2 min before dusk: same inputs, a night 2 min shorter each time."""
    for start, dew, wind, cloud in ((8.0, 1.0, 0.5, 0.0), (2.5, -4.0, 1.8, 0.2), (-0.0, -6.0, 0.0, 0.0),
                                    (0.0, -6.0, 0.0, 0.0), (15.0, 14.9, 3.0, 0.9)):
        for k in range(90):
            h = 13.0 - k * 120.0 / 3600.0
            plain = _plain_path_c(start, dew, h, 300.0, wind, cloud, 980.0)
            want = math.nan if np.isnan(plain).any() else float(plain.min())
            got = float(clear_night_minimum_prior_c(start, dew, h, wind_speed_m_s=wind, cloud_frac=cloud, pressure_hpa=980.0))
            assert (math.isnan(got) and math.isnan(want)) or (got == want and math.copysign(1, got) == math.copysign(1, want))


def test_out_of_domain_inputs_stay_nan_and_the_kernel_cache_stays_bounded():
    assert np.isnan(_kernel_path_c(5.0, 9.0, 10.0, 300.0, 1.0, 0.0, 1000.0)).all()  # dew point above the air
    assert np.isnan(_kernel_path_c(5.0, 0.0, 10.0, 300.0, 1.0, 1.5, 1000.0)).all()  # cloud fraction over 1
    for k in range(neb.KERNEL_CACHE_SIZE * 3):
        _kernel_path_c(5.0 + k * 0.01, 0.0, 10.0, 300.0, 1.0, 0.0, 1000.0)
    assert len(neb._KERNELS) <= neb.KERNEL_CACHE_SIZE


def test_a_kernel_made_while_a_function_was_swapped_is_not_found_after(monkeypatch):
    plain = _kernel_path_c(4.0, -2.0, 9.0, 300.0, 0.5, 0.0, 990.0)
    with monkeypatch.context() as m:
        m.setattr(neb, "net_longwave_w_m2", lambda t, *a, **k: np.full(np.shape(t), -80.0))
        swapped = _kernel_path_c(4.0, -2.0, 9.0, 300.0, 0.5, 0.0, 990.0)
    assert not _same(swapped, plain)
    assert _same(_kernel_path_c(4.0, -2.0, 9.0, 300.0, 0.5, 0.0, 990.0), plain)


def test_the_rules_state_replaced_is_dataclasses_replace():
    from frostwatch.alerts.rules import BlockAlertState, _replaced

    t = dt.datetime(2027, 4, 14, 3, 0, tzinfo=dt.UTC)
    base = BlockAlertState(night="2027-04-13", level="ready", sequence=2, announced_crossing_utc=t)
    for changes in ({}, {"sequence": 3, "last_key": "east/2027-04-13/003-ready"}, {"announced_crossing_utc": None},
                    {"night": "2027-04-14", "ran_tonight": True, "unmonitored_since_utc": t}):
        got, want = _replaced(base, changes), dataclasses.replace(base, **changes)
        assert got == want and got is not base and repr(got) == repr(want) and vars(got) == vars(want)
        assert list(vars(got)) == list(vars(want))  # the same field order (pickles alike)
        with pytest.raises(dataclasses.FrozenInstanceError):
            got.level = "rest"
    with pytest.raises(TypeError, match="no field 'levle'"):
        _replaced(base, {"levle": "rest"})


def _demo_series(demo_config, demo_logs, every_s: float = 0.0):
    from frostwatch.commands.logs import _series_from_readings
    from frostwatch.config import load_config
    from frostwatch.ingest.csvlog import read_sensor_log

    cfg = load_config(str(demo_config))
    readings = [r for log in demo_logs for r in read_sensor_log(log, {s.id for s in cfg.stations})[0]]
    series = _series_from_readings(readings)
    if every_s:  # a sparser log: many evaluations see the same window
        series = {k: (t[keep], v[keep]) for k, (t, v) in series.items() if (keep := (t % every_s) == 0).any()}
    return cfg, series


@pytest.mark.parametrize("every_s", [0.0, 3600.0])
def test_the_replays_window_memo_gives_what_each_evaluation_works_out_afresh(demo_config, demo_logs, every_s):
    """A replay keeps what a readings window alone decides (the dusk forecast, the inputs' times)
    while the window is the same (`pipeline.WindowMemo`); every projection and decision of the
    demo's nights, at their own rate and thinned to hourly readings, is what an evaluator that
    works each out afresh (the daemon's) gives."""
    from frostwatch import pipeline

    cfg, series = _demo_series(demo_config, demo_logs, every_s)
    first = min(float(t[0]) for t, _ in series.values())
    last = max(float(t[-1]) for t, _ in series.values())
    kept, fresh = pipeline.Evaluator(cfg, fixed_series=True), pipeline.Evaluator(cfg)
    hits = n = 0
    for night in pipeline.covered_nights(cfg, series):
        for now in pipeline.evaluation_times(night, cfg.forecast.evaluation_interval_min, first, last):
            had = dict(kept.memo.values)
            a, b = kept.evaluate(now, series), fresh.evaluate(now, series)
            hits += bool(had) and kept.memo.values.keys() >= had.keys() and any(kept.memo.values[k] is had[k] for k in had)
            n += 1
            assert a.projections == b.projections and a.decisions == b.decisions and a.alerts == b.alerts, now
        for ev in (kept, fresh):
            ev.learn_night(night, series)
    assert n > 1000 and (hits > n // 2 if every_s else True)


def test_the_written_out_encoders_give_the_plain_codecs_text(demo_config, demo_logs):
    """The codec's encoders written out per dataclass give the same JSON text, key order
    included, as the plain field loop, for every decision of the demo's nights."""
    import json

    from frostwatch import pipeline
    from frostwatch.advice import codec
    from frostwatch.decision import Decision

    cfg, series = _demo_series(demo_config, demo_logs[:1])  # the frost night: every level, every method
    decisions = [d for ev in pipeline.run_replay(cfg, series) for d in ev.decisions]
    looped: dict = {}

    def plain(obj, drop_none):
        cls = type(obj)
        names = codec._field_names(cls)
        if names is None:
            return codec.to_dict(obj, drop_none) if cls not in (list, tuple, dict) else (
                [plain(x, drop_none) for x in obj] if cls is not dict else {k: plain(v, drop_none) for k, v in obj.items()})
        enc = looped.setdefault(cls, codec._looped_encoder(names))
        out = enc(obj, drop_none)
        return {k: plain(getattr(obj, k), drop_none) if codec._field_names(type(getattr(obj, k))) or
                type(getattr(obj, k)) in (list, tuple, dict) else v for k, v in out.items()}

    assert codec._field_names(Decision) and len(decisions) > 1000
    for d in decisions[::3]:
        for drop in (True, False):
            assert json.dumps(codec.to_dict(d, drop)) == json.dumps(plain(d, drop))


def test_stations_of_a_block_are_worked_out_once_and_handed_out_as_new_lists(demo_config):
    """`Config.stations_of` keeps each answer (looked up for every block at every evaluation) and
    gives the comprehension's list, a new one each time (a caller may extend it)."""
    from frostwatch.config import load_config

    cfg = load_config(str(demo_config))
    for b in [b.id for b in cfg.blocks] + [None, "nowhere"]:
        for role in (None, "crop", "tower", "sky"):
            want = [s for s in cfg.stations if s.block == b and (role is None or s.role == role)]
            got = cfg.stations_of(b, role)
            assert got == want and got is not cfg.stations_of(b, role)
            got.append("x")
            assert cfg.stations_of(b, role) == want
    assert dataclasses.replace(cfg).stations_of(cfg.blocks[0].id) == cfg.stations_of(cfg.blocks[0].id)


@pytest.mark.parametrize("curve", [[5.0, 4.0, 3.0, 2.0], [1.0, 0.5], [3.0, 3.0], [np.nan, 1.0, -1.0], [2.0]])
def test_a_crossing_is_the_first_point_at_or_below_the_line(curve):
    """`crossing_time` finds the first grid point at or below the threshold (interpolated from
    the point before), as the search over every point below it did."""
    from frostwatch.forecast.curves import crossing_time

    grid = np.arange(len(curve)) * 300.0
    c = np.array(curve)
    for thr in (6.0, 4.5, 3.0, 1.0, -5.0):
        below = np.nonzero(c <= thr)[0]
        if len(below) == 0:
            want = None
        elif below[0] == 0:
            want = float(grid[0])
        else:
            i = int(below[0])
            f = (c[i - 1] - thr) / (c[i - 1] - c[i]) if c[i - 1] != c[i] else 1.0
            want = float(grid[i - 1] + f * (grid[i] - grid[i - 1]))
        got = crossing_time(grid, c, thr)
        assert got == want or (got is not None and want is not None and math.isnan(got) and math.isnan(want))


def test_a_replay_collects_cycles_less_often_and_puts_the_threshold_back(demo_config, demo_logs, tmp_path):
    """During a replay the cycle collector's first threshold is REPLAY_GC_THRESHOLD (a collection
    every 700 allocations took about 6 % of its time); after it, and after a replay that fails,
    it is what it was."""
    import gc

    from frostwatch import pipeline, replay
    from frostwatch.store import Store

    cfg, series = _demo_series(demo_config, demo_logs[:1])
    start = min(float(t[0]) for t, _ in series.values())
    series = {k: (t[keep], v[keep]) for k, (t, v) in series.items() if (keep := t < start + 3 * 3600.0).any()}
    before = gc.get_threshold()
    seen = []
    real = pipeline.iter_replay_nights

    def spy(*a, **k):
        seen.append(gc.get_threshold())
        yield from real(*a, **k)

    with Store.open(cfg.storage.path) as store:
        pipeline.iter_replay_nights = spy
        try:
            replay.replay_series(cfg, store, series, jobs=1)
        finally:
            pipeline.iter_replay_nights = real
        assert seen == [(replay.REPLAY_GC_THRESHOLD, *before[1:])] and gc.get_threshold() == before
        with pytest.raises(ValueError):
            replay.replay_series(cfg, store, {"not": "a series"}, jobs=1)
        assert gc.get_threshold() == before


def _plain_json(obj, drop_none: bool) -> str:
    import json

    from frostwatch.advice import codec

    return json.dumps(codec.to_dict(obj, drop_none), separators=(",", ":"), allow_nan=False)


def test_the_decision_written_straight_to_json_is_json_dumps_of_its_dict(demo_decisions):
    """`codec.to_json` (every stored decision's text) is json.dumps of `to_dict`, byte for byte,
    for every decision of the demo's nights (the session's one walk-forward, tests/conftest.py),
    with and without the None fields."""
    from frostwatch.advice import codec
    from frostwatch.decision import decision_to_doc, decision_to_json

    decisions = demo_decisions
    assert len(decisions) > 1000
    for d in decisions:
        assert decision_to_json(d) == _plain_json(d, True)
    for d in decisions[::7]:
        assert codec.to_json(d, False) == _plain_json(d, False)
    assert decision_to_json(decisions[0]) == _plain_json(decision_to_doc(decisions[0]), False)


def test_values_the_decisions_rarely_hold_are_written_as_json_dumps_writes_them():
    """Non-finite floats (null), numpy floats, enums inside lists, dates, text that needs
    escaping, keys that are not text, a curve whose sum overflows: the same text as json.dumps."""
    from enum import StrEnum

    from frostwatch.advice import codec
    from frostwatch.advice.plan import Caution, Step

    class Word(StrEnum):
        A = "é\"quoted\"\n"

    @dataclasses.dataclass(frozen=True)
    class Odd:
        a: float = math.nan
        b: object = None
        c: tuple = ()
        d: dict = dataclasses.field(default_factory=dict)
        e: object = None

    t = dt.datetime(2027, 4, 14, 3, 0, 30, 250000, tzinfo=dt.timezone(dt.timedelta(hours=-5)))
    cases = [
        Odd(), Odd(a=math.inf, b=np.float64(2.5), c=(1.0, math.nan, 3.0)), Odd(c=(1e308, 1e308)),
        Odd(c=(Caution.LOCAL_RULES, Step.WATCH, Word.A), d={1: t, "x": None, "y": math.nan, "z": [t, dt.date(2027, 4, 1)]}),
        Odd(a=-0.0, b=True, c=(True, 1, None, "ü"), e=dt.date(2027, 4, 14)), Odd(b=np.float64(math.nan), c=(t, t)),
        Odd(c=(Odd(),), d={"n": Odd(a=1.5)}, e=Word.A), Odd(c=[], d={}, e=(np.float64(1.0), 2.0)), Odd(b=2**70, e=False),
    ]
    for obj in cases:
        for drop in (True, False):
            assert codec.to_json(obj, drop) == _plain_json(obj, drop), obj


@settings(max_examples=200, deadline=None)
@given(start=st.floats(-45.0, 45.0), depression=st.floats(-2.0, 30.0), hours=st.floats(-1.0, 26.0),
       wind=st.floats(-0.5, 8.0), cloud=st.floats(-0.1, 1.1), p_hpa=st.floats(500.0, 1100.0))
def test_the_prior_of_one_night_from_floats_is_the_array_paths(start, depression, hours, wind, cloud, p_hpa):
    """The prior of one night given as floats takes the kept kernel without arrays; the same
    inputs as numpy scalars go through the arrays: the same float, bit for bit (NaN alike)."""
    args = (start, start - depression, hours, wind, cloud, p_hpa)
    got = clear_night_minimum_prior_c(*args)
    want = float(clear_night_minimum_prior_c(*(np.float64(a) for a in args)))
    assert type(got) is float
    assert (math.isnan(got) and math.isnan(want)) or (got == want and math.copysign(1, got) == math.copysign(1, want))


@pytest.mark.parametrize("now_s", [9.0e8, 9.0e8 + 120.0, 1.7e9 + 0.25, 1.7e9 + 0.5, 1.7e9 + 1.5, 1e9 - 1e-6])
def test_the_curves_instants_added_as_timedeltas_are_the_instants_converted_one_by_one(now_s):
    """`curves.grid_utc` (whole seconds on, each instant its second's cached datetime) gives what converting
    each instant of the grid does, sunrise appended or not, for every thinning step."""
    from frostwatch.forecast.curves import grid_utc, utc_seconds

    for hours in (0.0, 0.01, 0.9, 5.0, 11.73, 14.0):
        sunrise_s = now_s + hours * 3600.0
        grid_s = np.arange(now_s, max(now_s, sunrise_s) + 1.0, 300.0)
        if grid_s[-1] < sunrise_s:
            grid_s = np.concatenate((grid_s, (sunrise_s,)))
        for step in (1, 2, 3, max(1, len(grid_s) // 48)):
            got, want = grid_utc(grid_s, step, 300.0), utc_seconds(grid_s[::step].tolist())
            assert got == want and all(g.tzinfo is w.tzinfo for g, w in zip(got, want, strict=True))



@settings(max_examples=200, deadline=None)
@given(start_s=st.floats(8e8, 2e9), gaps_s=st.lists(st.sampled_from([0.000001, 1.0, 299.999999, 300.0, 900.0, 1799.0, 1800.0,
                                                                       1800.000001, 2400.0, 3600.0]), max_size=60),
       offset_h=st.sampled_from([0, -5, 2]))
def test_the_stored_curve_thinned_by_due_instants_keeps_the_points_the_timedelta_loop_kept(start_s, gaps_s, offset_h):
    """`decision.summarise_projection` keeps the first point at or past the last kept one + 30
    min (no timedelta made per point): the same points as keeping each whose distance from the
    last kept one is at least 30 min, for gaps around the step, microseconds either side, and
    instants in a zone other than UTC."""
    from frostwatch.decision import CURVE_STEP_S, summarise_projection
    from frostwatch.models import Projection

    tz = dt.timezone(dt.timedelta(hours=offset_h))
    times = [dt.datetime.fromtimestamp(start_s, tz)]
    for g in gaps_s:
        times.append(times[-1] + dt.timedelta(seconds=g))
    temps = [float(i) / 7.0 for i in range(len(times))]
    p = Projection(time_utc=times[0], block="b", sunset_utc=times[0], sunrise_utc=times[-1], station="s",
                   air_temp_c=1.0, dew_point_c=None, wet_bulb_c=None, predicted_min_c=0.5, predicted_min_at_utc=None,
                   band_c=0.3, crossings_utc={}, inversion_c=None, projected_inversion_c=None, inversion_class=None,
                   wind_speed_m_s=None, regime="radiation", method="m", notes=(), curve_time_utc=tuple(times),
                   curve_air_temp_c=tuple(temps))
    kept, last = [], None
    for t, c in zip(times, temps, strict=True):
        if last is None or t - last >= dt.timedelta(seconds=CURVE_STEP_S):
            kept.append((t, round(c, 2)))
            last = t
    if times and kept[-1][0] != times[-1]:
        kept.append((times[-1], round(temps[-1], 2)))
    s = summarise_projection(p)
    assert list(zip(s.curve_time_utc, s.curve_air_temp_c, strict=True)) == kept
