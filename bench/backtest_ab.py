"""`frostwatch backtest` of the three typical years, this checkout against another (before/after),
in interleaved rounds, so that both sides are measured at the same load. Not part of `python -m
bench` (no `run()`): a tool for the A/B figures in bench/README.md.

    git archive <commit> | tar -x -C /tmp/before
    .venv-test/bin/python -m bench.backtest_ab /tmp/before [--rounds 3] [--sites greensboro,miami]

Per site and side, medians over the rounds of: CPU time in process (config, the log's bulk
parse, the walk-forward), the pandas floor in the same process (read_csv and the times), and the
CPU time of `frostwatch backtest --json` as a process beside a pandas process; each side's
frostwatch is its tree's (PYTHONPATH). Writes results/backtest_ab.json.
"""

from __future__ import annotations

import argparse
import json
import os
import resource
import shlex
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

from bench import tmy

RESULTS = Path(__file__).resolve().parent / "results"
CHECKOUT = Path(__file__).resolve().parents[1]

_IN_PROCESS = r'''
import json, sys, time
log, cfgp = sys.argv[1], sys.argv[2]
import pandas as pd
from frostwatch import backtest as bt
from frostwatch.commands.logs import _first_rows
from frostwatch.config import load_config
from frostwatch.ingest.bulk import read_log_columns
try:
    from frostwatch.ingest.bulk import series_of_columns
except ImportError:  # before it moved
    from frostwatch.store.bulk import series_of_columns
load_config(cfgp)  # the section checks' imports, as bench.forecast_skill does
def floor():
    c = time.process_time()
    df = pd.read_csv(log)
    pd.to_datetime(df["time"], format="ISO8601", utc=True)
    return time.process_time() - c
floor()
floor_s = sorted(floor() for _ in range(3))[1]
c0 = time.process_time()
cfg = load_config(cfgp)
cols, _ = read_log_columns(log, {s.id for s in cfg.stations})
series = series_of_columns(cols, _first_rows(cols), key_order="file")
c1 = time.process_time()
rows = bt.backtest(cfg, series)
c2 = time.process_time()
import frostwatch
print(json.dumps({"frostwatch": frostwatch.__file__, "floor": floor_s, "parse": c1 - c0, "walk": c2 - c1, "total": c2 - c0, "rows": len(rows)}))
'''


def _child_cpu(cmd: list[str], env: dict, cwd: Path) -> tuple[float, str]:
    # run from a folder without frostwatch/: `-c` and `-m` put the working folder before PYTHONPATH
    r = resource.getrusage(resource.RUSAGE_CHILDREN)
    p = subprocess.run(cmd, env=env, capture_output=True, text=True, check=False, cwd=cwd)
    r2 = resource.getrusage(resource.RUSAGE_CHILDREN)
    if p.returncode:
        raise SystemExit(f"{' '.join(cmd[:4])}: {p.stderr[-2000:]}")
    return r2.ru_utime - r.ru_utime + r2.ru_stime - r.ru_stime, p.stdout


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    ap.add_argument("before", help="a tree of the other frostwatch (its frostwatch/ folder is imported)")
    ap.add_argument("--rounds", type=int, default=3)
    ap.add_argument("--sites", default=",".join(tmy.SITES))
    ap.add_argument("--label", default="", help="what the other tree is (a commit), kept in the results")
    args = ap.parse_args(sys.argv[1:] if argv is None else argv)
    trees = {"before": str(Path(args.before).resolve()), "after": str(CHECKOUT)}
    work = Path(tempfile.mkdtemp(prefix="frostwatch-ab-"))
    logs = {k: tmy.write_log_and_config(tmy.SITES[k], work / k)[:2] for k in args.sites.split(",")}
    raw: dict = {k: {"before": [], "after": []} for k in logs}
    for rnd in range(args.rounds):
        for site, (log, cfg) in logs.items():
            for side in ("before", "after") if rnd % 2 == 0 else ("after", "before"):
                env = dict(os.environ, PYTHONPATH=trees[side])
                _, out = _child_cpu([sys.executable, "-c", _IN_PROCESS, str(log), str(cfg)], env, work)
                d = json.loads(out)
                assert d.pop("frostwatch").startswith(trees[side]), f"{side}: another frostwatch was imported"
                d["process_floor"], _ = _child_cpu([sys.executable, "-c", "import sys, pandas as pd; df = pd.read_csv(sys.argv[1]); "
                                                    "pd.to_datetime(df['time'], format='ISO8601', utc=True)", str(log)], env, work)
                d["process"], _ = _child_cpu([sys.executable, "-m", "frostwatch", "backtest", "--config", str(cfg), "--json", str(log)], env, work)
                d["load_average_1min"] = round(os.getloadavg()[0], 2)
                raw[site][side].append(d)
    out: dict = {}
    for site, sides in raw.items():
        for side, runs in sides.items():
            med = {k: round(float(np.median([r[k] for r in runs])), 4)
                   for k in ("floor", "parse", "walk", "total", "process", "process_floor")}
            med["ratio_in_process"] = round(float(np.median([r["total"] / r["floor"] for r in runs])), 1)
            med["ratio_process"] = round(float(np.median([r["process"] / r["process_floor"] for r in runs])), 2)
            med["load_average_1min"] = [r["load_average_1min"] for r in runs]
            out.setdefault(site, {})[side] = med
            print(f"{site:<11} {side:<6} in process {med['total']:.3f} s CPU (parse {med['parse']:.3f}, walk-forward "
                  f"{med['walk']:.3f}) / floor {med['floor']:.4f} = {med['ratio_in_process']}x; as a process "
                  f"{med['process']:.2f} s / {med['process_floor']:.2f} = {med['ratio_process']}x; load {med['load_average_1min']}")
    RESULTS.mkdir(parents=True, exist_ok=True)
    doc = {"about": __doc__.split("\n\n")[0], "when": time.strftime("%Y-%m-%d %H:%M UTC", time.gmtime()),
           "command": shlex.join(["python", "-m", "bench.backtest_ab", *(sys.argv[1:] if argv is None else argv)]),
           "rounds": args.rounds, "before": trees["before"], "before_label": args.label, "sites": out, "raw": raw}
    (RESULTS / "backtest_ab.json").write_text(json.dumps(doc, indent=1) + "\n", encoding="utf-8")
    return 0


if __name__ == "__main__":
    sys.exit(main())
