"""Commands import only what they need, so they start fast on a Pi (issue 19, item 6).

Checked by the modules present in `sys.modules` of a fresh interpreter after the command has
run, never by time (bench/startup.py measures the time).
"""

from __future__ import annotations

import json
import subprocess
import sys
from pathlib import Path

import pytest

# libraries a quick command must not load: plotting, the bulk CSV parse (pandas; sqlite_utils
# pulls it in too), MQTT and the scheduler are the daemon's, the replay's and the report's
HEAVY = ("matplotlib", "pandas", "sqlite_utils", "paho", "apscheduler")

_RUN = """
import json, sys
from frostwatch.cli import main
out = sys.argv[1]
try:
    rc = main(sys.argv[2:])
except SystemExit as exc:  # --help
    rc = exc.code
with open(out, "w") as f:
    json.dump({"rc": rc, "modules": sorted(sys.modules)}, f)
"""


def _modules_after(tmp_path: Path, *args: str) -> tuple[int, set[str]]:
    out = tmp_path / "modules.json"
    p = subprocess.run([sys.executable, "-c", _RUN, str(out), *args], capture_output=True, text=True, timeout=60)
    assert out.exists(), p.stderr
    doc = json.loads(out.read_text())
    return doc["rc"], set(doc["modules"])


def _heavy(modules: set[str]) -> list[str]:
    return sorted(m for m in modules if m.split(".")[0] in HEAVY)


def test_help_imports_no_heavy_library(tmp_path):
    rc, mods = _modules_after(tmp_path, "--help")
    assert rc == 0
    assert _heavy(mods) == []
    assert "numpy" not in mods and "importlib.metadata" not in mods  # --help needs neither


def test_calc_imports_no_heavy_library(tmp_path):
    rc, mods = _modules_after(tmp_path, "calc", "wet-bulb", "--air-temp", "2", "--dew-point", "-1")
    assert rc == 0
    assert _heavy(mods) == []


@pytest.mark.parametrize("command", ["status", "check-config"])
def test_status_and_check_config_import_no_heavy_library_nor_the_daemon(tmp_path, demo_config, command):
    from frostwatch.config import load_config
    from frostwatch.store import Store

    Store.open(load_config(demo_config).storage.path).close()  # an empty store: status reads it
    rc, mods = _modules_after(tmp_path, command, "--config", str(demo_config))
    assert rc == 0
    assert _heavy(mods) == []
    assert "frostwatch.daemon" not in mods and "frostwatch.ingest.mqtt" not in mods


def test_load_config_checks_every_section_without_the_daemon(tmp_path, demo_config):
    code = ("import sys; from frostwatch.config import load_config; load_config(sys.argv[1]); "
            "print(sorted(m for m in sys.modules if m.split('.')[0] in sys.argv[2].split(',') "
            "or m in ('frostwatch.daemon', 'frostwatch.ingest.mqtt')))")
    p = subprocess.run([sys.executable, "-c", code, str(demo_config), ",".join(HEAVY)],
                       capture_output=True, text=True, timeout=60)
    assert p.returncode == 0, p.stderr
    assert p.stdout.strip() == "[]"


def test_a_bad_daemon_or_mapping_key_is_still_reported_by_load_config(tmp_path, demo_config):
    """The [daemon] and [[mappings]] checks moved out of the daemon and the MQTT module: still run."""
    from frostwatch.config import load_config
    from frostwatch.errors import ConfigError

    text = demo_config.read_text(encoding="utf-8")
    demo_config.write_text(text + '\n[daemon]\nbatch_delai_s = 5\n\n[[mappings]]\ntopic = "x/{station}"\n',
                           encoding="utf-8")
    with pytest.raises(ConfigError) as exc:
        load_config(demo_config)
    msg = str(exc.value)
    assert "daemon.batch_delai_s: unknown key (did you mean 'batch_delay_s'?)" in msg
    assert "mappings[0].fields: missing" in msg


def test_version_is_still_the_installed_one():
    import frostwatch

    p = subprocess.run([sys.executable, "-m", "frostwatch", "--version"], capture_output=True, text=True, timeout=60)
    assert p.returncode == 0 and p.stdout.strip() == f"frostwatch {frostwatch.__version__}"


def test_backtest_imports_neither_the_daemon_nor_the_replay_nor_the_store(tmp_path, demo_config, demo_logs):
    """`frostwatch backtest` scores the forecast only: it reads the logs (pandas) and the
    calibration, not the alert rules' pipeline, the replay, the store (sqlite3) or the daemon."""
    rc, mods = _modules_after(tmp_path, "backtest", *map(str, demo_logs), "--config", str(demo_config), "--json")
    assert rc == 0
    assert "pandas" in mods  # the bulk parse
    assert sorted(m for m in mods if m.split(".")[0] in ("matplotlib", "sqlite_utils", "paho", "apscheduler", "sqlite3")) == []
    unwanted = ("frostwatch.daemon.", "frostwatch.pipeline", "frostwatch.replay", "frostwatch.store", "frostwatch.alerts.rules",
                "frostwatch.advice.message", "frostwatch.reports.night")
    assert sorted(m for m in mods if m.startswith(unwanted) or m == "frostwatch.daemon") == []
