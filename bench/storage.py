"""Bytes written to disk per day at 50 sensors each minute, with the daemon's own commit pattern,
on the night that matters (a frost night) and on a quiet day.

    /work/venv/bin/python -m bench.storage [--quick]      (or: python -m bench storage)

The site: 12 blocks of 4 stations + 2 site-wide sensors = 50 sensors; each sends one message a
minute carrying two quantities (crop height: air temperature and relative humidity; towers and
site sensors: air temperature and wind speed), so 144,000 readings a day. The sensors' phases
within the minute are spread at random (the worst case for batching).

Two scenarios (simulated time, real writes through the daemon's own code):
- frost night: 8 h from 22:00 (2 h with --quick), crop-height air falling from 1.5 to -3.5 degC,
  inside every block's band of T10 + margin + risk_band_c: the ingest writer commits urgently,
  readings prompt evaluations (at most one per debounce_s), each stored evaluation writes its
  projections and decisions, the alert rules raise ready, protect and all-hands and the outbox
  delivers and repeats them (console channel). Scaled to 24 h: MiB/day at the frost night's rate.
- quiet day: 24 h from 12:00 (4 h with --quick), every reading near 6 degC.

What is written is what the daemon writes, through the same code:
- readings: `Store.add_readings` in the batches the ingest writer makes, as events in time
  (frostwatch.ingest.mqtt: a batch closes batch_delay_s after it opened, or urgent_delay_s after
  its first message that `frostwatch.daemon.commit_urgently` flags);
- evaluations (`daemon.Core.evaluate`: projections and decisions in one transaction) on the
  scheduled cadence and, on the frost night, prompted by committed readings near a trigger
  (the daemon's debounce); a prompted evaluation that changes nothing is not stored;
- the heartbeat document every heartbeat_store_s; the outbox's delivery round every
  outbox_interval_s; the sensor-health check every health_interval_s;
- checkpoints, run here where SQLite's auto-checkpoint would run them (the WAL reaching
  `daemon.wal_autocheckpoint_pages`), and the daily housekeeping's TRUNCATE checkpoint, so they
  are a writer of their own in the breakdown.

Measured from /proc/self/io (write_bytes: what this process sent to the block layer, including
the WAL, checkpoints into the main file and fsyncs). The floor is the size the same day's readings
take when stored in one transaction into an empty store (the data itself). The frost hour is
also run with the urgency rule before issue 19 (every reading near a trigger committed within
urgent_delay_s) for comparison, with the latency from a near-trigger reading's arrival to the
first evaluation after its commit.
"""

from __future__ import annotations

import datetime as dt
import json
import logging
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


class _NullOutbox:
    def submit(self, alerts, now):
        pass

    def submit_health(self, *a, **k):
        return ""


SCENARIOS = ("quiet", "frost")


def urgency(core, msg, t: dt.datetime, since_prompt_s: float, debounce_s: float, rule: str = "daemon") -> bool:
    """Whether the ingest writer commits this message's batch within urgent_delay_s.

    rule "daemon": as frostwatch.daemon.Daemon.urgent decides it; "every": every reading near a
    trigger, as before issue 19 (the comparison the benchmark prints)."""
    if rule == "every":
        return core.wants_prompt_evaluation(msg, t)
    from frostwatch.daemon import commit_urgently

    return commit_urgently(core, msg, t, since_prompt_s, debounce_s)
FROST_START_C, FROST_END_C = 1.5, -3.5  # crop-height air through the night: inside every block's urgent band


def simulate(work: Path, hours: float, start_local: dt.time, seed: int = 3, batch_delay_s: float | None = None,
             scenario: str = "quiet", urgent_delay_s: float | None = None, debounce_s: float | None = None,
             urgency_rule: str = "daemon") -> dict:
    """`hours` of the daemon's writes from `start_local` on the benchmark evening.

    scenario "quiet": every reading near 6 degC, nothing urgent (the old simulation).
    scenario "frost": crop-height air falls from FROST_START_C to FROST_END_C, inside every block's
    band of T10 + margin + risk_band_c, so the ingest writer commits a batch urgent_delay_s after its
    first such reading and each commit may ask for a prompt evaluation (at most one per
    debounce_s), on top of the scheduled ones; each evaluation stores its projections and
    decisions. Checkpoints are run by this simulation where SQLite's auto-checkpoint would run them
    (the WAL reaching daemon.wal_autocheckpoint_pages frames), so they are counted as their own writer."""
    from frostwatch.alerts.outbox import Outbox
    from frostwatch.daemon import (
        HEARTBEAT_META,
        PROMPT_REASON,
        Core,
        daemon_settings,
        tune_store,
        wal_autocheckpoint_pages,
    )
    from frostwatch.ingest.mqtt import IngestSettings
    from frostwatch.models import Reading
    from frostwatch.store import Store

    if scenario not in SCENARIOS:
        raise ValueError(f"scenario {scenario!r}: expected one of {SCENARIOS}")
    cfg = synth.make_config(12, work, extra_stations=2)
    s = daemon_settings(cfg)
    ing = IngestSettings(batch_delay_s=s.batch_delay_s if batch_delay_s is None else batch_delay_s,
                         urgent_delay_s=s.urgent_delay_s if urgent_delay_s is None else urgent_delay_s)
    debounce = s.debounce_s if debounce_s is None else debounce_s
    tz = cfg.site.tz
    t0 = dt.datetime.combine(synth.EVENING, start_local, tz).astimezone(dt.UTC)
    if t0 < dt.datetime.combine(synth.EVENING, dt.time(12, 0), tz).astimezone(dt.UTC):
        t0 += dt.timedelta(days=1)  # a morning start is the morning after the benchmark evening
    store = Store.open(cfg.storage.path)
    tune_store(store)
    with store.lock:
        store.conn.execute("PRAGMA wal_autocheckpoint=0")  # run below where SQLite would, and counted
    page_size = store.conn.execute("PRAGMA page_size").fetchone()[0]
    frame_bytes = page_size + 24
    ckpt_frames = wal_autocheckpoint_pages(page_size)
    wal_frames = [0]
    outbox = Outbox(store, cfg)  # the real outbox (console channel): its rounds must write nothing idle
    core = Core(cfg, s, store, outbox, clock=lambda: t0)
    rng = random.Random(seed)
    stations = list(cfg.stations)
    phases = [rng.uniform(0, 60) for _ in stations]
    quantities = [("air_temperature", "wind_speed") if st.height_m > 3 or st.block is None
                  else ("air_temperature", "relative_humidity") for st in stations]
    by = {"readings": 0, "evaluations": 0, "heartbeat": 0, "outbox": 0, "health": 0, "checkpoints": 0}
    counts = {k: 0 for k in by}
    counts["prompt_evaluations"] = 0
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
        wrote = proc_io()["write_bytes"] - a
        if counting[0]:
            by[kind] += wrote
            counts[kind] += 1
        if kind != "checkpoints":
            wal_frames[0] += round(wrote / frame_bytes)
            if wal_frames[0] >= ckpt_frames:  # SQLite's auto-checkpoint, after this commit
                wal_frames[0] = 0
                timed("checkpoints", lambda: checkpoint("PASSIVE"))

    def checkpoint(mode: str) -> None:
        with store.lock:
            store.conn.execute(f"PRAGMA wal_checkpoint({mode})")

    def crop_temp(m: int, i: int) -> float:
        if scenario == "frost":  # falling through the night (warmer before it, in the warm-up)
            return FROST_START_C + (FROST_END_C - FROST_START_C) * m / max(1, minutes) + 0.1 * (i % 7)
        return 6.0 - 0.002 * m + 0.1 * (i % 7)

    # the ingest writer (frostwatch.ingest.mqtt) as events: a batch closes batch_delay_s after it
    # opened, or urgent_delay_s after its first urgent message; the daemon's urgency and prompt
    # evaluations as frostwatch.daemon.Daemon decides them
    w = {"batch": [], "opened": None, "urgent_at": None, "last_prompt": t0 - dt.timedelta(days=1)}
    # reading -> evaluation latency of crop-height readings near a trigger: from its arrival to the
    # first evaluation after its commit (what the alert path then takes is bench/alert_latency.py)
    near_committed: list[dt.datetime] = []
    latencies: list[float] = []

    def evaluated(at: dt.datetime) -> None:
        if counting[0]:
            latencies.extend((at - t).total_seconds() for t in near_committed)
        near_committed.clear()

    def urgent_now(msg, t) -> bool:
        if scenario != "frost":
            return False
        return urgency(core, msg, t, (t - w["last_prompt"]).total_seconds(), debounce, urgency_rule)

    def commit(at: dt.datetime) -> None:
        nonlocal readings
        batch = w["batch"]
        w["batch"], w["opened"], w["urgent_at"] = [], None, None

        def write(batch=batch):
            store.add_readings(batch, "mqtt")
            core.readings_committed(batch)

        timed("readings", write)
        readings += len(batch)
        near_committed.extend(r.time_utc for r in batch if core.wants_prompt_evaluation([r], r.time_utc))
        # the daemon's _on_committed: a prompt evaluation, at most one per debounce_s
        if (scenario == "frost" and (at - w["last_prompt"]).total_seconds() >= debounce
                and core.wants_prompt_evaluation(batch, at)):
            w["last_prompt"] = at
            timed("evaluations", lambda: core.evaluate(at, PROMPT_REASON))
            evaluated(at)
            if counting[0]:
                counts["prompt_evaluations"] += 1

    def writer_until(t: dt.datetime) -> None:
        """Commit the open batch if it fell due before `t`."""
        if not w["batch"]:
            return
        due = w["opened"] + dt.timedelta(seconds=ing.batch_delay_s)
        if w["urgent_at"] is not None:
            due = min(due, w["urgent_at"] + dt.timedelta(seconds=ing.urgent_delay_s))
        if due <= t:
            commit(due)

    chatter = logging.getLogger("frostwatch")
    level = chatter.level
    chatter.setLevel(logging.ERROR)  # each alert is logged by the console channel and the rules
    for m in range(-warm, minutes):
        if m == 0:
            writer_until(t0)
            with store.lock:
                store.conn.execute("PRAGMA wal_checkpoint(TRUNCATE)")
            wal_frames[0] = 0
            counting[0] = True
            io0 = proc_io()
            readings = 0
        minute = t0 + dt.timedelta(minutes=m)
        end = minute + dt.timedelta(minutes=1)
        events = []
        for i, st in enumerate(stations):
            t = minute + dt.timedelta(seconds=round(phases[i], 3))
            q1, q2 = quantities[i]
            events.append((t, 1, i, [Reading(t, st.id, q1, round(crop_temp(m, i), 2)),
                                     Reading(t, st.id, q2, round(80.0 if q2 == "relative_humidity" else 1.2, 2))]))
        for kind in every:
            while nxt[kind] < end:
                events.append((nxt[kind], 0, kind, None))
                nxt[kind] += every[kind]
        if next_eval < end:
            events.append((next_eval, 0, "evaluation", None))
        for t, _, what, msg in sorted(events, key=lambda e: (e[0], e[1], str(e[2]))):
            writer_until(t)
            if msg is not None:
                if not w["batch"]:
                    w["opened"] = t
                w["batch"] += msg
                if w["urgent_at"] is None and urgent_now(msg, t):
                    w["urgent_at"] = t
                if len(w["batch"]) >= ing.batch_rows:
                    commit(t)
            elif what == "heartbeat":
                timed(what, lambda at=t, n=readings: store.set_meta(HEARTBEAT_META, json.dumps(
                    {"time": at.isoformat(), "pid": 1, "ingest": {"stored": n}})))
            elif what == "outbox":
                timed(what, lambda at=t: outbox.deliver_due(at, wait=True))
            elif what == "health":
                timed(what, lambda at=t: core.check_health(at, {}))
            else:
                timed("evaluations", lambda at=t: core.evaluate(at, "scheduled"))
                evaluated(t)
                step = s.night_interval_min if core.in_watch_window(t) else s.day_interval_min
                next_eval = t + dt.timedelta(minutes=step)
    writer_until(t0 + dt.timedelta(minutes=minutes, seconds=60))
    if w["batch"]:
        commit(t0 + dt.timedelta(minutes=minutes))
    chatter.setLevel(level)
    timed("checkpoints", lambda: checkpoint("TRUNCATE"))  # the daily housekeeping's
    io1 = proc_io()
    outbox.close(wait=True)
    wal = cfg.storage.path.with_name(cfg.storage.path.name + "-wal")
    with store.lock:
        decisions = store.conn.execute("SELECT count(*), sum(length(doc)) FROM decisions").fetchone()
    res = {
        "scenario": scenario, "simulated_h": hours, "start_local": start_local.isoformat(),
        "batch_delay_s": ing.batch_delay_s, "urgent_delay_s": ing.urgent_delay_s, "debounce_s": debounce,
        "sensors": len(stations), "readings": readings,
        "commits": counts["readings"], "heartbeats": counts["heartbeat"], "evaluations": counts["evaluations"],
        "prompt_evaluations": counts["prompt_evaluations"], "checkpoints": counts["checkpoints"],
        "near_trigger_reading_to_evaluation_s": _spread(latencies),
        "evaluations_not_stored": core.evaluations_not_stored,
        "outbox_rounds": counts["outbox"], "health_checks": counts["health"], "write_bytes_by_kind": by,
        "decisions_stored": decisions[0], "decision_doc_bytes_mean": round((decisions[1] or 0) / max(1, decisions[0])),
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


def _spread(xs: list[float]) -> dict | None:
    if not xs:
        return None
    xs = sorted(xs)
    return {"n": len(xs), "min": round(xs[0], 1), "median": round(xs[len(xs) // 2], 1),
            "p90": round(xs[int(0.9 * (len(xs) - 1))], 1), "max": round(xs[-1], 1)}


def _per_day(r: dict) -> float:
    return max(r["write_bytes"], 0) * 24.0 / r["simulated_h"]


def _breakdown(r: dict) -> dict[str, float]:
    """MiB per day by writer; "other" is what no writer was caught writing (the kernel's own)."""
    scale = 24.0 / r["simulated_h"] / 2**20
    out = {k: round(v * scale, 1) for k, v in r["write_bytes_by_kind"].items()}
    out["other"] = round(max(0, r["write_bytes"] - sum(r["write_bytes_by_kind"].values())) * scale, 1)
    return out


def run(verbose: bool = True, quick: bool = False, out_dir: Path | None = None) -> dict:
    work = Path(out_dir or tempfile.mkdtemp(prefix="frostwatch-bench-storage-"))
    say = print if verbose else (lambda *a, **k: None)
    frost_h, quiet_h = (2.0, 4.0) if quick else (8.0, 24.0)
    runs = {}
    for name, scenario, hours, start in (("frost night", "frost", frost_h, dt.time(22, 0)),
                                         ("quiet day", "quiet", quiet_h, dt.time(12, 0))):
        d = work / scenario
        d.mkdir(parents=True, exist_ok=True)
        r = simulate(d, hours, start, scenario=scenario)
        r["mib_per_day"] = round(_per_day(r) / 2**20, 1)
        r["by_writer_mib_per_day"] = _breakdown(r)
        runs[scenario] = r
        say(f"  {name}: simulated {hours:g} h from {start:%H:%M}: {r['readings']} readings in {r['commits']} commits, "
            f"{r['evaluations']} evaluations ({r['prompt_evaluations']} prompted by readings near a trigger), "
            f"{r['decisions_stored']} decisions stored ({r['decision_doc_bytes_mean']} B each), {r['checkpoints']} "
            f"checkpoints, {r['heartbeats']} heartbeats; {r['wall_s']} s of real time")
        say(f"    -> {r['mib_per_day']:.1f} MiB/day at this rate; by writer (MiB/day): "
            + ", ".join(f"{k} {v:.1f}" for k, v in r["by_writer_mib_per_day"].items()))
    (work / "floor").mkdir(parents=True, exist_ok=True)
    fl = floor_bytes(work / "floor", int(runs["quiet"]["readings"] * 24.0 / quiet_h))
    frost, quiet = runs["frost"], runs["quiet"]
    # a whole day with a frost night in it: the frost night's hours at its rate, the rest quiet
    night_h = 8.0
    day_with_frost = (frost["mib_per_day"] * night_h + quiet["mib_per_day"] * (24.0 - night_h)) / 24.0
    # the urgency rule against the one before issue 19 (every reading near a trigger committed
    # within urgent_delay_s), one frost hour each: bytes, commits and reading -> evaluation latency
    rules = []
    for rule in ("every", "daemon"):
        d = work / f"rule-{rule}"
        d.mkdir(parents=True, exist_ok=True)
        c = simulate(d, 0.5 if quick else 1.0, dt.time(23, 0), scenario="frost", urgency_rule=rule)
        rules.append({"rule": rule, "commits_per_h": round(c["commits"] / c["simulated_h"]),
                      "stored_evaluations_per_h": round((c["evaluations"] - c["evaluations_not_stored"]) / c["simulated_h"]),
                      "mib_per_day": round(_per_day(c) / 2**20, 1), "by_writer_mib_per_day": _breakdown(c),
                      "near_trigger_reading_to_evaluation_s": c["near_trigger_reading_to_evaluation_s"]})
    for c in rules:
        lat = c["near_trigger_reading_to_evaluation_s"] or {}
        say(f"  frost hour, urgency rule {c['rule']!r}: {c['mib_per_day']:.0f} MiB/day, {c['commits_per_h']} commits/h, "
            f"reading near a trigger -> evaluation median {lat.get('median')} s (p90 {lat.get('p90')}, max {lat.get('max')})")
    say(f"  a day with an {night_h:g}-hour frost night in it: {day_with_frost:.1f} MiB; floor: the day's "
        f"{int(quiet['readings'] * 24.0 / quiet_h)} readings take {fl / 2**20:.1f} MiB stored at once")
    out = {"frost": frost, "quiet": quiet, "floor_bytes_per_day": fl, "day_with_frost_night_mib": round(day_with_frost, 1),
           "urgency_rules_frost_hour": rules, "quick": quick}
    fl_mib = round(fl / 2**20, 1)
    out["figures"] = [
        {"figure": f"bytes written per day on a frost night ({frost_h:g} h near the trigger: urgent commits, prompt "
                   "evaluations, decisions; rate x 24 h)", "value": frost["mib_per_day"], "unit": "MiB/day",
         "target": f"<= {TARGET_MIB_DAY:g} MiB/day", "floor": fl_mib, "floor_label": "the day's readings stored in one transaction",
         "ratio": round(frost["mib_per_day"] / fl_mib, 1) if fl_mib else None, "pass": frost["mib_per_day"] <= TARGET_MIB_DAY},
        {"figure": f"bytes written per day on a quiet day ({quiet_h:g} h simulated)", "value": quiet["mib_per_day"],
         "unit": "MiB/day", "target": f"<= {TARGET_MIB_DAY:g} MiB/day", "floor": fl_mib,
         "floor_label": "the day's readings stored in one transaction",
         "ratio": round(quiet["mib_per_day"] / fl_mib, 1) if fl_mib else None, "pass": quiet["mib_per_day"] <= TARGET_MIB_DAY},
    ]
    return out


def main(argv: list[str]) -> int:
    res = run(quick="--quick" in argv)
    print(json.dumps(res["figures"], indent=2))
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))
