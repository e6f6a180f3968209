"""A season's nights shared among processes, for `frostwatch.replay.replay_series`.

    chunks = plan_chunks(cfg, series, jobs, min_nights_per_job, chunk_nights)   # None: one process
    for rows in parallel_nights(cfg, series, chunks, jobs, night_rows, new_changes, progress):
        ...   # each night's rows, in night order

Why the result is what one process gives: a night's evaluations depend on the calibration
learned from the nights before it (walk-forward) and on the alert states, which start afresh
each night (`alerts.rules.step`); a process that only learns the nights it does not evaluate
(`pipeline.iter_replay_nights(chosen=...)`) holds, at the start of each of its nights, the state
one process would hold. A run of nights is cut only where no evaluation of a night falls on the
next night's date (local noon separates nights; a morning watch that runs past noon ties the two).

Worker processes are forked (they share the readings' arrays with this one, copy-on-write),
evaluate runs of up to `chunk_nights` consecutive nights in turn and send each night's rows
through a bounded queue: at most about two runs of nights wait in memory per process. Rows
are stored by the caller, in night order, in this process.
"""

from __future__ import annotations

import multiprocessing
import os
import queue as queue_mod
import traceback

from frostwatch import pipeline
from frostwatch.night import evening_date

POLL_S = 1.0  # how often the reader checks that a worker it waits for is still alive


def _cut_allowed(cfg, nights, first_s: float, last_s: float) -> tuple[list[bool], list[int]]:
    """For each night k > 0: whether a run of nights may start at k (no evaluation of night k - 1
    falls on night k's date, nor one of night k on night k - 1's); and each night's number of
    evaluations."""
    tz = cfg.site.tz
    interval = cfg.forecast.evaluation_interval_min
    ends, counts = [], []
    for n in nights:
        times = pipeline.evaluation_times(n, interval, first_s, last_s)
        ends.append((evening_date(times[0], tz), evening_date(times[-1], tz)) if times else None)
        counts.append(len(times))
    ok = [False]
    for k in range(1, len(nights)):
        a, b = ends[k - 1], ends[k]
        ok.append(a is not None and b is not None and a[1] == nights[k - 1].date and b[0] == nights[k].date)
    return ok, counts


def plan_runs(cfg, series, jobs: int, min_nights_per_job: int,
              chunk_nights: int) -> tuple[list[tuple[int, int]], list[int]] | None:
    """Runs of consecutive nights [a, b) to share among `jobs` processes and each run's number of
    evaluations (what it costs), or None when one process should do it all (too few nights)."""
    if not series or jobs < 2:
        return None
    nights = pipeline.covered_nights(cfg, series)
    total = len(nights)
    if total < jobs * min_nights_per_job:
        return None
    first = min(float(t[0]) for t, _ in series.values())
    last = max(float(t[-1]) for t, _ in series.values())
    allowed, counts = _cut_allowed(cfg, nights, first, last)
    size = max(1, min(chunk_nights, total // (jobs * 4)))
    chunks, a = [], 0
    for k in range(1, total):
        if k - a >= size and allowed[k]:
            chunks.append((a, k))
            a = k
    chunks.append((a, total))
    return (chunks, [sum(counts[a:b]) for a, b in chunks]) if len(chunks) >= 2 else None


def plan_chunks(cfg, series, jobs: int, min_nights_per_job: int, chunk_nights: int) -> list[tuple[int, int]] | None:
    """`plan_runs`'s runs of nights alone."""
    planned = plan_runs(cfg, series, jobs, min_nights_per_job, chunk_nights)
    return None if planned is None else planned[0]


def share_runs(costs: list[int], jobs: int) -> list[int]:
    """The process of each run of nights, in order: the one given the fewest evaluations so far
    (the lowest number on a tie). Runs differ in cost (a run can be a whole winter month: where
    the morning watch reaches past noon no cut is allowed), so taking turns can leave one process
    a quarter more work than the other; a process can run one longest run ahead of the reader."""
    load = [0] * jobs
    owners = []
    for cost in costs:
        j = min(range(jobs), key=load.__getitem__)
        owners.append(j)
        load[j] += cost
    return owners


def _worker(cfg, series, chunks, night_rows, new_changes, q) -> None:
    """Evaluate the given runs of nights (learning the others) and put each night's rows on `q`:
    `night_rows(evals, changes)`, with `changes = new_changes()` at the start of each run (None
    without decision changes to keep)."""
    parent = os.getppid()
    try:
        mine = {k: (a, b) for a, b in chunks for k in range(a, b)}
        last = max(mine)
        changes = None
        for k, _total, evals in pipeline.iter_replay_nights(cfg, series, chosen=mine.__contains__):
            if k == mine[k][0]:
                changes = new_changes()  # carried within a run of nights, as one process would
            _put(q, ("night", k, night_rows(evals, changes) if evals else None), parent)
            if k == last:
                break  # the nights after this process's last are not even learned
    except BaseException:  # noqa: BLE001 - anything that stops a worker is reported to the reader
        _put(q, ("error", None, traceback.format_exc()), parent)


def _put(q, item, parent: int) -> None:
    """Put on the bounded queue; leave at once if the replay that reads it has gone (killed)."""
    while True:
        try:
            q.put(item, timeout=POLL_S)
            return
        except queue_mod.Full:
            if os.getppid() != parent:
                os._exit(1)


def parallel_nights(cfg, series, chunks, jobs, night_rows, new_changes, progress=None, owners=None):
    """Each night's rows (`night_rows(evals, changes)`; nights without evaluations skipped), in
    night order, evaluated by `jobs` forked processes (see `_worker`): run c by process
    `owners[c]` (`share_runs`; default: in turn). Raises RuntimeError with the worker's traceback
    if a worker fails or dies; the workers are stopped however this generator ends."""
    ctx = multiprocessing.get_context("fork")
    size = max(b - a for a, b in chunks)
    owners = [c % jobs for c in range(len(chunks))] if owners is None else list(owners)
    assigned = [[ch for ch, o in zip(chunks, owners, strict=True) if o == j] for j in range(jobs)]
    queues = [ctx.Queue(maxsize=size + 1) for _ in range(jobs)]
    procs = {j: ctx.Process(target=_worker, args=(cfg, series, assigned[j], night_rows, new_changes, queues[j]),
                            name=f"frostwatch-replay-{j + 1}", daemon=True) for j in range(jobs) if assigned[j]}
    total = chunks[-1][1]
    try:
        for p in procs.values():
            p.start()
        for c, (a, b) in enumerate(chunks):
            j = owners[c]
            for k in range(a, b):
                kind, got, rows = _get(queues[j], procs[j])
                if kind == "error":
                    raise RuntimeError(f"a replay process failed:\n{rows}")
                if kind != "night" or got != k:
                    raise RuntimeError(f"a replay process sent night {got} ({kind}) where night {k} was due")
                if rows is not None:
                    yield rows
                if progress:
                    progress(k + 1, total)
        for p in procs.values():
            p.join()
    finally:
        for p in procs.values():
            if p.is_alive():
                p.terminate()
                p.join()
        for q in queues:
            q.close()
            q.join_thread()


def _get(q, proc):
    """The next message from a worker; RuntimeError if it died without sending one."""
    while True:
        try:
            return q.get(timeout=POLL_S)
        except queue_mod.Empty:
            if not proc.is_alive():
                try:
                    return q.get(timeout=POLL_S)
                except queue_mod.Empty:
                    raise RuntimeError(f"a replay process ({proc.name}) ended with exit code {proc.exitcode} "
                                       "before sending its nights") from None
