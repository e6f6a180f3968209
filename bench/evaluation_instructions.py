"""Instructions per evaluation cycle of 50 blocks x 4 stations (issue 19; a tool, not run by
`python -m bench`).

    python -m bench.evaluation_instructions [--tree DIR] [--blocks N] [--cycles K] [--push-only]

bench/evaluation.py's night (bench/synth.py: a radiation night of 1-minute readings, evaluated
from 02:00 local) and its cycle, `daemon.Core.evaluate` on the night cache after every station's
two minutes of new readings are pushed to it (`Core.readings_committed`), under
`valgrind --tool=callgrind --instr-atstart=no`. The store, the cache's one load and a first
evaluation (imports, lazy caches) run uninstrumented; instrumentation is switched on for this
process alone (`callgrind_control -i on PID`) for K cycles. The readings are made beforehand and
only pushed to the cache (the writer's commit to the store is not part of the cycle; the cycle
never reads them back: `cache.loads` stays 1). PYTHONHASHSEED is fixed. Deterministic on a
shared machine, unlike CPU time.

Printed beside the count: the SHA-256 of every cycle's decisions as stored (`decision_to_json`)
and projection rows, so that two trees that count differently can be shown to decide the same.

`--push-only`: the same K pushes to the cache without the evaluations, to subtract: the
benchmark's cycle (bench/evaluation.py's cycle_ms) is the evaluation alone.

`--tree DIR`: a frostwatch tree to measure (e.g. `git archive REV frostwatch | tar -x -C DIR`);
default the installed one.
"""

from __future__ import annotations

import argparse
import datetime as dt
import hashlib
import re
import tempfile
from pathlib import Path

from bench import callgrind


def _inner(work: Path, n_blocks: int, cycles: int, push_only: bool = False) -> None:
    from bench import synth
    from bench.evaluation import _core, _new_readings, night_site
    from frostwatch.decision import decision_to_json
    from frostwatch.store import Store

    cfg, _, _ = night_site(n_blocks, work)
    start, sunset, at = synth.night_bounds(cfg)
    store = Store.open(cfg.storage.path)
    core = _core(cfg, store)
    core.evaluate(at, "warm-up")
    nows = [at + dt.timedelta(minutes=2 * (k + 1)) for k in range(cycles)]
    fresh = [_new_readings(cfg, a, b, sunset) for a, b in zip([at] + nows, nows, strict=False)]
    h = hashlib.sha256()
    callgrind.wait_for_go(work)
    evs = []
    for now, readings in zip(nows, fresh, strict=True):
        core.readings_committed(readings)
        if not push_only:
            evs.append(core.evaluate(now, "bench"))
    (work / "done").touch()
    for ev in evs:
        for d, p in zip(ev.decisions, ev.projections, strict=True):
            h.update(decision_to_json(d).encode())
            h.update(repr(Store._projection_row(p)).encode())
    assert core.cache.loads == 1
    store.close()
    print("cycles", len(nows), "sha256", h.hexdigest())


def measure(tree: str | None, n_blocks: int, cycles: int, push_only: bool = False) -> dict:
    with tempfile.TemporaryDirectory(prefix="fw-evinstr-") as tmp:
        args = [str(n_blocks), str(cycles)] + (["--push-only"] if push_only else [])
        out, err, ir = callgrind.counted_run("bench.evaluation_instructions", args, Path(tmp), tree, stop_mark="done")
        m = re.search(r"cycles (\d+) sha256 (\w+)", out)
        if m is None:
            raise RuntimeError(out + err)
        n = int(m.group(1))
        return {"blocks": n_blocks, "cycles": n, "instructions": ir, "per_cycle_m": round(ir / n / 1e6, 2),
                "decisions_sha256": m.group(2), "tree": tree or "installed", "push_only": push_only}


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--tree")
    ap.add_argument("--blocks", type=int, default=50)
    ap.add_argument("--cycles", type=int, default=5)
    ap.add_argument("--push-only", action="store_true")
    ap.add_argument("--inner", nargs=3)
    args = ap.parse_args(argv)
    if args.inner:
        _inner(Path(args.inner[0]), int(args.inner[1]), int(args.inner[2]), args.push_only)
        return 0
    r = measure(args.tree, args.blocks, args.cycles, args.push_only)
    what = "pushes alone" if r["push_only"] else f"decisions sha256 {r['decisions_sha256'][:16]}"
    print(f"{r['blocks']} blocks, {r['cycles']} cycles: {r['instructions']:,} instructions, "
          f"{r['per_cycle_m']} M per cycle; {what} ({r['tree']})")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
