"""Small breakages a new user met after the README's install: help pages, `calc` alone, `demo --json`,
the "try next" line naming a command that is not on PATH, `init`'s example and `check-config`'s
[daemon] settings, and build leftovers showing up in git."""

from __future__ import annotations

import argparse
import json
import re
import shutil
import subprocess
import sys
import tomllib
from pathlib import Path

import background
import pytest

from frostwatch.cli import build_parser
from frostwatch.commands.common import _self_command
from frostwatch.config import _OPEN_SECTIONS, _SCHEMA, load_config
from frostwatch.daemon import _DAEMON_KEYS, DaemonSettings

REPO = Path(__file__).resolve().parent.parent
SCRIPT = Path(sys.executable).parent / "frostwatch"
CALCULATORS = ("wet-bulb", "dew-point", "sprinkler-start", "critical", "sprinkler-rate", "wind-machine")


def _cli(*args: str, cwd: Path, env: dict | None = None) -> subprocess.CompletedProcess:
    return subprocess.run([str(SCRIPT), *args], capture_output=True, text=True, timeout=300, cwd=cwd, env=env)


def _parsers(p: argparse.ArgumentParser, path: tuple[str, ...] = ()):
    yield path, p
    for action in p._actions:
        if isinstance(action, argparse._SubParsersAction):
            for name, sub in action.choices.items():
                yield from _parsers(sub, (*path, name))


def test_every_help_page_renders():
    """An unescaped % in any help text crashed `--help` (argparse formats help with %)."""
    pages = list(_parsers(build_parser()))
    assert len(pages) > 20
    for path, p in pages:
        assert p.format_help(), path


def test_calc_help_exits_0(tmp_path):
    p = _cli("calc", "--help", cwd=tmp_path)
    assert p.returncode == 0 and "Traceback" not in p.stderr, p.stderr
    assert "10 % and 90 % kill temperatures" in p.stdout
    p = _cli("calc", "critical", "--help", cwd=tmp_path)
    assert p.returncode == 0, p.stderr


def test_calc_alone_lists_every_calculator(tmp_path):
    p = _cli("calc", cwd=tmp_path)
    assert p.returncode == 0, p.stderr
    listed = [ln.split()[0] for ln in p.stdout.splitlines() if ln.startswith("  ")]
    assert listed == list(CALCULATORS), p.stdout
    assert "10 % and 90 %" in p.stdout and "calc WHAT --help" in p.stdout


@background.job("demo_json")
def _run_demo_json(home: Path, env: dict) -> tuple[dict, subprocess.CompletedProcess]:
    env = dict(env, PATH="/usr/bin:/bin", HOME=str(home))
    return env, background.run([str(SCRIPT), "demo", "--json", "--out", str(home / "demo")], cwd=home, env=env,
                               timeout=300)


@pytest.fixture(scope="module")
def demo_json() -> tuple[dict, subprocess.CompletedProcess]:
    """`frostwatch demo --json --out DIR` by the installed script, with only /usr/bin and /bin on
    PATH, in an empty folder that is also HOME; run in the background from the session's start
    (tests/background.py)."""
    return background.result("demo_json")


def test_demo_json_is_one_document_and_names_the_command_as_installed(demo_json):
    """After the README's install, frostwatch is .venv/bin/frostwatch and not on PATH: the demo's
    "try next" names it by that path."""
    env, p = demo_json
    assert shutil.which("frostwatch", path=env["PATH"]) is None
    assert p.returncode == 0, p.stderr
    doc = json.loads(p.stdout)  # the whole of stdout is one JSON document
    assert {"demo", "alerts", "projections", "nights", "readings", "reports"} <= set(doc)
    assert doc["alerts"] and all(Path(r).is_file() for r in doc["reports"])
    try_next = doc["demo"]["try_next"]
    assert try_next.startswith(f"{SCRIPT} backtest "), try_next
    assert Path(doc["demo"]["config"]).is_file()


@pytest.mark.parametrize(("argv0", "on_path", "expected"), [
    ("/srv/fw/.venv/bin/frostwatch", None, "/srv/fw/.venv/bin/frostwatch"),  # the README's install
    ("/srv/fw/.venv/bin/frostwatch", "/srv/fw/.venv/bin/frostwatch", "frostwatch"),  # an activated venv
    ("/srv/fw/.venv/bin/frostwatch", "/usr/local/bin/frostwatch", "/srv/fw/.venv/bin/frostwatch"),  # another one first
    ("frostwatch", "/usr/local/bin/frostwatch", "frostwatch"),
    ("/usr/lib/python3/site-packages/frostwatch/__main__.py", None, f"{sys.executable} -m frostwatch"),
])
def test_the_try_next_command_is_one_that_runs_this_frostwatch(argv0, on_path, expected):
    assert _self_command(argv0, which=lambda name: on_path) == expected


def test_the_try_next_command_of_a_relative_start_is_absolute(tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    assert _self_command(".venv/bin/frostwatch", which=lambda name: None) == str(tmp_path / ".venv/bin/frostwatch")


def _uncomment(text: str, header: str) -> str:
    """Uncomment the section starting at the `# header` line, up to the next blank line (not *_file keys)."""
    out, inside = [], False
    for line in text.splitlines():
        if line == f"# {header}":
            inside = True
        elif not line.strip():
            inside = False
        if inside and re.match(r"# (\[|[a-z_]+ = )", line) and not re.match(r"# \w+_file = ", line):
            line = line[2:]
        out.append(line)
    return "\n".join(out) + "\n"


def test_init_writes_every_section_and_the_file_passes_check_config(tmp_path):
    cfg = tmp_path / "farm.toml"
    p = _cli("init", str(cfg), cwd=tmp_path)
    assert p.returncode == 0, p.stderr
    text = cfg.read_text(encoding="utf-8")
    for section in [*_SCHEMA, *_OPEN_SECTIONS]:
        assert re.search(rf"^(# )?\[\[?{section}\]\]?", text, re.M), f"no [{section}] in init's example"
    for key in _DAEMON_KEYS:
        assert re.search(rf"^# {key} = ", text, re.M), f"[daemon] {key} missing from init's example"
    load_config(cfg)
    p = _cli("check-config", "--config", str(cfg), cwd=tmp_path)
    assert p.returncode == 0 and p.stdout.startswith(f"{cfg}: ok"), p.stderr

    # the commented sections are valid as written: uncommented, they load, and the defaults shown are the defaults
    for header in ("[status_page]", "[daemon]", "[[mappings]]", "[fleet]"):
        text = _uncomment(text, header)
    cfg.write_text(text, encoding="utf-8")
    raw = tomllib.loads(text)
    assert set(raw["daemon"]) == set(_DAEMON_KEYS) and raw["mappings"][0]["topic"] == "lora/{station}/up"
    p = _cli("check-config", "--config", str(cfg), "--json", cwd=tmp_path)
    assert p.returncode == 0, p.stderr
    shown = json.loads(p.stdout)["daemon"]
    defaults = DaemonSettings()
    for key in _DAEMON_KEYS:
        if key not in ("report_dir", "status_topic"):
            assert shown[key] == getattr(defaults, key), key
    assert shown["status_topic"] == "frostwatch/status"


def test_check_config_lists_the_daemon_settings(demo_config):
    p = _cli("check-config", "--config", str(demo_config), cwd=demo_config.parent)
    assert p.returncode == 0, p.stderr
    for key in _DAEMON_KEYS:
        assert f'"{key}":' in p.stdout, f"check-config does not show [daemon] {key}"
    p = _cli("check-config", "--config", str(demo_config), "--json", cwd=demo_config.parent)
    doc = json.loads(p.stdout)
    assert set(_DAEMON_KEYS) <= set(doc["daemon"]) and doc["daemon"]["batch_delay_s"] == DaemonSettings().batch_delay_s
    assert doc["status_page"]["bind"] == "127.0.0.1"


@pytest.mark.skipif(not (REPO / ".git").exists(), reason="not a git checkout")
def test_build_leftovers_are_ignored_by_git():
    for path in ("build/lib/frostwatch/cli.py", "dist/frostwatch-0.2.0-py3-none-any.whl", "frostwatch.egg-info/PKG-INFO"):
        p = subprocess.run(["git", "check-ignore", "-q", path], cwd=REPO, capture_output=True, timeout=30)
        assert p.returncode == 0, f"{path} is not ignored by git"
