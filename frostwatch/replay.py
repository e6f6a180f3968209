"""The replay engine: the advisory pipeline over logged readings, stored as the daemon stores it.

    res = replay_series(cfg, store, series, progress, keep_projections=True, display=d, jobs=None)

`frostwatch replay` and `frostwatch demo` (frostwatch.commands.logs, .demo) and the tests run a
night through `pipeline.iter_replay_nights` and keep, night by night in one transaction each, the
projections, decisions and alerts (each alert's console delivery recorded as sent). Raises what
the store raises (`StoreError`).

A season is shared among processes (`jobs`, default the machine's cores up to MAX_JOBS): each
evaluates runs of consecutive nights and only learns the nights between them (a night's
evaluations depend on the calibration learned from the nights before it and on nothing else that
crosses nights: alert states start afresh each night), and this process stores each night's
rows in night order, exactly what one process would have stored (tests/test_replay_parallel.py).
"""

from __future__ import annotations

import contextlib
import gc
import os
from dataclasses import dataclass, field

MAX_JOBS = 4  # processes that share a season's nights (a Pi 4 has 4 cores)
MIN_NIGHTS_PER_JOB = 4  # fewer nights than this per process: one process (starting others costs more)
CHUNK_NIGHTS = 8  # a process evaluates runs of up to this many consecutive nights
# The cycle collector's first threshold during a replay (Python's default is 700 allocations): an
# evaluation allocates thousands of short-lived objects and makes almost no cycles, and a
# collection every 700 of them took about 6 % of a replay's CPU time. Memory is what the
# objects alive hold; cycles, if any, are still collected, every this many allocations.
REPLAY_GC_THRESHOLD = 50_000


@contextlib.contextmanager
def _fewer_collections():
    """The cycle collector's first threshold raised to REPLAY_GC_THRESHOLD, restored after."""
    before = gc.get_threshold()
    gc.set_threshold(max(before[0], REPLAY_GC_THRESHOLD), *before[1:])
    try:
        yield
    finally:
        gc.set_threshold(*before)


class DecisionChanges:
    """Each block's decision whenever what a grower would notice of it changes
    (`frostwatch.decision.plan_signature`), and the first of each night: the time, level, step,
    the advice as the grower reads it and the whole typed plan. Fed a night of evaluations at a
    time (a season is not held in memory)."""

    def __init__(self, display):
        self.display = display
        self.out: list[dict] = []
        self.last: dict = {}

    def add(self, evals) -> None:
        from frostwatch.advice import codec
        from frostwatch.advice import render as advice_render
        from frostwatch.decision import plan_signature

        for ev in evals:
            for dc in ev.decisions:
                sig = (ev.night.date, plan_signature(dc))
                if self.last.get(dc.block) == sig:
                    continue
                self.last[dc.block] = sig
                self.out.append({"time": codec.iso_utc(ev.time_utc), "block": dc.block, "level": dc.level,
                                 "step": dc.step.value, "advice": advice_render.action(dc.step, dc.plan, self.display),
                                 "plan": codec.to_dict(dc.plan)})


@dataclass
class Replayed:
    """What a replay keeps for its output: the alerts, the nights, and (for --json) the
    projections; the evaluations themselves go to the store night by night."""

    alerts: list = field(default_factory=list)
    nights: list = field(default_factory=list)
    projections: list = field(default_factory=list)
    decisions: list = field(default_factory=list)  # decision_changes (for --json)
    shorts: dict = field(default_factory=dict)  # alert key -> the short form with its console delivery's code
    evaluations: int = 0


@dataclass
class NightRows:
    """One night's evaluations as the store takes them and the output keeps them: made where the
    night was evaluated (this process or another), stored here in night order."""

    projection_rows: list = field(default_factory=list)
    decision_rows: list = field(default_factory=list)
    alerts: list = field(default_factory=list)
    dates: set = field(default_factory=set)
    evaluations: int = 0
    projections: list = field(default_factory=list)  # with keep_projections (--json)
    decisions: list = field(default_factory=list)  # decision changes, with keep_projections (--json)


def night_rows(night_evals, keep_projections: bool, changes: DecisionChanges | None) -> NightRows:
    """A night's evaluations as rows (no store). `changes` (with keep_projections) is carried
    from one night to the next of a run of consecutive nights."""
    from frostwatch import pipeline
    from frostwatch.store import decisions as stored_decisions
    from frostwatch.store.db import Store

    out = NightRows()
    out.projection_rows = [Store._projection_row(p) for ev in night_evals for p in ev.projections]
    out.decision_rows = [stored_decisions.row_of(d) for ev in night_evals for d in ev.decisions]
    for ev in night_evals:
        out.dates.add(ev.night.date)
        out.evaluations += 1
        out.alerts += ev.alerts
        if keep_projections and ev.night.contains(ev.time_utc, 0.0, 0.0):
            out.projections += [pipeline.with_time(p) for p in ev.projections]
    if changes is not None:
        changes.add(night_evals)
        out.decisions, changes.out = changes.out, []
    return out


def _store_night(store, rows: NightRows, out: Replayed, console: str, nights: set) -> None:
    """Store one night's rows (projections, decisions, then each alert with its console delivery)."""
    from frostwatch.alerts.outbox import record_replayed
    from frostwatch.store import decisions as stored_decisions

    store.add_projection_rows(rows.projection_rows)
    stored_decisions.save_rows(store, rows.decision_rows)
    for a in rows.alerts:
        out.shorts[a.key] = record_replayed(store, a, console)
        out.alerts.append(a)
    nights |= rows.dates
    out.evaluations += rows.evaluations
    out.projections += rows.projections
    out.decisions += rows.decisions


def default_jobs() -> int:
    """The processes a replay shares its nights among: the cores this process may use, up to MAX_JOBS."""
    try:
        n = len(os.sched_getaffinity(0))
    except (AttributeError, OSError):
        n = os.cpu_count() or 1
    return max(1, min(MAX_JOBS, n))


def replay_series(cfg, store, series, progress=None, keep_projections=False, keep_evaluations=False, display=None,
                  jobs: int | None = None):
    """Run the pipeline over `series` as the daemon would have (pipeline.iter_replay_nights) and
    store each night's projections, decisions and alerts in one transaction each, night by night.
    Returns a Replayed (and the evaluations themselves with keep_evaluations, for small logs).

    `jobs` processes share the nights (default `default_jobs()`); one with keep_evaluations, or
    when there are fewer than MIN_NIGHTS_PER_JOB nights per process."""
    with _fewer_collections():  # the worker processes, forked inside, inherit it
        return _replay_series(cfg, store, series, progress, keep_projections, keep_evaluations, display, jobs)


def _replay_series(cfg, store, series, progress, keep_projections, keep_evaluations, display, jobs):
    from frostwatch import pipeline
    from frostwatch.alerts.outbox import replay_channel

    console = replay_channel(cfg)
    out = Replayed()
    kept = []
    nights: set = set()
    jobs = default_jobs() if jobs is None else max(1, int(jobs))
    planned = None
    if jobs > 1 and not keep_evaluations:
        from frostwatch.replay_parallel import plan_runs

        planned = plan_runs(cfg, series, jobs, MIN_NIGHTS_PER_JOB, CHUNK_NIGHTS)
    if planned:
        from frostwatch.replay_parallel import parallel_nights, share_runs

        chunks, costs = planned

        def rows_of(evals, changes):
            return night_rows(evals, keep_projections, changes)

        def new_changes():
            return DecisionChanges(display) if keep_projections else None

        for rows in parallel_nights(cfg, series, chunks, jobs, rows_of, new_changes, progress,
                                    owners=share_runs(costs, jobs)):
            _store_night(store, rows, out, console, nights)
    else:
        changes = DecisionChanges(display) if keep_projections else None
        for k, total, night_evals in pipeline.iter_replay_nights(cfg, series):
            if night_evals:
                _store_night(store, night_rows(night_evals, keep_projections, changes), out, console, nights)
                if keep_evaluations:
                    kept += night_evals
            if progress:
                progress(k + 1, total)
    out.nights = sorted(nights)
    return (out, kept) if keep_evaluations else out


def replay_into_store(cfg, store, readings, progress=None):
    """Run the pipeline over the stored readings of the logs' span; store the projections, the
    decisions and the alerts, as the daemon does. Returns (evaluations, series)."""
    first = min(r.time_utc for r in readings)
    last = max(r.time_utc for r in readings)
    series = store.readings_window(first, last)
    _, evals = replay_series(cfg, store, series, progress, keep_evaluations=True)
    return evals, series
