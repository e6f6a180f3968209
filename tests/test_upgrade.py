"""Upgrading an installed Pi in place: a store written by frostwatch 0.1.0 (tests/fixtures/store-0.1.0,
schema version 2) opens with the installed package, migrates to the current schema and keeps every
row of every table; the commands work on it. A store from a newer frostwatch is refused with a
clear message and left byte for byte as it was.

The checks compare the upgraded store with the fixture's own contents (every table, every column
it had), never with a fixed final schema, so they hold as migrations are appended.
"""

from __future__ import annotations

import hashlib
import json
import shutil
import sqlite3
import subprocess
import sys
from pathlib import Path

import pytest

from frostwatch.errors import StoreError
from frostwatch.store.db import Store
from frostwatch.store.schema import SCHEMA_VERSION

FIXTURE = Path(__file__).resolve().parent / "fixtures" / "store-0.1.0"
FIXTURE_DB = FIXTURE / "store-v2-0.1.0.db"
FIXTURE_SHA256 = "fc90376bb637f702a57daf4afb698acbfeb25325c05492d6e675571921a3c279"
FIXTURE_COUNTS = {"readings": 1089, "rejections": 30, "projections": 495, "alerts": 6, "deliveries": 7, "acks": 1,
                  "protection_runs": 1, "events": 1, "meta": 1, "alert_state": 6}
SCRIPT = Path(sys.executable).parent / "frostwatch"


def _cli(*args: str, cwd: Path) -> subprocess.CompletedProcess:
    return subprocess.run([str(SCRIPT), *args], capture_output=True, text=True, timeout=300, cwd=cwd)


def _snapshot(db: Path) -> dict[str, tuple[list[str], list[tuple]]]:
    """Every table: its columns and all its rows (sorted), read from `db`."""
    con = sqlite3.connect(db)
    try:
        tables = [r[0] for r in con.execute(
            "SELECT name FROM sqlite_master WHERE type = 'table' AND name NOT LIKE 'sqlite_%' ORDER BY name")]
        out = {}
        for t in tables:
            cols = [r[1] for r in con.execute(f'PRAGMA table_info("{t}")')]
            out[t] = (cols, _rows(con, t, cols))
        return out
    finally:
        con.close()


def _rows(con: sqlite3.Connection, table: str, cols: list[str]) -> list[tuple]:
    sel = ", ".join(f'"{c}"' for c in cols)
    return sorted(con.execute(f'SELECT {sel} FROM "{table}"').fetchall(), key=repr)


def _user_version(db: Path) -> int:
    con = sqlite3.connect(db)
    try:
        return con.execute("PRAGMA user_version").fetchone()[0]
    finally:
        con.close()


@pytest.fixture
def old_site(tmp_path: Path) -> tuple[Path, Path, dict]:
    """A copy of the 0.1.0 store beside a copy of its config, and the fixture's own contents."""
    assert hashlib.sha256(FIXTURE_DB.read_bytes()).hexdigest() == FIXTURE_SHA256, \
        f"{FIXTURE_DB} has changed: it stands for stores already on growers' Pis and must never be rewritten"
    original = tmp_path / "original.db"  # read from a copy: never open the fixture itself
    shutil.copyfile(FIXTURE_DB, original)
    before = _snapshot(original)
    db = tmp_path / "frostwatch.db"  # farm.toml's [storage] path, relative to the config
    shutil.copyfile(FIXTURE_DB, db)
    shutil.copyfile(FIXTURE / "farm.toml", tmp_path / "farm.toml")
    return tmp_path / "farm.toml", db, before


def test_the_fixture_is_a_0_1_0_store_with_rows_in_every_table(old_site):
    _, db, before = old_site
    assert _user_version(db) == 2
    assert {t: len(rows) for t, (_, rows) in before.items() if rows} == FIXTURE_COUNTS


def test_a_0_1_0_store_migrates_to_the_current_schema_keeping_every_row(old_site):
    _, db, before = old_site
    with Store.open(db) as store:
        assert store.schema_version == SCHEMA_VERSION
    assert _user_version(db) == SCHEMA_VERSION >= 2
    con = sqlite3.connect(db)
    try:
        for table, (cols, rows) in before.items():
            have = [r[1] for r in con.execute(f'PRAGMA table_info("{table}")')]
            assert set(cols) <= set(have), f"{table}: columns {sorted(set(cols) - set(have))} lost in the upgrade"
            assert _rows(con, table, cols) == rows, f"{table}: rows changed in the upgrade"
        # a few rows spelt out, independent of the snapshot above
        assert con.execute("SELECT value FROM readings WHERE time_utc_ms = 1807754400000 AND station = 'east-low' "
                           "AND quantity = 'air_temperature'").fetchone() == (11.11,)
        assert con.execute("SELECT alert_key, who, via, time_utc_ms FROM acks").fetchall() == \
            [("east/2027-04-14/002-act", "maria", "cli", 1807768380000)]
        assert con.execute("SELECT value FROM meta WHERE key = 'fixture'").fetchone() == \
            ("made by frostwatch 0.1.0, commit cd4173a",)
        assert con.execute("SELECT block, method, stop_utc_ms FROM protection_runs").fetchall() == \
            [("river", "overtree_sprinkler", None)]
    finally:
        con.close()
    with Store.open(db) as store:  # opening again migrates nothing
        assert store.schema_version == SCHEMA_VERSION


def test_the_commands_work_on_an_upgraded_0_1_0_store(old_site):
    """The first command migrates the store; alerts, export, report and status read it."""
    cfg, db, before = old_site
    p = _cli("alerts", "--config", str(cfg), "--json", "--night", "2027-04-14", cwd=cfg.parent)
    assert p.returncode == 0, p.stderr
    assert _user_version(db) == SCHEMA_VERSION
    alerts = json.loads(p.stdout)["alerts"]
    keys = [r[before["alerts"][0].index("key")] for r in before["alerts"][1]]
    assert sorted(a["key"] for a in alerts) == sorted(keys)
    acked = next(a for a in alerts if a["key"] == "east/2027-04-14/002-act")
    assert [(k["who"], k["via"]) for k in acked["acks"]] == [("maria", "cli")]
    assert sum(len(a["deliveries"]) for a in alerts) == FIXTURE_COUNTS["deliveries"]

    p = _cli("export", "--config", str(cfg), cwd=cfg.parent)
    assert p.returncode == 0, p.stderr
    lines = p.stdout.splitlines()
    assert lines[0] == "time,station,quantity,value,unit" and len(lines) - 1 == FIXTURE_COUNTS["readings"]
    assert "2027-04-15T02:00:00Z,east-low,air_temperature,11.11,degC" in lines

    out = cfg.parent / "report"
    p = _cli("report", "--config", str(cfg), "--night", "2027-04-14", "--out", str(out), cwd=cfg.parent)
    assert p.returncode == 0, p.stderr
    assert (out / "night-2027-04-14.html").is_file()

    p = _cli("status", "--config", str(cfg), "--json", cwd=cfg.parent)
    assert p.returncode == 0, p.stderr
    assert json.loads(p.stdout)["store"] == str(db)


def _newer_store(old_site, journal_mode: str) -> tuple[Path, Path, int]:
    cfg, db, _ = old_site
    newer = SCHEMA_VERSION + 1
    con = sqlite3.connect(db)
    con.execute(f"PRAGMA journal_mode={journal_mode}")
    con.execute(f"PRAGMA user_version={newer}")
    con.close()
    return cfg, db, newer


def _files(folder: Path) -> dict[str, str]:
    return {p.name: hashlib.sha256(p.read_bytes()).hexdigest() for p in sorted(folder.iterdir()) if p.is_file()}


@pytest.mark.parametrize("journal_mode", ["delete", "wal"])
def test_a_store_from_a_newer_frostwatch_is_refused_and_left_untouched(old_site, journal_mode):
    """In rollback-journal mode, merely setting WAL would rewrite the file: the check comes first."""
    cfg, db, newer = _newer_store(old_site, journal_mode)
    files = _files(db.parent)
    with pytest.raises(StoreError) as err:
        Store.open(db)
    msg = str(err.value)
    assert msg.startswith(f"{db}: ") and f"schema version {newer}" in msg and f"schema version {SCHEMA_VERSION})" in msg
    assert _files(db.parent) == files

    for args in (["alerts", "--json"], ["export"], ["run"]):
        p = _cli(*args, "--config", str(cfg), cwd=cfg.parent)
        assert p.returncode == 1, (args, p.stdout, p.stderr)
        assert str(db) in p.stderr and f"schema version {newer}" in p.stderr, p.stderr
        assert "Traceback" not in p.stderr
        assert p.stdout == "" or args == ["run"], p.stdout
        assert _files(db.parent) == files, f"frostwatch {args[0]} changed the folder of a newer store"
