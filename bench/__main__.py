"""Run frostwatch benchmarks: `python -m bench [--quick] [NAME ...]`.

A benchmark is a module `bench/<name>.py` with a `run(verbose=True, ...) -> dict` function; every
such module in this folder is found and run (helpers without `run`, and `soak`, which runs for a
chosen time, are left out). `run` may accept `quick` (a few-minute run) and `out_dir`.

A result may carry "figures": a list of rows
    {"figure", "value", "unit", "target", "floor", "floor_label", "ratio", "pass"}
(the floor is measured in the same run). Modules that return no figures get an adapter here when
one is known (forecast_skill); otherwise their result is kept in the JSON and shown as one row.
At the end one table of every figure is printed and everything goes to bench/results/latest.json
with the time it was run and the machine it ran on. The exit code is 0 when every benchmark ran
(whether each figure meets its target is in the table; a benchmark that crashed gives 1).
"""

from __future__ import annotations

import datetime as dt
import importlib
import inspect
import json
import os
import platform
import sys
import time
import traceback
from pathlib import Path

HERE = Path(__file__).resolve().parent
RESULTS = HERE / "results"
NOT_BENCHMARKS = {"__init__", "__main__", "synth", "soak"}
ORDER = ["ingest", "alert_latency", "evaluation", "storage", "memory", "startup", "replay", "forecast_skill", "fleet"]


def discover() -> list[str]:
    names = [p.stem for p in HERE.glob("*.py") if p.stem not in NOT_BENCHMARKS and not p.stem.startswith("_")]
    names = [n for n in names if "def run(" in (HERE / f"{n}.py").read_text(encoding="utf-8")]
    return sorted(names, key=lambda n: (ORDER.index(n) if n in ORDER else len(ORDER), n))


# kept for callers of the first runner
BENCHMARKS = discover()


def forecast_skill_figures(res: dict) -> list[dict]:
    """Rows for the forecast skill result (bench/forecast_skill.py): per site and class, the
    dusk forecast and the projection 2 h before the minimum beside the best simple method."""
    rows = []
    for site, s in res.get("sites", {}).items():
        for cname, c in s.get("classes", {}).items():
            if cname == "all":
                continue
            fw = c["frostwatch"]
            base = min(c[k]["mae_c"] for k in ("regression_loo", "regression_walk_forward", "mean_drop_walk_forward") if c.get(k))
            rows.append({"figure": f"{site}: dusk forecast MAE, {cname} nights (n={c['nights']})", "value": fw["mae_c"],
                         "unit": "degC", "target": "below every simple method", "floor": base,
                         "floor_label": "best simple method MAE", "ratio": round(fw["mae_c"] / base, 2) if base else None,
                         "pass": fw["mae_c"] < base and abs(fw["bias_c"]) <= 0.2})
            p, n = c.get("projection_2h_before_min"), c.get("naive_2h_before_min")
            if p and n:
                rows.append({"figure": f"{site}: projection 2 h before the minimum, {cname} nights", "value": p["mae_c"],
                             "unit": "degC", "target": "below the naive drop", "floor": n["mae_c"],
                             "floor_label": "now - mean 2-h drop of earlier nights", "ratio": round(p["mae_c"] / n["mae_c"], 2),
                             "pass": p["mae_c"] < n["mae_c"]})
        t = s.get("timing")
        if t:
            ratio = t.get("ratio_to_floor")
            rows.append({"figure": f"{site}: backtest of the year (read + parse + walk-forward)", "value": t["backtest_wall_s"],
                         "unit": "s", "target": "<= 3x the floor", "floor": t["pandas_read_floor_s"],
                         "floor_label": "pandas read_csv + times of the same CSV", "ratio": ratio,
                         "pass": ratio is not None and ratio <= 3.0})
            if t.get("cpu_ratio_to_floor") is not None:
                ratio = t["cpu_ratio_to_floor"]
                rows.append({"figure": f"{site}: the same, CPU time (load average {t.get('load_average_1min')})",
                             "value": t["backtest_cpu_s"], "unit": "s", "target": "<= 3x the floor",
                             "floor": t["pandas_read_floor_cpu_s"], "floor_label": "the same read's CPU time",
                             "ratio": ratio, "pass": ratio <= 3.0})
            if t.get("process_wall_s") is not None:
                ratio = t["process_ratio_to_floor"]
                rows.append({"figure": f"{site}: `frostwatch backtest --json` as a process", "value": t["process_wall_s"],
                             "unit": "s", "target": "<= 3x the floor", "floor": t["process_pandas_floor_s"],
                             "floor_label": "a python process reading the same CSV with pandas", "ratio": ratio,
                             "pass": ratio <= 3.0})
    return rows


def ingest_figures(res: dict) -> list[dict]:
    """Rows for bench/ingest.py (issue 4): rate, disk and memory parts."""
    rows = []
    r = res.get("rate")
    if r:
        rows.append({"figure": "ingest through the real broker and daemon", "value": r["daemon_readings_per_s"],
                     "unit": "readings/s", "target": r.get("target", ""), "floor": r["floor_readings_per_s"],
                     "floor_label": "bare counting subscriber", "ratio": r.get("ratio_to_floor"), "pass": r.get("pass")})
    d = res.get("disk")
    if d:
        rows.append({"figure": f"daemon bytes written per day ({d.get('seconds')} s real run)", "value": d["mib_per_day"],
                     "unit": "MiB/day", "target": d.get("target", ""), "floor": None, "floor_label": "", "ratio": None,
                     "pass": d.get("pass")})
    m = res.get("memory")
    if m:
        rows.append({"figure": f"daemon RSS peak ({m.get('seconds')} s at {m.get('readings_per_s')}/s)",
                     "value": m["rss_mb_peak"], "unit": "MB", "target": m.get("target", ""), "floor": None,
                     "floor_label": "", "ratio": None, "pass": m.get("pass")})
    return rows


def alert_latency_figures(res: dict) -> list[dict]:
    """Rows for bench/alert_latency.py (issue 5)."""
    return [{"figure": "alert latency, reading in to SMTP server (median)", "value": res["median_s"], "unit": "s",
             "target": f"<= {res.get('target_median_s')} s", "floor": res.get("floor_median_s"),
             "floor_label": "smtplib alone", "ratio": res.get("ratio_to_floor"), "pass": res.get("pass")}]


ADAPTERS = {"forecast_skill": forecast_skill_figures, "ingest": ingest_figures, "alert_latency": alert_latency_figures}


def figures_of(name: str, res) -> list[dict]:
    if isinstance(res, dict) and isinstance(res.get("figures"), list):
        return res["figures"]
    if name in ADAPTERS and isinstance(res, dict):
        try:
            return ADAPTERS[name](res)
        except Exception:  # noqa: BLE001 - a changed result shape must not lose the run
            traceback.print_exc()
    return [{"figure": f"{name} (see bench/results/latest.json)", "value": None, "unit": "", "target": "",
             "floor": None, "floor_label": "", "ratio": None, "pass": None}]


def _fmt(v) -> str:
    if v is None:
        return "-"
    if isinstance(v, float):
        return f"{v:.3g}" if abs(v) < 100 else f"{v:.0f}"
    return str(v)


def table(rows: list[tuple[str, dict]]) -> str:
    head = ("benchmark", "figure", "value", "target", "floor (same run)", "ratio", "pass")
    body = []
    for name, f in rows:
        val = f"{_fmt(f.get('value'))} {f.get('unit', '')}".strip()
        floor = _fmt(f.get("floor"))
        if f.get("floor") is not None and f.get("floor_label"):
            floor = f"{floor} ({f['floor_label']})"
        p = f.get("pass")
        body.append((name, f.get("figure", ""), val, f.get("target", ""), floor, _fmt(f.get("ratio")),
                     "yes" if p is True else "NO" if p is False else "-"))
    widths = [max(len(r[i]) for r in [head, *body]) for i in range(len(head))]
    line = lambda r: "| " + " | ".join(c.ljust(w) for c, w in zip(r, widths, strict=True)) + " |"  # noqa: E731
    return "\n".join([line(head), "|" + "|".join("-" * (w + 2) for w in widths) + "|", *map(line, body)])


def main(argv: list[str]) -> int:
    quick = "--quick" in argv
    full_memory = "--full-hour" in argv
    # --disk-s=N: the whole daemon's disk runs of bench.ingest (1800 for the honest daily figure)
    disk_s = next((float(a.split("=", 1)[1]) for a in argv if a.startswith("--disk-s=")), None)
    wanted = [a for a in argv if not a.startswith("--")]
    known = discover()
    unknown = [n for n in wanted if n not in known]
    if unknown:
        print(f"unknown benchmark(s): {', '.join(unknown)}; known: {', '.join(known)}", file=sys.stderr)
        return 2
    names = wanted or known
    out = {
        "run_at_utc": dt.datetime.now(dt.UTC).isoformat(timespec="seconds"),
        "quick": quick,
        "machine": {"python": platform.python_version(), "platform": platform.platform(),
                    "processor": platform.machine(), "cpus": os.cpu_count()},
        "benchmarks": {},
    }
    latest = RESULTS / "latest.json"
    if latest.exists() and wanted:
        try:
            out["benchmarks"] = json.loads(latest.read_text(encoding="utf-8")).get("benchmarks", {})
        except (OSError, ValueError):
            pass
    failed = []
    for name in names:
        print(f"== {name}", flush=True)
        t = time.perf_counter()
        try:
            mod = importlib.import_module(f"bench.{name}")
            params = inspect.signature(mod.run).parameters
            kw = {"verbose": True}
            if "quick" in params:
                kw["quick"] = quick
            if "full_hour" in params:
                kw["full_hour"] = full_memory
            if "disk_s" in params and disk_s:
                kw["disk_s"] = disk_s
            res = mod.run(**kw)
        except Exception as exc:  # noqa: BLE001 - one broken benchmark must not hide the others
            traceback.print_exc()
            failed.append(name)
            res = {"error": f"{type(exc).__name__}: {exc}"}
        if isinstance(res, dict):
            res.setdefault("bench_wall_s", round(time.perf_counter() - t, 1))
        out["benchmarks"][name] = res
        print(flush=True)
    rows = []
    for name, res in out["benchmarks"].items():
        if isinstance(res, dict) and "error" in res and "figures" not in res:
            rows.append((name, {"figure": f"FAILED: {res['error'][:80]}", "pass": False}))
            continue
        rows += [(name, f) for f in figures_of(name, res)]
    out["table"] = [{"benchmark": n, **f} for n, f in rows]
    RESULTS.mkdir(parents=True, exist_ok=True)
    latest.write_text(json.dumps(out, indent=2, default=str) + "\n", encoding="utf-8")
    print(table(rows))
    print(f"\nall results: {latest}" + (" (quick run)" if quick else ""))
    return 1 if failed else 0


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))
