"""Is the backtest's output the same, byte for byte? A tool for changes that must not change
results (issue 19: the backtest made faster). Not part of `python -m bench` (no `run()`).

    .venv-test/bin/python -m bench.backtest_same OUT [--tree TREE] [--against REF]

Writes into OUT the stdout of `frostwatch backtest --json` on the demo's three logs (together and
each alone) and on the three typical years (bench/tmy.py), and, in process, every row of
`backtest.backtest` of each typical year with the nowcast options and a probe (forecast_skill's
uses) as JSON with every float's repr. The frostwatch run is TREE's (PYTHONPATH; the installed one
without it). With `--against REF` (an earlier OUT), says which files differ; exit 1 if any does.
"""

from __future__ import annotations

import argparse
import filecmp
import os
import subprocess
import sys
import tempfile
from pathlib import Path

from bench import tmy

CHECKOUT = Path(__file__).resolve().parents[1]
DEMO = CHECKOUT / "sample_sensor_logs"
DEMO_LOGS = ("2027-04-14-radiation-frost.csv", "2027-04-15-windy-advective.csv", "2027-04-16-cloudy-safe.csv")

_ROWS = r'''
import datetime as dt, json, sys
from frostwatch import backtest as bt
from frostwatch.commands.logs import _first_rows
from frostwatch.config import load_config
from frostwatch.ingest.bulk import read_log_columns, series_of_columns
log, cfgp = sys.argv[1], sys.argv[2]
cfg = load_config(cfgp)
cols, _ = read_log_columns(log, {s.id for s in cfg.stations})
series = series_of_columns(cols, _first_rows(cols), key_order="file")
def probes(night, rec, obs):
    at = rec.observed_min_at_utc.timestamp() - 3 * 3600.0
    return {"min3h": dt.datetime.fromtimestamp(at, dt.UTC) if at > night.dusk_utc.timestamp() else None}
rows = bt.backtest(cfg, series, nowcast_lead_h=2.0, nowcast_before_sunrise_h=2.0, probes=probes)
print(json.dumps(rows, indent=0, default=repr))
'''


def _run(cmd: list[str], env: dict, cwd: Path) -> bytes:
    p = subprocess.run(cmd, env=env, capture_output=True, check=False, cwd=cwd)
    if p.returncode not in (0, 1):
        raise SystemExit(f"{' '.join(cmd[:5])}: exit {p.returncode}: {p.stderr.decode()[-2000:]}")
    return p.stdout


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    ap.add_argument("out")
    ap.add_argument("--tree", help="a tree whose frostwatch/ is run (default: the installed one)")
    ap.add_argument("--against", help="an earlier OUT to compare with")
    args = ap.parse_args(argv)
    out = Path(args.out).resolve()
    out.mkdir(parents=True, exist_ok=True)
    env = dict(os.environ)
    if args.tree:
        env["PYTHONPATH"] = str(Path(args.tree).resolve())
    work = Path(tempfile.mkdtemp(prefix="frostwatch-same-"))
    fw = [sys.executable, "-m", "frostwatch", "backtest", "--json"]
    demo_cfg = str(DEMO / "demo-farm.toml")
    jobs = {"demo_all.json": fw + ["--config", demo_cfg] + [str(DEMO / f) for f in DEMO_LOGS]}
    for f in DEMO_LOGS:
        jobs[f"demo_{f[:10]}.json"] = fw + ["--config", demo_cfg, str(DEMO / f)]
    for key, site in tmy.SITES.items():
        log, cfg = tmy.write_log_and_config(site, work / key)[:2]
        jobs[f"tmy_{key}.json"] = fw + ["--config", str(cfg), str(log)]
        jobs[f"tmy_{key}_rows.json"] = [sys.executable, "-c", _ROWS, str(log), str(cfg)]
    for name, cmd in jobs.items():
        (out / name).write_bytes(_run(cmd, env, work))
        print(f"{name}: {(out / name).stat().st_size} bytes")
    if not args.against:
        return 0
    ref = Path(args.against)
    differ = [n for n in jobs if not (ref / n).exists() or not filecmp.cmp(ref / n, out / n, shallow=False)]
    print("identical" if not differ else f"DIFFER: {', '.join(differ)}")
    return 1 if differ else 0


if __name__ == "__main__":
    sys.exit(main())
