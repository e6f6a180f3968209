"""kill -9 in the send path: every alert is delivered at least once, duplicates carry the same key.

A child process owns the outbox and sends to a real HTTP server on loopback that answers slowly,
so the SIGKILL lands while requests are in flight (reliability.md 6.2: reclaim leases on restart).
"""

from __future__ import annotations

import json
import os
import signal
import subprocess
import sys
import textwrap
import time
from collections import defaultdict

from alert_helpers import HttpServer

CHILD = textwrap.dedent("""
    import datetime as dt, sys, time, tomllib
    from frostwatch.config import config_from_dict
    from frostwatch.alerts.outbox import Outbox
    from frostwatch.models import Alert
    from frostwatch.store import Store
    raw = tomllib.loads(open(sys.argv[1]).read())
    cfg = config_from_dict(raw, None)
    store = Store.open(cfg.storage.path)
    box = Outbox(store, cfg)
    t0 = dt.datetime(2027, 4, 15, 9, 0, tzinfo=dt.UTC)
    if sys.argv[2] == "submit":
        box.submit([Alert(t0, "east", "protect", 4, "start", f"east: ACT {i}", f"east/2027-04-14/{i:03d}-act")
                    for i in range(int(sys.argv[3]))], t0)
    for step in range(400):
        box.deliver_due(t0 + dt.timedelta(seconds=step), wait=True)
        (left,) = store.conn.execute("SELECT count(*) FROM deliveries WHERE status != 'sent'").fetchone()
        if left == 0:
            print("done", flush=True)
            break
        time.sleep(0.02)
""")


def test_kill_9_mid_send_delivers_everything_at_least_once_with_the_same_key(tmp_path):
    from alert_helpers import demo_raw

    http = HttpServer(200)
    orig = http.server.RequestHandlerClass.do_POST

    def slow(self):
        time.sleep(0.15)
        orig(self)

    http.server.RequestHandlerClass.do_POST = slow
    http.start()
    raw = demo_raw()
    raw["storage"]["path"] = str(tmp_path / "fw.db")
    raw["alerts"] = {"retry_base_s": 1, "retry_cap_s": 1, "degraded_after_failures": 1000}
    raw["channels"] = [{"name": "push", "type": "webhook", "url": f"http://127.0.0.1:{http.port}/p", "timeout_s": 5}]
    cfg_path = tmp_path / "farm.toml"
    cfg_path.write_text(_toml(raw))
    n = 12
    env = {**os.environ, "PYTHONUNBUFFERED": "1"}
    try:
        for round_ in range(3):  # kill twice mid-stream, then let it finish
            args = [sys.executable, "-c", CHILD, str(cfg_path), "submit" if round_ == 0 else "resume", str(n)]
            p = subprocess.Popen(args, stdout=subprocess.PIPE, stderr=subprocess.DEVNULL, env=env)
            if round_ < 2:
                seen = len(http.requests)
                deadline = time.monotonic() + 20
                while len(http.requests) < seen + 3 and time.monotonic() < deadline and p.poll() is None:
                    time.sleep(0.01)
                os.kill(p.pid, signal.SIGKILL)
                p.wait(10)
            else:
                out, _ = p.communicate(timeout=60)
                assert b"done" in out
    finally:
        http.stop()
    keys = defaultdict(set)
    for r in http.requests:
        body = json.loads(r["body"])
        keys[body["key"]].add(r["headers"]["Idempotency-Key"])
    assert len(keys) == n  # every alert arrived at least once
    assert all(v == {f"{k}:0"} for k, v in keys.items())  # a duplicate carries the same key
    assert len(http.requests) >= n
    print(f"{len(http.requests)} requests for {n} alerts")


def _toml(d: dict, prefix: str = "") -> str:
    """A small TOML writer for the test config (tables, arrays of tables, scalars, lists)."""
    out, tables = [], []
    for k, v in d.items():
        if isinstance(v, dict):
            tables.append((k, v, False))
        elif isinstance(v, list) and v and all(isinstance(x, dict) for x in v):
            tables.append((k, v, True))
        else:
            out.append(f"{k} = {json.dumps(v)}")
    for k, v, many in tables:
        name = f"{prefix}{k}"
        for item in (v if many else [v]):
            out.append(f"\n[[{name}]]" if many else f"\n[{name}]")
            out.append(_toml(item, name + "."))
    return "\n".join(out)
