"""Supervision faults in the real daemon process (reliability.md 9, tests 9/10 and 13): the
watchdog is withheld when the ingest thread dies, and an evaluation that overruns does not pile
runs up. The fault is patched in by a few lines run in the child before `frostwatch run`."""

from __future__ import annotations

import json
import shutil
import socket
import tempfile
import time
from pathlib import Path

import pytest
from fault_helpers import DaemonProc, connect_publisher, publish, reading, wait_until, write_config

pytestmark = pytest.mark.broker

KILL_WRITER = """
import os
import frostwatch.ingest.mqtt as m
_orig = m.MqttIngest._commit
def _commit(self, batch):
    if os.path.exists(os.environ["FAULT_TRIGGER"]):
        raise SystemExit("fault injected: the ingest writer thread dies")
    return _orig(self, batch)
m.MqttIngest._commit = _commit
"""


class NotifySocket:
    """A fake systemd notify socket: a unix datagram socket the test binds and reads."""

    def __init__(self):
        self.dir = Path(tempfile.mkdtemp(prefix="fw-nfy-", dir="/tmp"))  # short: sun_path is 108 bytes
        self.path = self.dir / "notify.sock"
        self.sock = socket.socket(socket.AF_UNIX, socket.SOCK_DGRAM)
        self.sock.bind(str(self.path))
        self.sock.settimeout(0.2)
        self.got: list[tuple[float, str]] = []

    def drain(self, seconds: float) -> list[tuple[float, str]]:
        end = time.monotonic() + seconds
        out = []
        while time.monotonic() < end:
            try:
                data = self.sock.recv(4096).decode("utf-8", "replace")
            except TimeoutError:
                continue
            out.append((time.monotonic(), data))
        self.got += out
        return out

    def close(self):
        self.sock.close()
        shutil.rmtree(self.dir, ignore_errors=True)


def test_watchdog_withheld_when_the_ingest_thread_dies(tmp_path, mosquitto):
    """Pass: under a fake NOTIFY_SOCKET with WATCHDOG_USEC=1 s the daemon sends READY=1 and then
    WATCHDOG=1 about every second; once the ingest writer thread dies it logs the problem and sends
    no WATCHDOG=1 at all for the next 4 s (systemd would restart it), while STATUS= still arrives."""
    ns = NotifySocket()
    trigger = tmp_path / "kill-writer"
    cfg = write_config(tmp_path, mosquitto.port)
    d = DaemonProc(cfg, KILL_WRITER, {"NOTIFY_SOCKET": str(ns.path), "WATCHDOG_USEC": "1000000",
                                      "FAULT_TRIGGER": str(trigger)})
    d.start()
    try:
        assert wait_until(lambda: "connected to" in d.log_text(), 20)
        before = ns.drain(4.0)
        states = [s for _, s in ns.got]
        assert "READY=1" in states
        assert sum(s == "WATCHDOG=1" for _, s in before) >= 2, states
        trigger.write_text("now")
        pub = connect_publisher(mosquitto.port)
        import datetime as dt

        assert publish(pub, [reading("east-low", dt.datetime.now(dt.UTC), 5.0)])
        pub.loop_stop()
        assert wait_until(lambda: "the writer thread is dead" in d.log_text(), 15), d.log_text()[-2000:]
        ns.drain(1.2)  # a ping already on its way may still land
        after = ns.drain(4.0)
        assert not [s for _, s in after if s == "WATCHDOG=1"], "the watchdog was still fed with ingest dead"
        assert any(s.startswith("STATUS=") for _, s in after)  # alive, just not healthy
    finally:
        d.terminate()
        ns.close()


SLOW_EVAL = """
import json, os, time
import frostwatch.daemon.service as fs
import frostwatch.pipeline as fp
from apscheduler import events as ev
# the evaluator's own work, which the daemon runs under its evaluation lock: timed inside the lock,
# so an evaluation that waited for the lock (the start-up one beside the first tick) is not an overlap
_orig = fp.Evaluator.evaluate
_n = [0]
def evaluate(self, now, series, *more):
    _n[0] += 1
    n, t0, w0 = _n[0], time.monotonic(), time.time()
    try:
        if n == 3:
            time.sleep(float(os.environ["FAULT_SLEEP_S"]))
        return _orig(self, now, series, *more)
    finally:
        with open(os.environ["FAULT_LOG"], "a") as f:
            f.write(json.dumps({"n": n, "start": t0, "end": time.monotonic(),
                                "wall_start": w0, "wall_end": time.time()}) + "\\n")
fp.Evaluator.evaluate = evaluate
# what the scheduler did with each tick: its scheduled times (on the trigger's grid, not measured)
_names = {ev.EVENT_JOB_SUBMITTED: "submitted", ev.EVENT_JOB_MAX_INSTANCES: "skipped",
          ev.EVENT_JOB_MISSED: "missed", ev.EVENT_JOB_EXECUTED: "executed", ev.EVENT_JOB_ERROR: "executed"}
def _note(e):
    if e.job_id != "tick":
        return
    times = getattr(e, "scheduled_run_times", None) or [e.scheduled_run_time]
    with open(os.environ["FAULT_SCHED"], "a") as f:
        f.write(json.dumps({"event": _names[e.code], "scheduled": [t.timestamp() for t in times],
                            "wall": time.time()}) + "\\n")
_build = fs.build_scheduler
def build_scheduler(*args, **kwargs):
    sched = _build(*args, **kwargs)
    mask = 0
    for code in _names:
        mask |= code
    sched.add_listener(_note, mask)
    return sched
fs.build_scheduler = build_scheduler
"""


def _jsonl(path: Path) -> list[dict]:
    if not path.exists():
        return []
    return [json.loads(x) for x in path.read_text().splitlines() if x.strip()]


def test_evaluation_overrun_is_coalesced_not_piled_up(tmp_path, mosquitto):
    """Pass: with a 1.5 s evaluation interval and one evaluation that takes 2 x interval, runs never
    overlap; the ticks that fell due while it ran were skipped (logged as a scheduler warning and
    recorded in the store's events, kind "daemon", naming the overrun), each while a run was in
    progress, and none of them ran afterwards (no catch-up); each run is for one tick (coalesced,
    no burst); no tick was missed; and every tick of the trigger's grid from the slow one on was
    either run or skipped, so evaluations carried on at the cadence. Checked on the ticks'
    scheduled times, which are the trigger's and do not depend on how loaded the machine is;
    nothing here bounds a wall-clock duration (this 2-core machine runs other suites at once)."""
    interval = 1.5
    runs_log, sched_log = tmp_path / "runs.jsonl", tmp_path / "sched.jsonl"
    cfg = write_config(tmp_path, mosquitto.port, daemon=f"night_interval_min = {interval / 60}\nday_interval_min = {interval / 60}\n")
    d = DaemonProc(cfg, SLOW_EVAL, {"FAULT_LOG": str(runs_log), "FAULT_SCHED": str(sched_log),
                                    "FAULT_SLEEP_S": str(2 * interval)})
    d.start()
    try:
        assert wait_until(lambda: any(r["n"] == 3 for r in _jsonl(runs_log)), 60), d.log_text()[-2000:]
        slow = next(r for r in _jsonl(runs_log) if r["n"] == 3)
        assert wait_until(lambda: len([r for r in _jsonl(runs_log) if r["start"] > slow["end"]]) >= 3, 60)
    finally:
        d.terminate()
    rs = sorted(_jsonl(runs_log), key=lambda r: r["start"])
    for a, b in zip(rs, rs[1:], strict=False):
        assert b["start"] >= a["end"] - 1e-3, f"overlapping evaluations: {a} {b}"
    events = _jsonl(sched_log)
    assert not [e for e in events if e["event"] == "missed"], "a tick was missed"
    assert all(len(e["scheduled"]) == 1 for e in events), "several ticks run at once (not coalesced)"
    submitted = sorted(e["scheduled"][0] for e in events if e["event"] == "submitted")
    skipped = sorted(e["scheduled"][0] for e in events if e["event"] == "skipped")
    finished = {e["scheduled"][0]: e["wall"] for e in events if e["event"] == "executed"}
    # the slow evaluation's tick: the last one submitted before it started
    slow_tick = max(t for t in submitted if t <= slow["wall_start"])
    during = [t for t in skipped if slow_tick < t <= slow["wall_end"]]
    assert during, f"no tick was skipped while the slow evaluation ran: {events}"
    for t in skipped:  # skipped only while a run was in progress, never to pile runs up later
        assert any(s < t <= finished.get(s, float("inf")) for s in submitted), f"tick {t} skipped with no run going"
    assert not [t for t in submitted if slow_tick < t <= slow["wall_end"]], "a tick due during the overrun ran late"
    # on the trigger's grid, each tick from the slow one to the last once: run or skipped, none lost
    ticks = sorted([t for t in submitted + skipped if t >= slow_tick])
    steps = [round((b - a) / interval, 3) for a, b in zip(ticks, ticks[1:], strict=False)]
    assert len(ticks) >= 4 and set(steps) == {1.0}, f"ticks lost or doubled after the overrun: {steps}"
    assert "scheduler: job tick skipped (still running)" in d.log_text()
    from fault_helpers import query

    from frostwatch.config import load_config

    db = load_config(cfg).storage.path
    rec = query(db, "SELECT subject, detail FROM events WHERE kind='daemon' AND subject LIKE 'job tick skipped%'")
    assert rec and "overrun" in rec[0][1], rec
