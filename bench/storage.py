"""Bytes written to disk per day at 50 sensors each minute, with the daemon's own commit pattern.

    /work/venv/bin/python -m bench.storage [--quick]      (or: python -m bench storage)

The site: 12 blocks of 4 stations + 2 site-wide sensors = 50 sensors; each sends one message a
minute carrying two quantities (crop height: air temperature and relative humidity; towers and
site sensors: air temperature and wind speed), so 144,000 readings a day. The sensors' phases
within the minute are spread at random (the worst case for batching; sensors that all report on
the minute give one commit a minute instead).

What is written is what the daemon writes, through the same code:
- readings: `Store.add_readings` in the batches the ingest writer makes
  (frostwatch.ingest.mqtt: a batch closes at batch_rows, after batch_delay_s, or when at least
  stall_rows wait and the queue has been idle stall_idle_s), one transaction each;
- the heartbeat document (`Store.set_meta`) every heartbeat_store_s (it lives in memory between);
- the outbox's delivery round (`Outbox.deliver_due`, real outbox, console channel) every
  outbox_interval_s, and the sensor-health check (`Core.check_health`) every health_interval_s:
  with nothing to change they must write nothing (their share is printed);
- evaluations (`daemon.Core.evaluate`: projections and the blocks document in one transaction)
  at the night cadence from an hour before sunset to two hours after sunrise, else by day;
- the daemon's own WAL settings (`daemon.tune_store`) and the daily housekeeping checkpoint
  (`PRAGMA wal_checkpoint(TRUNCATE)`).

Measured from /proc/self/io (write_bytes: what this process sent to the block layer, including
the WAL, checkpoints into the main file and fsyncs; wchar: bytes passed to write()). The floor is
the size the same day's readings take when stored in one transaction into an empty store (the
data itself); the ratio is the write amplification of the real pattern.
The full run simulates 24 h (time is simulated; the writes are real); --quick simulates 4 night
hours, the denser part (evaluations every 2 min), and scales them to a day, which overstates.
"""

from __future__ import annotations

import datetime as dt
import json
import random
import sys
import tempfile
import time
from pathlib import Path

from bench import synth

TARGET_MIB_DAY = 200.0


def proc_io() -> dict[str, int]:
    out = {}
    with open("/proc/self/io") as f:
        for line in f:
            k, v = line.split(":")
            out[k.strip()] = int(v)
    return out


def batches_for_minute(phases: list[float], batch_delay_s: float, stall_rows: int, stall_idle_s: float,
                       batch_rows: int, stall_flood_rows_per_s: float = 20.0) -> list[list[int]]:
    """Sensor indices grouped into the commits the ingest writer would make in one minute."""
    order = sorted(range(len(phases)), key=lambda i: phases[i])
    out: list[list[int]] = []
    cur: list[int] = []
    opened = last = 0.0
    for i in order:
        t = phases[i]
        flood = len(cur) >= stall_flood_rows_per_s * (last - opened)  # as frostwatch.ingest.mqtt's writer
        if cur and (t - opened >= batch_delay_s or (len(cur) >= stall_rows and t - last >= stall_idle_s and flood)):
            out.append(cur)
            cur = []
        if not cur:
            opened = t
        cur.append(i)
        last = t
        if len(cur) * 2 >= batch_rows:
            out.append(cur)
            cur = []
    if cur:
        out.append(cur)
    return out


class _NullOutbox:
    def submit(self, alerts, now):
        pass

    def submit_health(self, *a, **k):
        return ""


def simulate(work: Path, hours: float, start_local: dt.time, seed: int = 3, batch_delay_s: float | None = None) -> dict:
    from frostwatch.alerts.outbox import Outbox
    from frostwatch.daemon import HEARTBEAT_META, Core, daemon_settings, tune_store
    from frostwatch.ingest.mqtt import IngestSettings
    from frostwatch.models import Reading
    from frostwatch.store import Store

    cfg = synth.make_config(12, work, extra_stations=2)
    s = daemon_settings(cfg)
    ing = IngestSettings(batch_delay_s=s.batch_delay_s if batch_delay_s is None else batch_delay_s)
    tz = cfg.site.tz
    t0 = dt.datetime.combine(synth.EVENING, start_local, tz).astimezone(dt.UTC)
    store = Store.open(cfg.storage.path)
    tune_store(store)
    outbox = Outbox(store, cfg)  # the real outbox (console channel): its rounds must write nothing idle
    core = Core(cfg, s, store, outbox, clock=lambda: t0)
    rng = random.Random(seed)
    stations = list(cfg.stations)
    phases = [rng.uniform(0, 60) for _ in stations]
    groups = batches_for_minute(phases, ing.batch_delay_s, ing.stall_rows, ing.stall_idle_s, ing.batch_rows,
                                ing.stall_flood_rows_per_s)
    quantities = [("air_temperature", "wind_speed") if st.height_m > 3 or st.block is None
                  else ("air_temperature", "relative_humidity") for st in stations]
    by = {"readings": 0, "heartbeat": 0, "evaluations": 0, "outbox": 0, "health": 0}
    counts = {k: 0 for k in by}
    warm = 90  # minutes played before t0 and not counted: the daemon has a past (health looks back 90 min)
    io0 = proc_io()
    wall0 = time.perf_counter()
    readings = 0
    minutes = int(hours * 60)
    next_eval = t0 - dt.timedelta(minutes=warm)
    counting = [False]
    every = {"heartbeat": dt.timedelta(seconds=s.heartbeat_store_s),
             "outbox": dt.timedelta(seconds=s.outbox_interval_s),
             "health": dt.timedelta(seconds=s.health_interval_s)}
    nxt = dict.fromkeys(every, t0 - dt.timedelta(minutes=warm))
    nxt["health"] += dt.timedelta(minutes=10)  # sensors have reported once before the first check

    def timed(kind, fn):
        a = proc_io()["write_bytes"]
        fn()
        if counting[0]:
            by[kind] += proc_io()["write_bytes"] - a
            counts[kind] += 1

    for m in range(-warm, minutes):
        if m == 0:
            with store.lock:
                store.conn.execute("PRAGMA wal_checkpoint(TRUNCATE)")
            counting[0] = True
            io0 = proc_io()
            readings = 0
        minute = t0 + dt.timedelta(minutes=m)
        for g in groups:
            batch = []
            for i in g:
                t = minute + dt.timedelta(seconds=round(phases[i]))
                temp = 6.0 - 0.002 * m + 0.1 * (i % 7)
                q1, q2 = quantities[i]
                batch.append(Reading(t, stations[i].id, q1, round(temp, 2)))
                batch.append(Reading(t, stations[i].id, q2, round(80.0 if q2 == "relative_humidity" else 1.2, 2)))

            def commit(batch=batch):
                store.add_readings(batch, "mqtt")
                core.readings_committed(batch)

            timed("readings", commit)
            readings += len(batch)
        end = minute + dt.timedelta(minutes=1)
        for kind, step in every.items():
            while nxt[kind] < end:
                at = nxt[kind]
                if kind == "heartbeat":
                    timed(kind, lambda at=at, n=readings: store.set_meta(HEARTBEAT_META, json.dumps(
                        {"time": at.isoformat(), "pid": 1, "ingest": {"stored": n}})))
                elif kind == "outbox":
                    timed(kind, lambda at=at: outbox.deliver_due(at, wait=True))
                else:
                    timed(kind, lambda at=at: core.check_health(at, {}))
                nxt[kind] += step
        if minute >= next_eval:
            timed("evaluations", lambda minute=minute: core.evaluate(minute, "bench"))
            step = s.night_interval_min if core.in_watch_window(minute) else s.day_interval_min
            next_eval = minute + dt.timedelta(minutes=step)
    with store.lock:
        store.conn.execute("PRAGMA wal_checkpoint(TRUNCATE)")
    io1 = proc_io()
    outbox.close(wait=True)
    wal = cfg.storage.path.with_name(cfg.storage.path.name + "-wal")
    res = {
        "simulated_h": hours, "batch_delay_s": ing.batch_delay_s, "sensors": len(stations), "readings": readings,
        "commits": counts["readings"], "heartbeats": counts["heartbeat"], "evaluations": counts["evaluations"],
        "outbox_rounds": counts["outbox"], "health_checks": counts["health"], "write_bytes_by_kind": by,
        "write_bytes": io1["write_bytes"] - io0["write_bytes"], "wchar": io1["wchar"] - io0["wchar"],
        "db_bytes": cfg.storage.path.stat().st_size, "wal_bytes": wal.stat().st_size if wal.exists() else 0,
        "wall_s": round(time.perf_counter() - wall0, 1),
    }
    store.close()
    return res


def floor_bytes(work: Path, readings_per_day: int) -> int:
    """Size of one day's readings stored in one transaction into an empty store (the data itself)."""
    from frostwatch.store import Store

    cfg = synth.make_config(12, work, extra_stations=2)
    Store.open(cfg.storage.path).close()
    before = cfg.storage.path.stat().st_size
    start = dt.datetime.combine(synth.EVENING, dt.time(12, 0), cfg.site.tz).astimezone(dt.UTC)
    rows = synth.station_rows(cfg, start, start + dt.timedelta(days=1) - dt.timedelta(minutes=1))
    rows = (r[:4] + ("mqtt",) for r in rows)
    n = synth.fill_store(cfg.storage.path, rows)
    return int((cfg.storage.path.stat().st_size - before) * readings_per_day / max(1, n))


def run(verbose: bool = True, quick: bool = False, out_dir: Path | None = None) -> dict:
    work = Path(out_dir or tempfile.mkdtemp(prefix="frostwatch-bench-storage-"))
    hours = 4.0 if quick else 24.0
    start = dt.time(20, 0) if quick else dt.time(12, 0)
    (work / "sim").mkdir(parents=True, exist_ok=True)
    (work / "floor").mkdir(parents=True, exist_ok=True)
    r = simulate(work / "sim", hours, start)
    scale = 24.0 / hours
    per_day = max(r["write_bytes"], 0) * scale
    wchar_day = r["wchar"] * scale
    headline = per_day if r["write_bytes"] > 0 else wchar_day
    fl = floor_bytes(work / "floor", int(r["readings"] * scale))
    mib = headline / 2**20
    curve = []
    for delay in (2.0, 5.0, 10.0, 20.0):
        d = work / f"delay-{delay:g}"
        d.mkdir(parents=True, exist_ok=True)
        c = simulate(d, 2.0, dt.time(22, 0), batch_delay_s=delay)
        curve.append({"batch_delay_s": delay, "commits_per_h": c["commits"] / 2.0,
                      "mib_per_day": round(c["write_bytes"] * 12 / 2**20, 1)})
    out = {**r, "scale_to_day": scale, "write_bytes_per_day": int(per_day), "wchar_per_day": int(wchar_day),
           "readings_per_day": int(r["readings"] * scale), "floor_bytes_per_day": fl,
           "batch_delay_curve_night": curve,
           "measured": "write_bytes" if r["write_bytes"] > 0 else "wchar (write_bytes reported 0 here)"}
    out["figures"] = [{
        "figure": "bytes written per day, 50 sensors each minute (daemon commit pattern)",
        "value": round(mib, 1), "unit": "MiB/day", "target": f"<= {TARGET_MIB_DAY:g} MiB/day",
        "floor": round(fl / 2**20, 1), "floor_label": "the day's readings stored in one transaction",
        "ratio": round(headline / fl, 1) if fl else None, "pass": mib <= TARGET_MIB_DAY,
    }]
    if verbose:
        print(f"  simulated {hours:g} h: {r['readings']} readings in {r['commits']} commits, {r['heartbeats']} heartbeats, "
              f"{r['evaluations']} evaluations, {r['outbox_rounds']} outbox rounds, {r['health_checks']} health checks; "
              f"{r['wall_s']} s of real time")
        print(f"  written: write_bytes {r['write_bytes'] / 2**20:.1f} MiB, wchar {r['wchar'] / 2**20:.1f} MiB "
              f"-> {mib:.1f} MiB/day ({out['measured']}); store {r['db_bytes'] / 2**20:.1f} MiB")
        print("  by kind (MiB/day): " + ", ".join(f"{k} {v * scale / 2**20:.1f}" for k, v in r["write_bytes_by_kind"].items())
              + " (the rest: checkpoints and housekeeping)")
        print("  against daemon.batch_delay_s (2 night hours scaled to a day): " + ", ".join(
            f"{c['batch_delay_s']:g} s -> {c['mib_per_day']:.0f} MiB/day ({c['commits_per_h']:.0f} commits/h)" for c in curve))
        print(f"  floor: the day's {out['readings_per_day']} readings take {fl / 2**20:.1f} MiB stored at once")
    return out


def main(argv: list[str]) -> int:
    res = run(quick="--quick" in argv)
    print(json.dumps(res["figures"], indent=2))
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))
