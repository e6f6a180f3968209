"""A damaged store file (issue 18, item 7): a page of zeros in the middle of the store. Every
command that reads the store, and the daemon, says so in one sentence naming the file and what to
do, with no traceback (before: `sqlite3.DatabaseError: database disk image is malformed` and a
traceback)."""

from __future__ import annotations

import datetime as dt
import subprocess
import sys

import pytest

from frostwatch.config import load_config
from frostwatch.models import Alert, Reading
from frostwatch.store import Store

T0 = dt.datetime(2027, 4, 15, 3, tzinfo=dt.UTC)  # the demo night of 2027-04-14


@pytest.fixture
def damaged(demo_config):
    cfg = load_config(demo_config)
    with Store.open(cfg.storage.path) as s:
        now = dt.datetime.now(dt.UTC).replace(microsecond=0)
        for start in (T0, now - dt.timedelta(hours=2)):  # the demo night, and the last hours (the daemon's)
            rs = [Reading(start + dt.timedelta(seconds=3 * i), st, "air_temperature", 1.0 + (i % 7) / 10)
                  for i in range(2400) for st in ("east-low", "river-low")]
            s.add_readings(rs, "test")
        s.add_alert(Alert(T0, "east", "protect", 4, "start", "east: ACT", "east/2027-04-14/001-act"))
        with s.lock:
            s.conn.execute("PRAGMA wal_checkpoint(TRUNCATE)")
            page = s.conn.execute("PRAGMA page_size").fetchone()[0]
            n = s.conn.execute("PRAGMA page_count").fetchone()[0]
    with open(cfg.storage.path, "r+b") as f:  # zero pages in the middle of the readings
        for k in [*range(n // 4, n // 4 + 3), *range(3 * n // 4, 3 * n // 4 + 3)]:
            f.seek(k * page)
            f.write(b"\0" * page)
    return demo_config, cfg.storage.path


# (command, whether it reads the damaged readings): the others may succeed, but never with a traceback
COMMANDS = [
    (["status"], True), (["export"], True), (["report", "--night", "2027-04-14", "--out", "{tmp}"], True),
    (["replay", "{log}"], True),
    (["alerts", "--night", "2027-04-14"], False), (["ack", "east/2027-04-14/001-act"], False),
]


@pytest.mark.parametrize(("argv", "reads_readings"), COMMANDS, ids=lambda a: a[0] if isinstance(a, list) else "")
def test_a_damaged_store_is_one_clear_sentence_for_every_command_and_the_daemon(damaged, demo_logs, tmp_path, argv,
                                                                              reads_readings):
    config, db = damaged
    argv = [a.format(tmp=tmp_path / "out", log=demo_logs[0]) for a in argv]
    r = subprocess.run([sys.executable, "-m", "frostwatch", *argv, "--config", str(config)],
                       capture_output=True, text=True, timeout=120)
    err = r.stderr.strip()
    assert "Traceback" not in err, err[-3000:]
    if not reads_readings and r.returncode == 0:
        return
    assert r.returncode != 0, (r.stdout[-500:], err[-2000:])
    last = err.splitlines()[-1]
    assert str(db) in last and "store file is damaged" in last and ".recover" in last, err[-2000:]


def test_the_daemon_on_a_damaged_store_says_so_in_one_line_not_a_traceback(damaged, mosquitto):
    """Pass: `frostwatch run` on the damaged store (its evaluations and health checks read the
    damaged pages) logs the one sentence naming the file and what to do, and no traceback."""
    import time

    config, db = damaged
    text = config.read_text().replace("port = 1883", f"port = {mosquitto.port}")
    config.write_text(text + "\n[daemon]\nhealth_interval_s = 1\nheartbeat_s = 1\nlearn_nights = 1\n")
    log = config.parent / "daemon.log"
    with log.open("wb") as f:
        d = subprocess.Popen([sys.executable, "-m", "frostwatch", "run", "--config", str(config)],
                             stdout=f, stderr=subprocess.STDOUT)
    try:
        deadline = time.monotonic() + 60
        while time.monotonic() < deadline and d.poll() is None and "store file is damaged" not in log.read_text(errors="replace"):
            time.sleep(0.2)
        time.sleep(2)
    finally:
        if d.poll() is None:
            d.terminate()
            d.wait(30)
    out = log.read_text(errors="replace")
    lines = [ln for ln in out.splitlines() if "store file is damaged" in ln]
    assert lines and all(str(db) in ln and ".recover" in ln for ln in lines), out[-3000:]
    assert "Traceback" not in out, out[-3000:]
