"""A stage change takes effect at the next evaluation of a running daemon, without a restart
(`frostwatch stage` rewrites the config; the daemon rereads the changed file before evaluating;
SIGHUP makes it reload and evaluate at once)."""

from __future__ import annotations

import json
import signal
import sqlite3
import subprocess
import sys
import zlib

from daemon_helpers import DaemonProc, wait_until, write_config


def _t10(db, block: str) -> float | None:
    """T10 of the block's newest stored decision (the one every screen shows)."""
    if not db.exists():
        return None
    con = sqlite3.connect(str(db), timeout=10)
    try:
        row = con.execute("SELECT doc FROM decisions WHERE block = ? ORDER BY time_utc_ms DESC LIMIT 1",
                          (block,)).fetchone()
        if not row:
            return None
        doc = zlib.decompress(row[0]).decode() if isinstance(row[0], bytes) else row[0]  # stored compressed
        return json.loads(doc)["plan"]["t10_c"]
    except sqlite3.OperationalError:
        return None
    finally:
        con.close()


def _stage(cfg, block, stage):
    p = subprocess.run([sys.executable, "-m", "frostwatch", "stage", "--config", str(cfg), "--block", block,
                        "--stage", stage], capture_output=True, text=True, timeout=60)
    assert p.returncode == 0, p.stderr
    return p.stdout


def test_stage_change_reaches_the_next_evaluation_without_restart(tmp_path, mosquitto):
    # evaluations every 3 s by night and day; the pear block "hill" is at tight cluster (WSU, via
    # Penn State: T10 24 F = -4.4 C); full bloom is 28 F = -2.2 C
    cfg = write_config(tmp_path, mosquitto.port, "night_interval_min = 0.05\nday_interval_min = 0.05\n")
    db = tmp_path / "frostwatch.db"
    d = DaemonProc(cfg)
    try:
        d.start()
        assert wait_until(lambda: _t10(db, "hill") is not None, 60), d.log_text()
        assert abs(_t10(db, "hill") - (-4.44)) < 0.01
        out = _stage(cfg, "hill", "full bloom")
        assert "next evaluation" in out
        assert wait_until(lambda: abs(_t10(db, "hill") - (-2.22)) < 0.01, 30), d.log_text()
        assert d.alive() and "config reloaded: hill: stage 'tight cluster' -> 'full bloom', T10 -4.44" in d.log_text()
        # SIGHUP: a reload and an evaluation at once (a longer interval would not come in time)
        _stage(cfg, "hill", "first white")  # T10 25 F = -3.9 C
        d.proc.send_signal(signal.SIGHUP)
        assert wait_until(lambda: abs(_t10(db, "hill") - (-3.89)) < 0.01, 30), d.log_text()
        assert wait_until(lambda: "blocks (reload)" in d.log_text(), 30), d.log_text()  # the SIGHUP's own evaluation
        # a file that does not load is refused; the config in force stays
        cfg.write_text(cfg.read_text().replace('stage = "first white"', 'stage = "no such stage"'))
        d.proc.send_signal(signal.SIGHUP)
        assert wait_until(lambda: "changed but does not load" in d.log_text(), 30), d.log_text()
        assert abs(_t10(db, "hill") - (-3.89)) < 0.01 and d.alive()
        assert d.terminate() == 0
    finally:
        if d.alive():
            d.kill()
