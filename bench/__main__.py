"""Run frostwatch benchmarks: `python -m bench [NAME ...]`.

A benchmark is a module `bench/<name>.py` with a `run(verbose=True) -> dict` function; add its
name to BENCHMARKS. Each result is printed by the module and collected into
bench/results/latest.json with the time it was run and the machine it ran on.
"""

from __future__ import annotations

import datetime as dt
import importlib
import json
import platform
import sys
from pathlib import Path

BENCHMARKS = ["forecast_skill"]
RESULTS = Path(__file__).resolve().parent / "results"


def main(argv: list[str]) -> int:
    names = argv or BENCHMARKS
    unknown = [n for n in names if n not in BENCHMARKS]
    if unknown:
        print(f"unknown benchmark(s): {', '.join(unknown)}; known: {', '.join(BENCHMARKS)}", file=sys.stderr)
        return 2
    out = {
        "run_at_utc": dt.datetime.now(dt.UTC).isoformat(timespec="seconds"),
        "machine": {"python": platform.python_version(), "platform": platform.platform(), "processor": platform.machine()},
        "benchmarks": {},
    }
    latest = RESULTS / "latest.json"
    if latest.exists() and argv:
        try:
            out["benchmarks"] = json.loads(latest.read_text(encoding="utf-8")).get("benchmarks", {})
        except (OSError, ValueError):
            pass
    for name in names:
        print(f"== {name}")
        mod = importlib.import_module(f"bench.{name}")
        out["benchmarks"][name] = mod.run(verbose=True)
        print()
    RESULTS.mkdir(parents=True, exist_ok=True)
    latest.write_text(json.dumps(out, indent=2) + "\n", encoding="utf-8")
    print(f"all results: {latest}")
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))
