"""A replay shared among processes (frostwatch.replay_parallel) stores and returns exactly what one
process does: on the demo nights, cut into runs of one night each so that every process both
evaluates nights and learns the ones it skips, the projections, decisions (their compressed
documents byte for byte) and alerts are the same rows in the same order, and the output (alerts,
projections, decision changes, nights) is equal. tests/test_replay_scale.py checks the one-process
replay against the daemon's own path on the same nights."""

from __future__ import annotations

import datetime as dt
from pathlib import Path

import pytest

from frostwatch import pipeline, replay, replay_parallel
from frostwatch.config import load_config
from frostwatch.display import Display
from frostwatch.ingest.csvlog import read_sensor_log
from frostwatch.store import Store

SAMPLES = Path(__file__).resolve().parent.parent / "sample_sensor_logs"
NIGHTS = ("2027-04-14-radiation-frost.csv", "2027-04-15-windy-advective.csv", "2027-04-16-cloudy-safe.csv")
TABLES = {
    "projections": "SELECT * FROM projections ORDER BY rowid",
    "decisions": "SELECT * FROM decisions ORDER BY rowid",
    "alerts": "SELECT key, time_utc_ms, block, level, rank, advice, message, resolves, short FROM alerts ORDER BY id",
}


def _series(cfg):
    from frostwatch.commands.logs import _series_from_readings

    readings = [r for n in NIGHTS for r in read_sensor_log(SAMPLES / n, {s.id for s in cfg.stations})[0]]
    return _series_from_readings(readings)


def _run(tmp_path: Path, name: str, demo_config: Path, jobs: int):
    text = demo_config.read_text(encoding="utf-8")
    d = tmp_path / name
    d.mkdir()
    (d / "site.toml").write_text(text, encoding="utf-8")
    cfg = load_config(d / "site.toml")
    series = _series(cfg)
    seen = []
    with Store.open(cfg.storage.path) as store:
        res = replay.replay_series(cfg, store, series, progress=lambda k, n: seen.append((k, n)), keep_projections=True,
                                   display=Display(cfg.site.display_unit, cfg.site.tz), jobs=jobs)
        with store.lock:
            rows = {t: store.conn.execute(sql).fetchall() for t, sql in TABLES.items()}
    return res, rows, seen


@pytest.fixture(scope="module")
def one_process(tmp_path_factory):
    """The one-process replay of the demo nights, the reference of every comparison below: run
    once for the module (it is deterministic; each test compares a run of its own against it)."""
    from importlib import resources

    folder = tmp_path_factory.mktemp("one-process")
    config = folder / "demo-farm.toml"
    config.write_text(resources.files("frostwatch.sample_logs").joinpath("demo-farm.toml").read_text(encoding="utf-8"),
                      encoding="utf-8")
    return _run(folder, "one", config, jobs=1)


@pytest.fixture
def one_night_runs(monkeypatch):
    monkeypatch.setattr(replay, "MIN_NIGHTS_PER_JOB", 1)
    monkeypatch.setattr(replay, "CHUNK_NIGHTS", 1)


def test_runs_of_one_night_each_are_planned_on_the_demo_nights(demo_config):
    cfg = load_config(demo_config)
    series = _series(cfg)
    assert len(pipeline.covered_nights(cfg, series)) == 3
    assert replay_parallel.plan_chunks(cfg, series, 2, 1, 1) == [(0, 1), (1, 2), (2, 3)]
    assert replay_parallel.plan_chunks(cfg, series, 2, 2, 8) is None  # too few nights: one process


def test_two_processes_store_and_return_what_one_does(demo_config, tmp_path, one_night_runs, one_process):
    one, rows_one, seen_one = one_process
    two, rows_two, seen_two = _run(tmp_path, "two", demo_config, jobs=2)
    assert len(rows_one["projections"]) > 1000 and any(r[4] >= 4 for r in rows_one["alerts"])  # real frost alerts
    for table in TABLES:
        assert rows_two[table] == rows_one[table], table
    assert [a.key for a in two.alerts] == [a.key for a in one.alerts] and two.alerts == one.alerts
    assert two.projections == one.projections and two.decisions == one.decisions
    assert two.nights == one.nights == [dt.date(2027, 4, 14), dt.date(2027, 4, 15), dt.date(2027, 4, 16)]
    assert two.evaluations == one.evaluations
    assert seen_one == seen_two == [(1, 3), (2, 3), (3, 3)]


def test_a_worker_that_fails_is_reported_with_its_traceback(demo_config, tmp_path, one_night_runs, monkeypatch):
    def broken(*a, **k):
        raise ValueError("broken on purpose")

    monkeypatch.setattr(replay, "night_rows", broken)
    with pytest.raises(RuntimeError, match="broken on purpose"):
        _run(tmp_path, "broken", demo_config, jobs=2)


def test_runs_go_to_the_process_with_the_fewest_evaluations_so_far():
    """`share_runs`: a long run (a winter month that allows no cut) is balanced by the shorter
    runs after it going to the other process, not by taking turns."""
    assert replay_parallel.share_runs([10, 10, 10, 10], 2) == [0, 1, 0, 1]
    costs = [8, 8, 40, 8, 8, 8, 8, 8, 8]
    owners = replay_parallel.share_runs(costs, 2)
    assert owners == [0, 1, 0, 1, 1, 1, 1, 1, 0]
    load = [sum(c for c, o in zip(costs, owners, strict=True) if o == j) for j in (0, 1)]
    assert abs(load[0] - load[1]) <= 8 and load != [sum(costs[0::2]), sum(costs[1::2])]
    assert replay_parallel.share_runs([5], 4) == [0]


@pytest.mark.parametrize("owners", [[1, 1, 0], [0, 0, 0], [1, 0, 1]])
def test_runs_shared_unevenly_store_and_return_what_one_process_does(demo_config, tmp_path, one_night_runs,
                                                                     monkeypatch, owners, one_process):
    one, rows_one, seen_one = one_process
    monkeypatch.setattr(replay_parallel, "share_runs", lambda costs, jobs: owners)
    two, rows_two, seen_two = _run(tmp_path, "two", demo_config, jobs=2)
    for table in TABLES:
        assert rows_two[table] == rows_one[table], table
    assert two.alerts == one.alerts and two.projections == one.projections and two.decisions == one.decisions
    assert seen_two == seen_one
