"""Fewer SD-card writes on the night that matters (issue 19, item 5), without blinding anyone:

- a reading near a trigger is committed at once only when a prompt evaluation would follow it
  (no prompt evaluation in the last debounce_s); otherwise it rides the ordinary batch;
- an evaluation prompted by a reading that changes nothing a grower would notice is not stored
  (nor published); scheduled evaluations and any that raise an alert or change a block are;
- decisions are stored compressed and read back the same, older text rows too;
- a new store uses 1 KiB pages, an existing one keeps its own.

bench/storage.py measures the bytes."""

from __future__ import annotations

import dataclasses
import datetime as dt
import json
import sqlite3
from pathlib import Path

from frostwatch.config import load_config
from frostwatch.daemon import PROMPT_REASON, Core, commit_urgently, daemon_settings
from frostwatch.ingest.csvlog import read_sensor_log
from frostwatch.models import Reading
from frostwatch.store import Store
from frostwatch.store import decisions as stored
from frostwatch.store.db import PAGE_SIZE_BYTES

SAMPLES = Path(__file__).resolve().parents[2] / "sample_sensor_logs"
NIGHT = dt.datetime(2027, 4, 15, 8, 0, tzinfo=dt.UTC)  # 01:00 local on the demo's frost night


class _Outbox:
    def __init__(self):
        self.alerts = []

    def submit(self, alerts, now):
        self.alerts += alerts

    def submit_health(self, *a, **k):
        return ""


def _core(demo_config, store):
    cfg = load_config(demo_config)
    return Core(cfg, daemon_settings(cfg), store, _Outbox(), clock=lambda: NIGHT)


def test_a_near_trigger_reading_is_urgent_only_when_a_prompt_evaluation_would_follow(demo_config, tmp_path):
    with Store.open(tmp_path / "u.db") as store:
        core = _core(demo_config, store)
        cold = [Reading(NIGHT, "east-low", "air_temperature", -1.0)]
        warm = [Reading(NIGHT, "east-low", "air_temperature", 12.0)]
        debounce = core.s.debounce_s
        assert commit_urgently(core, cold, NIGHT, debounce + 1, debounce)
        assert not commit_urgently(core, cold, NIGHT, debounce - 1, debounce)  # the debounce holds: ordinary batch
        assert not commit_urgently(core, warm, NIGHT, debounce + 1, debounce)  # far from every trigger
        noon = NIGHT + dt.timedelta(hours=12)
        assert not commit_urgently(core, cold, noon, debounce + 1, debounce)  # outside the watch window


def _decision_rows(store) -> int:
    with store.lock:
        return store.conn.execute("SELECT count(*) FROM decisions").fetchone()[0]


def test_a_prompt_evaluation_that_changes_nothing_is_not_stored(demo_config, tmp_path):
    cfg = load_config(demo_config)
    readings, _ = read_sensor_log(SAMPLES / "2027-04-14-radiation-frost.csv", {s.id for s in cfg.stations})
    with Store.open(tmp_path / "p.db") as store:
        store.add_readings(readings, "csv")
        core = _core(demo_config, store)
        published = []
        core.publish = lambda topic, doc: published.append(topic)
        t = dt.datetime(2027, 4, 15, 4, 0, tzinfo=dt.UTC)  # 21:00 local on the frost night
        core.evaluate(t, "scheduled")
        n = _decision_rows(store)
        assert n == len(cfg.blocks) and len(published) == len(cfg.blocks)
        ev = core.evaluate(t + dt.timedelta(seconds=30), PROMPT_REASON)  # the second look raises standby
        assert ev.alerts and _decision_rows(store) == 2 * n and len(published) == 2 * n
        ev = core.evaluate(t + dt.timedelta(seconds=60), PROMPT_REASON)  # the same picture 30 s later
        assert not ev.alerts
        assert _decision_rows(store) == 2 * n and core.evaluations_not_stored == 1
        assert len(published) == 2 * n  # nothing published that the store does not hold
        core.evaluate(t + dt.timedelta(minutes=2), "scheduled")  # scheduled: always stored
        assert _decision_rows(store) == 3 * n
        # through the night the prompt evaluations that change a block or raise an alert are stored
        box = core.outbox
        stored_at = []
        for k in range(1, 200):
            at = t + dt.timedelta(minutes=2, seconds=30 * k)
            before = _decision_rows(store)
            alerts = len(box.alerts)
            core.evaluate(at, PROMPT_REASON)
            if len(box.alerts) > alerts:
                assert _decision_rows(store) == before + n  # an alert always has its decision stored
            if _decision_rows(store) > before:
                stored_at.append(at)
        assert stored_at and core.evaluations_not_stored > 100
        latest = stored.latest(store)
        assert set(latest) == {b.id for b in cfg.blocks}


def test_decisions_are_stored_compressed_and_older_text_rows_still_read(demo_config, tmp_path):
    cfg = load_config(demo_config)
    readings, _ = read_sensor_log(SAMPLES / "2027-04-14-radiation-frost.csv", {s.id for s in cfg.stations})
    with Store.open(tmp_path / "c.db") as store:
        store.add_readings(readings, "csv")
        core = _core(demo_config, store)
        ev = core.evaluate(NIGHT, "scheduled")
        with store.lock:
            doc, = store.conn.execute("SELECT doc FROM decisions WHERE block = 'east'").fetchone()
        assert isinstance(doc, bytes) and len(doc) < len(json.dumps(stored.decision_to_doc(ev.decisions[0]))) / 2
        assert stored.latest(store)["east"] == next(d for d in ev.decisions if d.block == "east")
        # a row written by schema 3 (JSON text) reads as before
        later = NIGHT + dt.timedelta(minutes=2)
        east = next(d for d in ev.decisions if d.block == "east")
        old = dataclasses.replace(east, as_of_utc=later)
        row = list(stored.row_of(old))
        row[-1] = json.dumps(stored.decision_to_doc(old), separators=(",", ":"))
        with store.transaction() as c:
            c.execute(stored._INSERT, row)
        assert stored.latest(store)["east"] == old


def test_a_new_store_has_small_pages_and_an_old_one_keeps_its_own(tmp_path):
    with Store.open(tmp_path / "new.db") as store:
        assert store.conn.execute("PRAGMA page_size").fetchone()[0] == PAGE_SIZE_BYTES == 1024
    old = tmp_path / "old.db"
    con = sqlite3.connect(old)
    con.execute("CREATE TABLE t(x)")
    con.commit()
    con.close()
    with Store.open(old) as store:
        assert store.conn.execute("PRAGMA page_size").fetchone()[0] == 4096
