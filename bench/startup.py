"""Start-up of the quick commands: wall time and what they import (issue 19, item 6).

    python -m bench.startup [--quick]          (or: python -m bench startup)

Each command is the installed `frostwatch` script run as a new process: `--help`,
`calc wet-bulb`, `check-config` and `status` (on the demo farm's config with an empty store).
Timed as wall time over repeated runs (min/median/max) against floors measured in the same run:
for `--help` the interpreter importing argparse; for the others, argparse and numpy, which their
physics needs (numpy alone is most of their start-up). What
each command imports is read from `python -X importtime` of the same command: the number of
modules, the libraries among them that a quick command should not need (matplotlib, pandas,
sqlite_utils, paho, apscheduler) and the import time of frostwatch's own modules.
Tests check the imports (tests/test_startup_imports.py); this measures the time.
"""

from __future__ import annotations

import json
import re
import shutil
import statistics
import subprocess
import sys
import tempfile
import time
from importlib import resources
from pathlib import Path

HEAVY = ("matplotlib", "pandas", "sqlite_utils", "paho", "apscheduler")
# a quick command should start within this many times its floor: what it must import anyway
# (a Pi is several times slower at both, so the ratio carries over)
TARGET_RATIO = 3.0
FLOORS = {"help": "import argparse", "numpy": "import argparse, numpy"}


def _script() -> list[str]:
    """The installed console script when it sits beside this interpreter, else `python -m frostwatch`."""
    s = Path(sys.executable).with_name("frostwatch")
    return [str(s)] if s.exists() else [sys.executable, "-m", "frostwatch"]


def _time(argv: list[str], repeats: int) -> list[float]:
    out = []
    for _ in range(repeats):
        t = time.perf_counter()
        p = subprocess.run(argv, capture_output=True, text=True, timeout=120)
        out.append(time.perf_counter() - t)
        if p.returncode != 0:
            raise RuntimeError(f"{' '.join(argv)} exited {p.returncode}: {p.stderr.strip()[-300:]}")
    return out


def _imports(args: list[str]) -> dict:
    code = "import sys; from frostwatch.cli import main; sys.exit(main(sys.argv[1:]))"
    # -P: not the current folder first on sys.path (a checkout there would shadow the installed package)
    p = subprocess.run([sys.executable, "-P", "-X", "importtime", "-c", code, *args], capture_output=True, text=True,
                       timeout=120)
    mods, own_us = [], 0
    for line in p.stderr.splitlines():
        m = re.match(r"import time:\s+(\d+) \|\s+(\d+) \|( *)(\S+)", line)
        if m:
            mods.append(m[4])
            if m[4].startswith("frostwatch"):
                own_us += int(m[1])
    heavy = sorted({m.split(".")[0] for m in mods if m.split(".")[0] in HEAVY})
    return {"modules": len(mods), "heavy": heavy, "numpy": "numpy" in mods, "frostwatch_self_import_ms": round(own_us / 1000, 1)}


def _demo_site(work: Path) -> Path:
    from frostwatch.config import load_config
    from frostwatch.store import Store

    cfg_path = work / "demo-farm.toml"
    cfg_path.write_text(resources.files("frostwatch.sample_logs").joinpath("demo-farm.toml").read_text(encoding="utf-8"),
                        encoding="utf-8")
    Store.open(load_config(cfg_path).storage.path).close()
    return cfg_path


def run(verbose: bool = True, quick: bool = False) -> dict:
    say = print if verbose else (lambda *a, **k: None)
    repeats = 5 if quick else 11
    work = Path(tempfile.mkdtemp(prefix="frostwatch-bench-startup-"))
    try:
        cfg = str(_demo_site(work))
        commands = {
            "--help": ("help", ["--help"]),
            "calc wet-bulb": ("numpy", ["calc", "wet-bulb", "--air-temp", "2", "--dew-point", "-1"]),
            "check-config": ("numpy", ["check-config", "--config", cfg]),
            "status": ("numpy", ["status", "--config", cfg]),
        }
        # interleaved: one run of every floor and command per round, so that load from other work
        # on the machine falls on floors and commands alike
        argvs = {f"floor:{k}": [sys.executable, "-c", code] for k, code in FLOORS.items()}
        argvs.update({name: _script() + args for name, (_fk, args) in commands.items()})
        times: dict[str, list[float]] = {k: [] for k in argvs}
        for _ in range(repeats):
            for k, argv in argvs.items():
                times[k] += _time(argv, 1)
        floors = {}
        for k, code in FLOORS.items():
            ts = times[f"floor:{k}"]
            floors[k] = {"code": code, "median_ms": round(1000 * statistics.median(ts), 1),
                         "min_ms": round(1000 * min(ts), 1), "max_ms": round(1000 * max(ts), 1)}
            say(f"  floor `python -c {code!r}`: median {floors[k]['median_ms']:.0f} ms "
                f"(min {floors[k]['min_ms']:.0f}, max {floors[k]['max_ms']:.0f})")
        results, figures = {}, []
        for name, (fk, args) in commands.items():
            f_med = floors[fk]["median_ms"] / 1000
            ts = times[name]
            imp = _imports(args)
            med = statistics.median(ts)
            r = {"median_ms": round(1000 * med, 1), "min_ms": round(1000 * min(ts), 1), "max_ms": round(1000 * max(ts), 1),
                 "ratio_to_floor": round(med / f_med, 2), **imp}
            results[name] = r
            say(f"  {name:<14} median {r['median_ms']:6.0f} ms (min {r['min_ms']:.0f}, max {r['max_ms']:.0f}); "
                f"{r['ratio_to_floor']:.1f}x its floor; {imp['modules']} modules"
                f"{' incl. numpy' if imp['numpy'] else ''}; frostwatch's own {imp['frostwatch_self_import_ms']} ms; "
                f"heavy: {', '.join(imp['heavy']) or 'none'}")
            figures.append({
                "figure": f"start-up of `frostwatch {name}` (median of {repeats})", "value": r["median_ms"], "unit": "ms",
                "target": f"no {'/'.join(HEAVY)}; <= {TARGET_RATIO:g}x floor", "floor": floors[fk]["median_ms"],
                "floor_label": f"python -c {FLOORS[fk]!r}", "ratio": r["ratio_to_floor"],
                "pass": not imp["heavy"] and r["ratio_to_floor"] <= TARGET_RATIO,
            })
        return {"figures": figures, "floors": floors, "commands": results, "repeats": repeats}
    finally:
        shutil.rmtree(work, ignore_errors=True)


def main(argv: list[str]) -> int:
    res = run(quick="--quick" in argv)
    print(json.dumps(res["figures"], indent=2))
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))
