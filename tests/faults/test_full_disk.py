"""A full disk (reliability.md 9, test 21): the store on a 3 MiB tmpfs that fills up.

Uses `mount -t tmpfs -o size=3m` (needs root, as in CI's container); where mounting is not
permitted the test is skipped with that reason. The ingest writer's side (a failed commit keeps
its batch unacknowledged and retries every second, so the broker keeps the readings) is code in
frostwatch/ingest/mqtt.py; here the store and the outbox face the full disk directly.
"""

from __future__ import annotations

import datetime as dt
import os
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
    """Fill the file system: unbuffered writes until the disk refuses one. A buffered file would
    raise ENOSPC again from its close() when the disk filled part-way through a block."""
    block = b"\0" * 65536
    fd = os.open(path, os.O_WRONLY | os.O_CREAT | os.O_TRUNC, 0o600)
    try:
        while True:
            try:
                if os.write(fd, block) < len(block):
                    block = block[: max(1, len(block) // 2)]
            except OSError:
                if len(block) == 1:
                    return
                block = block[: len(block) // 2]  # the last free blocks, a smaller write at a time
    finally:
        os.close(fd)


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
        for k in range(1000):  # a store's 1 KiB pages: a few one-row commits may still fit in the WAL file's last page
            try:
                store.add_readings(_readings(20_000 + k, 1), "mqtt")
            except StoreError:
                break
        a = Alert(T0, "east", "protect", 4, "start the wind machines", "east: ACT: start protection",
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


DAEMON_STATIONS = ("east-low", "east-tower", "river-low", "river-low-b", "hill-low", "shed-sky")


@pytest.mark.broker
def test_daemon_on_a_full_disk_says_readings_are_not_being_stored_and_blames_no_sensor(small_fs, tmp_path, mosquitto):
    """Pass (the real daemon, its store on a small tmpfs, every station reporting twice a second,
    a 3 s silence limit): when the disk fills, within seconds the daemon's unhealthy reason is
    "readings are not being stored (the disk is full ...)" (not the broker), the watchdog is no
    longer fed, and the health alert saying so reaches the local siren channel from memory; no
    sensor is called silent meanwhile although nothing is stored; once space is freed every
    reading published during the outage is stored."""
    import threading
    import time

    from fault_helpers import DaemonProc, connect_publisher, query, reading, wait_until, write_config
    from test_supervision import NotifySocket

    siren = tmp_path / "siren.txt"
    tail = (f'\n[[channels]]\nname = "siren"\ntype = "command"\nargv = ["sh", "-c", "cat >> \'{siren}\'"]\n'
            'address = "none"\ntimeout_s = 5\n')
    cfg = write_config(tmp_path, mosquitto.port,
                       daemon="store_stall_s = 2\nsilent_after_intervals = 0.05\n", tail=tail)
    text = cfg.read_text().replace('path = "frostwatch.db"', f'path = "{small_fs / "fw.db"}"', 1)
    text = text.replace('default = ["console"]', 'default = ["console", "siren"]')
    cfg.write_text(text)
    db = small_fs / "fw.db"
    ns = NotifySocket()
    d = DaemonProc(cfg, env={"NOTIFY_SOCKET": str(ns.path), "WATCHDOG_USEC": "1000000"})
    pub = connect_publisher(mosquitto.port, "full-disk-sensors")
    sent = [0]
    stop = threading.Event()

    def sensors():
        k = 0
        while not stop.wait(0.5) and k < 400:
            k += 1
            t = dt.datetime.now(dt.UTC).replace(microsecond=0) + dt.timedelta(milliseconds=500 * (k % 2))
            for st in DAEMON_STATIONS:
                pub.publish(*reading(st, t, 4.0), qos=1)
                sent[0] += 1

    th = threading.Thread(target=sensors, daemon=True)
    filler = small_fs / "filler"
    try:
        d.start()
        assert wait_until(lambda: "connected to" in d.log_text(), 20), d.log_text()[-2000:]
        th.start()
        assert wait_until(lambda: (query(db, "SELECT count(DISTINCT station) FROM readings") or [(0,)])[0][0] == 6, 20)
        time.sleep(4)  # the start-up silence (no reading yet) has been raised and cleared by now
        mark_log, mark_siren = len(d.log_text()), len(siren.read_text()) if siren.exists() else 0
        ns.drain(0.5)
        _fill(filler)
        assert wait_until(lambda: "unhealthy: readings are not being stored" in d.log_text()[mark_log:], 20), \
            d.log_text()[mark_log:][-3000:]
        problems_at = time.monotonic()
        ns.drain(1.5)
        after = ns.drain(3.0)
        assert not [s for _, s in after if s == "WATCHDOG=1"], "the watchdog was fed while nothing was stored"
        assert wait_until(lambda: siren.exists() and "readings are not being stored" in siren.read_text()[mark_siren:], 15)
        while time.monotonic() - problems_at < 6:  # twice the silence limit with sensors reporting
            time.sleep(0.5)
        log = d.log_text()[mark_log:]
        unhealthy = [ln for ln in log.splitlines() if "unhealthy:" in ln]
        assert any("disk is full" in ln for ln in unhealthy), unhealthy
        assert not [ln for ln in unhealthy if "broker" in ln or "heartbeat" in ln], unhealthy
        said = siren.read_text()[mark_siren:]
        assert "disk is full" in said and "silent" not in said, said
        filler.unlink()
        stop.set()
        th.join(5)
        assert wait_until(lambda: query(db, "SELECT count(*) FROM readings") == [(sent[0],)], 40), \
            (query(db, "SELECT count(*) FROM readings"), sent[0], d.log_text()[-2000:])
        assert "readings are stored again" in d.log_text()
    finally:
        stop.set()
        pub.loop_stop()
        d.terminate()
        ns.close()
