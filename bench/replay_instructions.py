"""Instructions per evaluation of a replay, nights [a, b) of the TMY year (issue 19; a tool, not run
by `python -m bench`).

    python -m bench.replay_instructions [--tree DIR] [--nights A B]     (defaults: nights 8 10)

The replay's own loop (`pipeline.iter_replay_nights` with its `chosen` nights, then
`replay.night_rows`: the projection rows, the stored decisions' JSON and zlib) runs under
`valgrind --tool=callgrind --instr-atstart=no`. The nights before A are learned (and night A - 1
evaluated, so every lazy import is done) at valgrind's uninstrumented speed; instrumentation is
switched on for this process alone (`callgrind_control -i on PID`) at night A's first evaluation
(PYTHONHASHSEED fixed: string hashes otherwise move the count by a few per cent between runs),
and the loop stops after night B - 1 (the generator would otherwise learn the rest of the year).
What is counted: nights A to B - 1 evaluated with their rows, and their mornings learned, as each
worker of a replay does them; not the interpreter's exit (a forked worker leaves without it; before
2026-12-04 10:00 the count ran to the end of the process, about 0.11 M per evaluation more). Deterministic on a shared machine, unlike CPU time.

`--tree DIR`: a frostwatch tree to measure (e.g. `git archive REV frostwatch | tar -x -C DIR`,
compiled with `python -m compileall`: PYTHONDONTWRITEBYTECODE is set here); default the installed
one. The log is bench/tmy.py's Greensboro year, read with pandas into the replay's series.
"""

from __future__ import annotations

import argparse
import re
import tempfile
from pathlib import Path

from bench import callgrind


def _series(csv_path: Path) -> dict:
    import pandas as pd

    df = pd.read_csv(csv_path)
    df["t"] = (pd.to_datetime(df["time"], utc=True) - pd.Timestamp("1970-01-01", tz="UTC")).dt.total_seconds()
    out = {}
    for (station, quantity), g in df.groupby(["station", "quantity"]):
        g = g.sort_values("t")
        out[(station, quantity)] = (g["t"].to_numpy(dtype=float), g["value"].to_numpy(dtype=float))
    return out


class _Done(Exception):
    pass


def _inner(work: Path, a: int, b: int) -> None:
    """Run under valgrind: learn up to night a - 1 uninstrumented, wait for the switch, count [a, b)."""
    from frostwatch import pipeline
    from frostwatch.config import load_config
    from frostwatch.replay import _fewer_collections, night_rows

    cfg = load_config(str(work / "greensboro.toml"))
    series = _series(work / "greensboro.csv")

    def chosen(k: int) -> bool:
        if k >= b:
            raise _Done
        if k == a:
            callgrind.wait_for_go(work)
        return a - 1 <= k < b

    n = 0
    with _fewer_collections():
        try:
            for k, _, evals in pipeline.iter_replay_nights(cfg, series, chosen=chosen):
                if evals:
                    night_rows(evals, False, None)
                    n += len(evals) if k >= a else 0
        except _Done:
            pass
    print("evaluations", n, flush=True)
    (work / "done").touch()  # the count ends here: the interpreter's exit is not a worker's (forked workers skip it)
    callgrind.wait_for_off(work)


def measure(tree: str | None, a: int, b: int) -> dict:
    from bench import tmy

    with tempfile.TemporaryDirectory(prefix="fw-instr-") as tmp:
        work = Path(tmp)
        tmy.write_log_and_config(tmy.SITES["greensboro"], work)
        out, _, ir = callgrind.counted_run("bench.replay_instructions", [str(a), str(b)], work, tree, stop_mark="done")
        evals = int(re.search(r"evaluations (\d+)", out).group(1))
        return {"nights": [a, b], "evaluations": evals, "instructions": ir,
                "per_evaluation_m": round(ir / max(evals, 1) / 1e6, 3), "tree": tree or "installed"}


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--tree")
    ap.add_argument("--nights", nargs=2, type=int, default=[8, 10])
    ap.add_argument("--inner", nargs=3)
    args = ap.parse_args(argv)
    if args.inner:
        _inner(Path(args.inner[0]), int(args.inner[1]), int(args.inner[2]))
        return 0
    r = measure(args.tree, *args.nights)
    print(f"nights {r['nights'][0]}-{r['nights'][1] - 1}: {r['evaluations']} evaluations, "
          f"{r['instructions']:,} instructions, {r['per_evaluation_m']} M per evaluation ({r['tree']})")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
