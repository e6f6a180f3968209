"""Replay at season scale (issue 19): `frostwatch replay` of a typical year and of a generated spring,
as a grower runs it (the installed script, a new store, no report), under /usr/bin/time -v.

    python -m bench.replay [--quick] [--repeats=N] [--jobs=N]     (or: python -m bench replay)

- TMY year: pvlib's Greensboro TMY3 file as a sensor log (bench/tmy.py: 52,560 readings of one
  screen-height station, hourly, one block). Target <= 30 s.
- spring: bench/spring.py's 60 nights of 20 sensors each minute (1,728,000 readings and 20
  broken rows, five blocks). Targets <= 5 min and peak memory (maximum resident set size)
  <= 500 MB. --quick replays its first 10 nights.

Each figure is the median wall time of `--repeats` runs (3; 1 with --quick), min and max beside
it, against floors measured in the same run: a process that reads the same CSV with pandas
(`pandas.read_csv`, times parsed) and exits, timed and measured the same way. The machine's load
average is recorded with each run (other work on a shared machine shows there), and the CPU time
of the replay and its worker processes (user + system: what the load does not add).

A replay shares a season's nights among processes (`--jobs`, default the cores up to 4;
`--jobs=N` here passes N on). /usr/bin/time's maximum resident set size is that of the largest
single process; the whole replay's memory is also sampled every 0.2 s as the sum over the replay
and its workers of their proportional set size (PSS: pages they share counted once), reported as
`tree_pss_mb` beside the peak figure.
"""

from __future__ import annotations

import json
import os
import re
import shutil
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

TARGET_TMY_S = 30.0
TARGET_SPRING_S = 300.0
TARGET_SPRING_MB = 500.0
FLOOR_CODE = ("import sys, pandas; f = pandas.read_csv(sys.argv[1]); "
              "pandas.to_datetime(f['time'], format='ISO8601', utc=True, errors='coerce'); print(len(f))")


def _script() -> list[str]:
    s = Path(sys.executable).with_name("frostwatch")
    return [str(s)] if s.exists() else [sys.executable, "-m", "frostwatch"]


def _descendants(pid: int) -> list[int]:
    """pid's child processes, their children, ... (from /proc)."""
    parent: dict[int, list[int]] = {}
    for d in Path("/proc").iterdir():
        if not d.name.isdigit():
            continue
        try:
            stat = (d / "stat").read_text()
        except OSError:
            continue
        ppid = int(stat.rsplit(")", 1)[1].split()[1])
        parent.setdefault(ppid, []).append(int(d.name))
    out, todo = [], [pid]
    while todo:
        kids = parent.get(todo.pop(), [])
        out += kids
        todo += kids
    return out


def _pss_mb(pids: list[int]) -> float:
    """Sum of the processes' proportional set size (MB): shared pages counted once in all."""
    kb = 0
    for pid in pids:
        try:
            text = Path(f"/proc/{pid}/smaps_rollup").read_text()
        except OSError:
            continue
        m = re.search(r"^Pss:\s+(\d+) kB", text, re.M)
        kb += int(m.group(1)) if m else 0
    return kb * 1024 / 1e6


def timed_process(argv: list[str], cwd: Path | None = None, sample_tree: bool = False) -> dict:
    """Wall time (s), peak resident memory (MB, /usr/bin/time -v's maximum resident set size: the
    largest single process), CPU time of the process and its children (user and system, s) and,
    with `sample_tree`, the peak of the whole process tree's PSS sampled every 0.2 s."""
    time_v = shutil.which("time") or "/usr/bin/time"
    load = os.getloadavg()[0]
    t = time.perf_counter()
    tree_peak = 0.0
    with tempfile.TemporaryFile("w+") as out, tempfile.TemporaryFile("w+") as err:
        p = subprocess.Popen([time_v, "-v", *argv], stdout=out, stderr=err, text=True, cwd=cwd)
        while True:
            try:
                p.wait(timeout=0.2)
                break
            except subprocess.TimeoutExpired:
                if sample_tree:
                    tree_peak = max(tree_peak, _pss_mb(_descendants(p.pid)))
                if time.perf_counter() - t > 3600:
                    p.kill()
                    raise RuntimeError(f"{' '.join(argv[:4])} ... ran over an hour") from None
        wall = time.perf_counter() - t
        out.seek(0)
        err.seek(0)
        stdout, stderr = out.read(), err.read()
    if p.returncode != 0:
        raise RuntimeError(f"{' '.join(argv[:4])} ... exited {p.returncode}: {stderr[-1500:]}")
    m = re.search(r"Maximum resident set size \(kbytes\): (\d+)", stderr)
    user = re.search(r"User time \(seconds\): ([\d.]+)", stderr)
    system = re.search(r"System time \(seconds\): ([\d.]+)", stderr)
    r = {"wall_s": round(wall, 2), "peak_mb": round(int(m.group(1)) * 1024 / 1e6, 1) if m else None,
         "user_s": float(user.group(1)) if user else None, "sys_s": float(system.group(1)) if system else None,
         "load_1min": round(load, 2), "stdout": stdout}
    if sample_tree:
        r["tree_pss_mb"] = round(tree_peak, 1)
    return r


def _replay(cfg: Path, log: Path, jobs: int | None = None) -> dict:
    db = cfg.parent / (cfg.stem + ".db")
    for suffix in ("", "-wal", "-shm"):
        Path(str(db) + suffix).unlink(missing_ok=True)
    extra = [] if jobs is None else ["--jobs", str(jobs)]
    r = timed_process(_script() + ["replay", "--config", str(cfg), "--no-report", *extra, str(log)], sample_tree=True)
    head = r.pop("stdout").splitlines()[0]
    r["summary"] = head
    return r


def _stats(runs: list[dict], key: str) -> dict:
    xs = [r[key] for r in runs]
    return {"min": min(xs), "median": statistics.median(xs), "max": max(xs)}


def _case(name: str, cfg: Path, log: Path, repeats: int, say, jobs: int | None = None) -> dict:
    floor = [timed_process([sys.executable, "-c", FLOOR_CODE, str(log)]) for _ in range(repeats)]
    for f in floor:
        f.pop("stdout")
    runs = []
    for k in range(repeats):
        r = _replay(cfg, log, jobs)
        r["cpu_s"] = round((r["user_s"] or 0.0) + (r["sys_s"] or 0.0), 2)
        runs.append(r)
        say(f"  {name} run {k + 1}/{repeats}: {r['wall_s']:.1f} s wall ({r['cpu_s']:.1f} s CPU, all processes), "
            f"peak {r['peak_mb']} MB (all processes: {r['tree_pss_mb']} MB PSS), load {r['load_1min']}; {r['summary']}")
    out = {"log": str(log), "log_mib": round(log.stat().st_size / 2**20, 1), "jobs": jobs, "runs": runs,
           "floor_runs": floor, "wall_s": _stats(runs, "wall_s"), "cpu_s": _stats(runs, "cpu_s"),
           "peak_mb": _stats(runs, "peak_mb"), "tree_pss_mb": _stats(runs, "tree_pss_mb"),
           "floor_wall_s": _stats(floor, "wall_s"), "floor_peak_mb": _stats(floor, "peak_mb")}
    say(f"  {name}: median {out['wall_s']['median']:.1f} s (min {out['wall_s']['min']:.1f}, max {out['wall_s']['max']:.1f}; "
        f"CPU {out['cpu_s']['median']:.1f} s), peak {out['peak_mb']['max']} MB (all processes {out['tree_pss_mb']['max']} MB PSS); "
        f"floor (pandas reads the CSV) {out['floor_wall_s']['median']:.2f} s, {out['floor_peak_mb']['max']} MB")
    return out


def run(verbose: bool = True, quick: bool = False, out_dir: Path | None = None, repeats: int | None = None,
        jobs: int | None = None) -> dict:
    from bench import spring, tmy

    say = print if verbose else (lambda *a, **k: None)
    repeats = repeats or (1 if quick else 3)
    work = Path(out_dir or tempfile.mkdtemp(prefix="frostwatch-bench-replay-"))
    t_log, t_cfg, _ = tmy.write_log_and_config(tmy.SITES["greensboro"], work / "tmy")
    nights = 10 if quick else 60
    s_log, s_cfg, n = spring.write_spring(work / "spring", nights=nights)
    say(f"  logs: TMY year {sum(1 for _ in t_log.open()) - 1:,} readings; spring {nights} nights, {n:,} readings")
    res = {"repeats": repeats, "quick": quick, "spring_nights": nights, "spring_readings": n, "jobs": jobs,
           "cores": os.cpu_count(), "tmy": _case("TMY year", t_cfg, t_log, repeats, say, jobs),
           "spring": _case(f"spring ({nights} nights)", s_cfg, s_log, repeats, say, jobs)}
    t, s = res["tmy"], res["spring"]
    tm, sm = t["wall_s"]["median"], s["wall_s"]["median"]
    spring_target = TARGET_SPRING_S * nights / 60.0
    res["figures"] = [
        {"figure": f"replay of the Greensboro TMY3 year (52,560 readings; median of {repeats}; CPU "
                   f"{t['cpu_s']['median']:g} s, load {t['runs'][0]['load_1min']}-{t['runs'][-1]['load_1min']})", "value": tm, "unit": "s",
         "target": f"<= {TARGET_TMY_S:g} s", "floor": t["floor_wall_s"]["median"],
         "floor_label": "pandas reads the same CSV (process)", "ratio": round(tm / t["floor_wall_s"]["median"], 1),
         "pass": tm <= TARGET_TMY_S},
        {"figure": f"replay of a {nights}-night spring, 20 sensors each minute ({n:,} readings; median of {repeats})",
         "value": sm, "unit": "s", "target": f"<= {spring_target:g} s", "floor": s["floor_wall_s"]["median"],
         "floor_label": "pandas reads the same CSV (process)", "ratio": round(sm / s["floor_wall_s"]["median"], 1),
         "pass": sm <= spring_target},
        {"figure": f"peak memory of that replay (/usr/bin/time -v: its largest process, max of {repeats}; all its "
                   f"processes together at most {s['tree_pss_mb']['max']} MB PSS)", "value": s["peak_mb"]["max"],
         "unit": "MB", "target": f"<= {TARGET_SPRING_MB:g} MB", "floor": s["floor_peak_mb"]["max"],
         "floor_label": "pandas reads the same CSV (process)",
         "ratio": round(s["peak_mb"]["max"] / s["floor_peak_mb"]["max"], 1), "pass": s["peak_mb"]["max"] <= TARGET_SPRING_MB},
    ]
    if out_dir is None:
        shutil.rmtree(work, ignore_errors=True)
    return res


def main(argv: list[str]) -> int:
    reps = next((int(a.split("=", 1)[1]) for a in argv if a.startswith("--repeats=")), None)
    jobs = next((int(a.split("=", 1)[1]) for a in argv if a.startswith("--jobs=")), None)
    res = run(quick="--quick" in argv, repeats=reps, jobs=jobs)
    print(json.dumps(res["figures"], indent=2))
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))
