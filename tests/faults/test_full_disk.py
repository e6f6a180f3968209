"""A full disk (reliability.md 9, test 21): the store on a 3 MiB tmpfs that fills up.

Uses `mount -t tmpfs -o size=3m` (needs root, as in CI's container); where mounting is not
permitted the test is skipped with that reason. The ingest writer's side (a failed commit keeps
its batch unacknowledged and retries every second, so the broker keeps the readings) is code in
frostwatch/ingest/mqtt.py; here the store and the outbox face the full disk directly.
"""

from __future__ import annotations

import datetime as dt
import subprocess
from pathlib import Path

import pytest
from alert_raw import raw_config

from frostwatch.alerts.outbox import Outbox
from frostwatch.config import config_from_dict
from frostwatch.errors import StoreError
from frostwatch.models import Alert, Reading
from frostwatch.store import Store

T0 = dt.datetime(2027, 4, 15, 9, 0, tzinfo=dt.UTC)


@pytest.fixture
def small_fs(tmp_path):
    mnt = tmp_path / "small"
    mnt.mkdir()
    r = subprocess.run(["mount", "-t", "tmpfs", "-o", "size=3m", "tmpfs", str(mnt)], capture_output=True, text=True)
    if r.returncode != 0:
        pytest.skip(f"cannot mount a 3 MiB tmpfs here ({r.stderr.strip() or r.returncode}); run as root")
    try:
        yield mnt
    finally:
        subprocess.run(["umount", "-l", str(mnt)], check=False)


def _fill(path: Path) -> None:
    with open(path, "wb") as f:
        try:
            while True:
                f.write(b"\0" * 65536)
                f.flush()
        except OSError:
            pass


def _readings(start_s: int, n: int) -> list[Reading]:
    return [Reading(T0 + dt.timedelta(seconds=start_s + i), "east-low", "air_temperature", 1.5) for i in range(n)]


def test_full_disk_clear_error_alerts_still_delivered_writes_resume(small_fs, tmp_path):
    """Pass: with the file system full, storing readings raises a StoreError naming the store and
    the full disk; an alert submitted meanwhile is not lost: it reaches the local channels
    (a command channel writing to a file elsewhere) from memory; once space is freed, readings
    are stored again, the rows from before are intact and PRAGMA integrity_check is ok."""
    out = tmp_path / "siren.txt"
    raw = raw_config(small_fs / "fw.db", out)
    cfg = config_from_dict(raw, tmp_path / "farm.toml")
    store = Store.open(cfg.storage.path)
    box = Outbox(store, cfg)
    try:
        store.add_readings(_readings(0, 200), "mqtt")
        filler = small_fs / "filler"
        _fill(filler)
        with pytest.raises(StoreError) as e:
            for k in range(100):  # the WAL may hold a few more pages before it needs new space
                store.add_readings(_readings(1000 + 100 * k, 100), "mqtt")
        assert str(cfg.storage.path) in str(e.value) and "full" in str(e.value)
        a = Alert(T0, "east", "act", 4, "start the wind machines", "east: ACT: start protection",
                  "east/2027-04-14/001-act")
        box.submit([a], T0)  # must not raise
        assert out.exists() and "east: ACT" in out.read_text(), "the alert did not reach a local channel"
        filler.unlink()
        stored, _, _ = store.add_readings(_readings(50_000, 100), "mqtt")
        assert stored == 100
        (n,) = store.conn.execute("SELECT count(*) FROM readings WHERE time_utc_ms < ?",
                                  (int((T0 + dt.timedelta(seconds=200)).timestamp() * 1000),)).fetchone()
        assert n == 200
        assert store.integrity_ok()
        assert box.submit([a], T0) == 1  # the outbox works through the store again
    finally:
        box.close()
        store.close()
