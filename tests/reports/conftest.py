"""Fixtures for the report and status-page tests: the demo farm replayed once per module."""

from __future__ import annotations

from importlib import resources
from pathlib import Path

import pytest
from reports_helpers import ALL_NIGHTS, FROST_NIGHT

from frostwatch.cli import main


def _demo_config(folder: Path) -> Path:
    folder.mkdir(parents=True, exist_ok=True)
    text = resources.files("frostwatch.sample_logs").joinpath("demo-farm.toml").read_text(encoding="utf-8")
    p = folder / "demo-farm.toml"
    p.write_text(text, encoding="utf-8")
    return p


@pytest.fixture(scope="module")
def frost_night_store(tmp_path_factory) -> Path:
    """The demo config (tmp copy) with the radiation-frost night replayed into its store."""
    cfg = _demo_config(tmp_path_factory.mktemp("frost-night"))
    assert main(["replay", str(FROST_NIGHT), "--config", str(cfg), "--no-report"]) == 0
    return cfg


@pytest.fixture(scope="module")
def season_store(tmp_path_factory) -> Path:
    cfg = _demo_config(tmp_path_factory.mktemp("season"))
    assert main(["replay", *map(str, ALL_NIGHTS), "--config", str(cfg), "--no-report"]) == 0
    return cfg
