"""One evaluation cycle, and how its cost grows with blocks and with the history in the store.

    /work/venv/bin/python -m bench.evaluation [--quick]      (or: python -m bench evaluation)

What is timed is the daemon's own cycle, `frostwatch.daemon.Core.evaluate`: a snapshot of the
night cache (frostwatch.nightcache: the window from sunset - 6 h, read from the store once a night
and then fed with every committed reading), `pipeline.Evaluator.evaluate` (projection, advice and
alert rules for every block), the projections and the blocks' status document written in one
transaction. Between cycles two minutes of readings of every station are committed and pushed to
the cache, as the ingest writer does (push_ms). Measured in the same run on the same store, for
scale: the bare SQL read of the same window (`SELECT ... WHERE time_utc_ms BETWEEN ...` fetched to
Python tuples, floor_sql_ms), which the old cycle paid every time, and that old path's
`Store.readings_window` (window_read_ms).

- cycle: 50 blocks of 4 stations (200 stations), a radiation night of 1-minute readings (air
  temperature and humidity at crop height, temperature and wind on the tower), evaluated at
  02:00 local; median of repeated cycles, target <= 50 ms. Printed beside it: the fastest cycle,
  the median CPU time of this process (what other work on a shared machine does not add) and
  the load average.
- blocks curve: 1, 10, 50, 200 blocks (same night); at most linear: the time per block at 200
  must not exceed 1.25 x the time per block at 50.
- history curve: the same 50-sensor site (12 blocks of 4 + 2 site-wide sensors) with 1, 30 and
  365 days of 1-minute readings held in the store before the night; flat: the 365-day median
  within 1.25 x the 1-day median (an evaluation reads a window, never the whole table).
"""

from __future__ import annotations

import datetime as dt
import json
import os
import statistics
import sys
import tempfile
import time
from pathlib import Path

from bench import synth

TARGET_CYCLE_MS = 50.0
LINEAR_TOLERANCE = 1.25
FLAT_TOLERANCE = 1.25


class _NullOutbox:
    def submit(self, alerts, now):
        pass

    def submit_health(self, *a, **k):
        return ""


def _core(cfg, store):
    from frostwatch.daemon import Core, daemon_settings

    return Core(cfg, daemon_settings(cfg), store, _NullOutbox(), clock=lambda: None)


def _bare_window_read(store, start: dt.datetime, end: dt.datetime) -> int:
    from frostwatch.store import to_ms

    with store.lock:
        rows = store.conn.execute(
            "SELECT time_utc_ms, station, quantity, value FROM readings WHERE time_utc_ms BETWEEN ? AND ?",
            (to_ms(start), to_ms(end)),
        ).fetchall()
    return len(rows)


def _new_readings(cfg, start: dt.datetime, end: dt.datetime, sunset: dt.datetime) -> list:
    """Every station's readings with start < time <= end, as the ingest writer commits them."""
    from frostwatch.models import Reading
    from frostwatch.store import from_ms

    return [Reading(from_ms(m), sid, q, v) for m, sid, q, v, _ in
            synth.station_rows(cfg, start + dt.timedelta(seconds=1), end, sunset=sunset)]


def time_cycles(cfg, db: Path, repeats: int) -> dict:
    """Median times (ms) of the daemon's cycle and its parts, against the bare SQL floor.

    The store holds the night up to the first evaluation instant. Each cycle then plays what
    happens in the daemon in two minutes: the ingest writer commits every station's new readings
    (untimed) and pushes them to the night cache (`Core.readings_committed`, timed as push_ms),
    then `Core.evaluate` runs (timed as cycle_ms: cache snapshot, Evaluator.evaluate, the
    projections and blocks document in one transaction). For comparison, in the same cycle: the
    old path's store window read (window_read_ms) and the bare SQL read of the same window
    (floor_sql_ms), and `Evaluator.evaluate` alone on the cached series (compute_ms)."""
    from frostwatch.pipeline import LOOKBACK
    from frostwatch.store import Store

    start, sunset, at = synth.night_bounds(cfg)
    store = Store.open(db)
    try:
        core = _core(cfg, store)
        night = core.evaluator.night_at(at)
        cycle, cpu, read, floor, compute, push = [], [], [], [], [], []
        rows = 0
        t = time.perf_counter()
        core.evaluate(at, "warm-up")  # first call: imports, caches, and the one store load of the night
        load_ms = round(1000 * (time.perf_counter() - t), 1)
        prev = at
        for k in range(repeats):
            now = at + dt.timedelta(minutes=2 * (k + 1))
            fresh = _new_readings(cfg, prev, now, sunset)
            store.add_readings(fresh, "bench")  # the writer's commit (not part of the cycle)
            t = time.perf_counter()
            core.readings_committed(fresh)
            push.append(time.perf_counter() - t)
            prev = now
            t = time.perf_counter()
            rows = _bare_window_read(store, night.sunset_utc - LOOKBACK, now)
            floor.append(time.perf_counter() - t)
            t = time.perf_counter()
            store.readings_window(night.sunset_utc - LOOKBACK, now)
            read.append(time.perf_counter() - t)
            series = core.cache.series(now)
            t = time.perf_counter()
            core.evaluator.evaluate(now - dt.timedelta(minutes=1), series)
            compute.append(time.perf_counter() - t)
            t, c = time.perf_counter(), time.process_time()
            core.evaluate(now, "bench")
            cycle.append(time.perf_counter() - t)
            cpu.append(time.process_time() - c)  # this process's CPU: what other work on the machine does not add
        assert core.cache.loads == 1, "the cycle re-read the window from the store"
        ms = lambda xs: round(1000 * statistics.median(xs), 2)  # noqa: E731
        return {"blocks": len(cfg.blocks), "stations": len(cfg.stations), "window_rows": rows,
                "cycle_ms": ms(cycle), "window_read_ms": ms(read), "floor_sql_ms": ms(floor),
                "compute_ms": ms(compute), "push_ms": ms(push), "cache_load_ms": load_ms,
                "cache_loads": core.cache.loads, "readings_per_push": len(fresh),
                "cycle_min_ms": round(1000 * min(cycle), 2), "cycle_cpu_ms": ms(cpu), "repeats": repeats,
                "load_1min": round(os.getloadavg()[0], 2)}
    finally:
        store.close()


def night_site(n_blocks: int, work: Path, extra: int = 0):
    d = work / f"blocks-{n_blocks}"
    d.mkdir(parents=True, exist_ok=True)
    cfg = synth.make_config(n_blocks, d, extra)
    start, sunset, at = synth.night_bounds(cfg)
    t = time.perf_counter()
    n = synth.fill_store(cfg.storage.path, synth.station_rows(cfg, start, at, sunset=sunset))
    return cfg, n, time.perf_counter() - t


def history_site(days: int, work: Path):
    """12 blocks x 4 + 2 site sensors = 50 sensors; `days` of air temperature each minute before
    the night, then the night itself as in the cycle benchmark."""
    d = work / f"history-{days}"
    d.mkdir(parents=True, exist_ok=True)
    cfg = synth.make_config(12, d, extra_stations=2)
    start, sunset, at = synth.night_bounds(cfg)
    t0 = time.perf_counter()

    def rows():
        step_ms = synth.STEP_S * 1000
        first = int((at - dt.timedelta(days=days)).timestamp() * 1000) // step_ms * step_ms
        stop = int(start.timestamp() * 1000)
        ids = [s.id for s in cfg.stations]
        for m in range(first, stop, step_ms):
            v = round(8.0 + 6.0 * ((m // step_ms) % 1440) / 1440.0, 2)
            for sid in ids:
                yield (m, sid, "air_temperature", v, "bench")
        yield from synth.station_rows(cfg, start, at, sunset=sunset)

    n = synth.fill_store(cfg.storage.path, rows())
    return cfg, n, time.perf_counter() - t0


def run(verbose: bool = True, quick: bool = False, out_dir: Path | None = None) -> dict:
    work = Path(out_dir or tempfile.mkdtemp(prefix="frostwatch-bench-eval-"))
    repeats = 7 if quick else 21
    say = print if verbose else (lambda *a, **k: None)

    blocks_curve = []
    for n in (1, 10, 50, 200):
        cfg, rows, gen_s = night_site(n, work)
        r = time_cycles(cfg, cfg.storage.path, repeats if n <= 50 else max(3, repeats // 3))
        r["generated_rows"], r["generate_s"] = rows, round(gen_s, 1)
        r["per_block_ms"] = round(r["cycle_ms"] / n, 3)
        blocks_curve.append(r)
        say(f"  blocks {n:>4}: cycle {r['cycle_ms']:>8.1f} ms  (min {r['cycle_min_ms']:.1f}, CPU {r['cycle_cpu_ms']:.1f}, load {r['load_1min']}; "
            f"{r['per_block_ms']:.2f} ms/block; "
            f"compute {r['compute_ms']:.1f} ms, push {r['push_ms']:.2f} ms; old path's window read {r['window_read_ms']:.1f} ms, "
            f"bare SQL floor {r['floor_sql_ms']:.1f} ms, {r['window_rows']} rows; one cache load {r['cache_load_ms']:.0f} ms)")
    main = next(r for r in blocks_curve if r["blocks"] == 50)
    b50 = main["per_block_ms"]
    b200 = next(r for r in blocks_curve if r["blocks"] == 200)["per_block_ms"]

    history_curve = []
    days_list = (1, 30) if quick else (1, 30, 365)
    for days in days_list:
        cfg, rows, gen_s = history_site(days, work)
        r = time_cycles(cfg, cfg.storage.path, repeats)
        r.update(days=days, store_rows=rows, generate_s=round(gen_s, 1),
                 store_mib=round(cfg.storage.path.stat().st_size / 2**20, 1))
        history_curve.append(r)
        say(f"  history {days:>3} d: cycle {r['cycle_ms']:>7.1f} ms  (store {rows:,} rows, {r['store_mib']} MiB; "
            f"window read {r['window_read_ms']:.1f} ms; generated in {gen_s:.0f} s)")
        cfg.storage.path.unlink(missing_ok=True)  # the big ones take room
    h_first, h_last = history_curve[0], history_curve[-1]
    flat_ratio = round(h_last["cycle_ms"] / h_first["cycle_ms"], 2)
    lin_ratio = round(b200 / b50, 2)

    figures = [
        {"figure": "evaluation cycle, 50 blocks x 4 stations (median)", "value": main["cycle_ms"], "unit": "ms",
         "target": f"<= {TARGET_CYCLE_MS:g} ms", "floor": main["floor_sql_ms"], "floor_label": "bare SQL window read (the old cycle paid it each time)",
         "ratio": round(main["cycle_ms"] / main["floor_sql_ms"], 1) if main["floor_sql_ms"] else None,
         "pass": main["cycle_ms"] <= TARGET_CYCLE_MS},
        {"figure": "cost vs blocks: ms/block at 200 over ms/block at 50", "value": lin_ratio, "unit": "x",
         "target": f"<= {LINEAR_TOLERANCE:g} (linear)", "floor": b50, "floor_label": "ms/block at 50 blocks",
         "ratio": lin_ratio, "pass": lin_ratio <= LINEAR_TOLERANCE},
        {"figure": f"cost vs history: {h_last['days']} d over {h_first['days']} d in the store", "value": flat_ratio,
         "unit": "x", "target": f"<= {FLAT_TOLERANCE:g} (flat)", "floor": h_first["cycle_ms"],
         "floor_label": f"cycle ms with {h_first['days']} d", "ratio": flat_ratio, "pass": flat_ratio <= FLAT_TOLERANCE},
    ]
    out = {"figures": figures, "blocks_curve": blocks_curve, "history_curve": history_curve, "quick": quick}
    if verbose:
        print("\n  cost against blocks (median ms per cycle):")
        for r in blocks_curve:
            print(f"    {r['blocks']:>4} blocks  {r['cycle_ms']:>9.1f} ms  " + "#" * max(1, int(r["cycle_ms"] / max(1.0, blocks_curve[-1]["cycle_ms"]) * 50)))
        print("  cost against history (median ms per cycle):")
        for r in history_curve:
            print(f"    {r['days']:>4} days    {r['cycle_ms']:>9.1f} ms  " + "#" * max(1, int(r["cycle_ms"] / max(1.0, max(x['cycle_ms'] for x in history_curve)) * 50)))
    return out


def main(argv: list[str]) -> int:
    res = run(quick="--quick" in argv)
    print(json.dumps(res["figures"], indent=2))
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))
