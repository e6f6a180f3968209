"""The installed console script, as a grower runs it: `frostwatch init`, point the config at the
broker, `frostwatch run`; it connects, stores a reading, and exits 0 on SIGTERM."""

from __future__ import annotations

import datetime as dt
import json
import subprocess
import sys
import tomllib
from pathlib import Path

import pytest
from daemon_helpers import DaemonProc, connect_publisher, db_count, publish_all, wait_until

pytestmark = pytest.mark.broker

SCRIPT = Path(sys.executable).parent / "frostwatch"


def test_installed_frostwatch_run_on_inits_config_stores_a_reading_and_stops_cleanly(tmp_path, mosquitto):
    assert SCRIPT.is_file(), f"no installed console script at {SCRIPT}"
    cfg = tmp_path / "farm.toml"
    p = subprocess.run([str(SCRIPT), "init", str(cfg)], capture_output=True, text=True, timeout=60)
    assert p.returncode == 0, p.stderr
    text = cfg.read_text(encoding="utf-8")
    assert "port = 1883" in text
    text = text.replace("port = 1883", f"port = {mosquitto.port}", 1)
    # as a grower edits it: uncomment [daemon] and commit each reading within a second (default 20 s)
    assert "\n# [daemon]\n" in text
    cfg.write_text(text.replace("\n# [daemon]\n", "\n[daemon]\nbatch_delay_s = 1\n", 1), encoding="utf-8")
    raw = tomllib.loads(cfg.read_text(encoding="utf-8"))
    station = raw["stations"][0]["id"]
    prefix = raw["broker"].get("prefix", "frostwatch")
    db = tmp_path / raw["storage"]["path"]

    d = DaemonProc(cfg, command=[str(SCRIPT)])
    d.start()
    try:
        assert wait_until(lambda: "connected to" in d.log_text(), 30), d.log_text()
        pub = connect_publisher(mosquitto.port)
        try:
            t = dt.datetime.now(dt.UTC).replace(microsecond=0).isoformat().replace("+00:00", "Z")
            publish_all(pub, [(f"{prefix}/{station}/air_temperature", json.dumps({"time": t, "value": 3.5}).encode())])
        finally:
            pub.loop_stop()
            pub.disconnect()
        assert wait_until(lambda: db_count(db) >= 1, 30), d.log_text()
        assert d.alive(), d.log_text()
        assert d.terminate() == 0, d.log_text()
    finally:
        d.kill()
    assert db_count(db, "SELECT count(*) FROM readings WHERE station = ?", (station,)) == 1
