"""The replay engine: the advisory pipeline over logged readings, stored as the daemon stores it.

    res = replay_series(cfg, store, series, progress, keep_projections=True, display=d)

`frostwatch replay` and `frostwatch demo` (frostwatch.commands.logs, .demo) and the tests run a
night through `pipeline.iter_replay` and keep, night by night in one transaction each, the
projections, decisions and alerts (each alert's console delivery recorded as sent). Raises what
the store raises (`StoreError`).
"""

from __future__ import annotations

from dataclasses import dataclass, field


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


def replay_series(cfg, store, series, progress=None, keep_projections=False, keep_evaluations=False, display=None):
    """Run the pipeline over `series` as the daemon would have (pipeline.iter_replay) and store
    each night's projections, decisions and alerts in one transaction each, night by night.
    Returns a Replayed (and the evaluations themselves with keep_evaluations, for small logs)."""
    from frostwatch import pipeline
    from frostwatch.alerts.outbox import record_replayed, replay_channel
    from frostwatch.store import decisions as stored_decisions

    console = replay_channel(cfg)
    out = Replayed()
    kept = []
    nights = set()
    changes = DecisionChanges(display) if keep_projections else None
    for night_evals in pipeline.iter_replay(cfg, series, progress=progress):
        if not night_evals:
            continue
        store.add_projections(p for ev in night_evals for p in ev.projections)
        stored_decisions.save_decisions(store, (d for ev in night_evals for d in ev.decisions))
        for ev in night_evals:
            nights.add(ev.night.date)
            out.evaluations += 1
            for a in ev.alerts:
                out.shorts[a.key] = record_replayed(store, a, console)
                out.alerts.append(a)
            if keep_projections and ev.night.contains(ev.time_utc, 0.0, 0.0):
                out.projections += [pipeline.with_time(p) for p in ev.projections]
        if changes is not None:
            changes.add(night_evals)
        if keep_evaluations:
            kept += night_evals
    out.nights = sorted(nights)
    out.decisions = changes.out if changes is not None else []
    return (out, kept) if keep_evaluations else out


def replay_into_store(cfg, store, readings, progress=None):
    """Run the pipeline over the stored readings of the logs' span; store the projections, the
    decisions and the alerts, as the daemon does. Returns (evaluations, series)."""
    first = min(r.time_utc for r in readings)
    last = max(r.time_utc for r in readings)
    series = store.readings_window(first, last)
    _, evals = replay_series(cfg, store, series, progress, keep_evaluations=True)
    return evals, series
