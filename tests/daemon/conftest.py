"""Fixtures of the daemon tests; the helpers live in daemon_helpers.py."""

from __future__ import annotations

from pathlib import Path

import pytest
from daemon_helpers import DaemonProc, write_config


@pytest.fixture
def site(tmp_path: Path, mosquitto):
    cfg = write_config(tmp_path, mosquitto.port)
    return cfg, tmp_path / "frostwatch.db"


@pytest.fixture
def daemon_proc(site):
    d = DaemonProc(site[0])
    yield d
    if d.alive():
        d.terminate()
