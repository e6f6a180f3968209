"""Fixtures for the report and status-page tests: the demo farm replayed once per session, a copy
of its store per module."""

from __future__ import annotations

import shutil
import sys
from importlib import resources
from pathlib import Path

import background
import pytest
from reports_helpers import ALL_NIGHTS, FROST_NIGHT


def _demo_config(folder: Path) -> Path:
    folder.mkdir(parents=True, exist_ok=True)
    text = resources.files("frostwatch.sample_logs").joinpath("demo-farm.toml").read_text(encoding="utf-8")
    p = folder / "demo-farm.toml"
    p.write_text(text, encoding="utf-8")
    return p


@background.job("_replayed_stores")
def _replay_stores(folder: Path, env: dict) -> dict[str, Path]:
    """The frost night and the three demo nights, each replayed by `frostwatch replay` into a
    folder of its own (the config beside its store), in the background from the session's start
    (tests/background.py)."""
    out = {}
    for name, logs in (("frost", [FROST_NIGHT]), ("season", ALL_NIGHTS)):
        cfg = _demo_config(folder / f"{name}-template")
        p = background.run([sys.executable, "-m", "frostwatch", "replay", *map(str, logs), "--config", str(cfg),
                            "--no-report"], env=env, cwd=folder, timeout=900)
        assert p.returncode == 0, p.stderr[-3000:]
        out[name] = cfg
    return out


@pytest.fixture(scope="session")
def _replayed_stores() -> dict[str, Path]:
    """The frost night and the three demo nights, each replayed once per session; the modules
    below get copies."""
    return background.result("_replayed_stores")


def _copy_of(cfg: Path, folder: Path) -> Path:
    """The config's folder (config, store and any -wal beside it) copied: a module may change its
    store (acknowledge an alert, record a delivery) without another module seeing it."""
    shutil.copytree(cfg.parent, folder, dirs_exist_ok=True)
    return folder / cfg.name


@pytest.fixture(scope="module")
def frost_night_store(_replayed_stores, tmp_path_factory) -> Path:
    """The demo config (tmp copy) with the radiation-frost night replayed into its store."""
    return _copy_of(_replayed_stores["frost"], tmp_path_factory.mktemp("frost-night"))


@pytest.fixture(scope="module")
def season_store(_replayed_stores, tmp_path_factory) -> Path:
    return _copy_of(_replayed_stores["season"], tmp_path_factory.mktemp("season"))
