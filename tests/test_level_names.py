"""Plain level names (issue 13.2): rest, may-stop, wait, ready, protect, all-hands; all-set, fix,
check, go-look. The rank is the stable contract; the names before 0.2 are read everywhere they
can come from: a config's `[alerts.route]` keys (for one release, with a deprecation message), a
store written before 0.2 (its alerts display under the new words), and a fleet site still
publishing the old names. No level name shares a word with an official weather-service bulletin."""

from __future__ import annotations

import json
import shutil
import subprocess
import sys
from pathlib import Path

import pytest

from frostwatch.advice.render import LEVEL_WORD, level_word
from frostwatch.alerts.levels import ALL_LEVELS, HEALTH_LEVELS, LEVELS, OLD_NAMES, level_name, rank_of

FIXTURE = Path(__file__).resolve().parent / "fixtures" / "store-0.1.0"
BULLETIN_WORDS = ("watch", "warning", "advisory", "frost", "freeze", "critical", "possible", "statement", "outlook",
                  "alert", "emergency", "hazard")


def test_the_ladder_and_its_ranks():
    assert LEVELS == {"rest": 0, "may-stop": 1, "wait": 2, "ready": 3, "protect": 4, "all-hands": 5}
    assert HEALTH_LEVELS == {"all-set": 0, "fix": 2, "check": 2, "go-look": 4}
    for old, new in OLD_NAMES.items():  # every old name keeps its rank under its new name
        assert rank_of(old) == ALL_LEVELS[new] and level_name(old) == new and level_word(old) == LEVEL_WORD[new]


def test_no_level_name_shares_a_word_with_a_weather_bulletin():
    for name in ALL_LEVELS:
        words = set(name.split("-")) | set(LEVEL_WORD[name].lower().split())
        assert not words & set(BULLETIN_WORDS), name


def _run(*args, cwd=None) -> subprocess.CompletedProcess:
    return subprocess.run([sys.executable, "-m", "frostwatch", *args], capture_output=True, text=True, timeout=300,
                          cwd=cwd)


def _demo_with_route(tmp_path: Path, route: str) -> Path:
    from importlib import resources

    text = resources.files("frostwatch.sample_logs").joinpath("demo-farm.toml").read_text(encoding="utf-8")
    assert 'default = ["console"]\n' in text
    tmp_path.mkdir(parents=True, exist_ok=True)
    p = tmp_path / "farm.toml"
    p.write_text(text.replace('default = ["console"]\n', f'default = ["console"]\n{route}\n'), encoding="utf-8")
    return p


def test_old_route_names_are_read_for_one_release_with_a_deprecation_message(tmp_path):
    cfg = _demo_with_route(tmp_path, 'act = ["console"]\nunmonitored = ["console"]')
    p = _run("check-config", "--config", str(cfg))
    assert p.returncode == 0, p.stderr
    assert "deprecated: alerts.route.act: the level 'act' is called 'protect'" in p.stdout
    assert "refused from 0.3" in p.stdout and "alerts.route.unmonitored" in p.stdout
    doc = json.loads(_run("check-config", "--config", str(cfg), "--json").stdout)
    assert len(doc["deprecations"]) == 2
    from frostwatch.alerts.config import load_alerts_config
    from frostwatch.config import load_config

    ac = load_alerts_config(load_config(cfg))
    assert set(ac.route) == {"default", "protect", "go-look"}
    clean = _run("check-config", "--config", str(_demo_with_route(tmp_path / "new", 'protect = ["console"]')))
    assert clean.returncode == 0 and "deprecated" not in clean.stdout + clean.stderr


def test_an_old_and_a_new_name_for_the_same_level_is_an_error(tmp_path):
    cfg = _demo_with_route(tmp_path, 'act = ["console"]\nprotect = ["console"]')
    p = _run("check-config", "--config", str(cfg))
    assert p.returncode == 2 and "alerts.route.act: both act (the old name) and protect are given" in p.stderr


def test_a_store_from_before_the_rename_displays_its_alerts_under_the_new_words(tmp_path):
    """The 0.1.0 store's alerts are stored as standby, frost-possible and act: `frostwatch alerts`
    and the night report show READY, WAIT and PROTECT, with their old ranks."""
    shutil.copyfile(FIXTURE / "store-v2-0.1.0.db", tmp_path / "frostwatch.db")
    shutil.copyfile(FIXTURE / "farm.toml", tmp_path / "farm.toml")
    cfg = tmp_path / "farm.toml"
    p = _run("alerts", "--config", str(cfg), "--night", "2027-04-14", cwd=tmp_path)
    assert p.returncode == 0, p.stderr
    assert "[READY]" in p.stdout and "[WAIT]" in p.stdout and "[PROTECT]" in p.stdout
    assert "[standby" not in p.stdout and "rank" not in p.stdout
    p = _run("report", "--config", str(cfg), "--night", "2027-04-14", "--out", str(tmp_path / "r"), cwd=tmp_path)
    assert p.returncode == 0, p.stderr
    page = (tmp_path / "r" / "night-2027-04-14.html").read_text(encoding="utf-8")
    table = page.split('id="alerts"', 1)[1].split("</table>", 1)[0]
    assert '<span class="lvl lvl4">PROTECT</span>' in table and '<span class="lvl lvl3">READY</span>' in table
    assert ">act<" not in table and ">standby<" not in table


@pytest.mark.parametrize(("old", "new"), [("standby", "READY"), ("act", "PROTECT"), ("unmonitored", "GO LOOK")])
def test_a_fleet_site_still_on_the_old_names_reads_right(old, new):
    import datetime as dt

    from frostwatch.display import Display
    from frostwatch.fleet import page
    from frostwatch.fleet import site as fs
    from frostwatch.fleet.view import FleetModel

    now = dt.datetime(2027, 4, 15, 9, 0, tzinfo=dt.UTC)
    model = FleetModel()
    model.on_message(*fs.heartbeat_message("frostwatch", "old-ranch", fs.heartbeat_doc(now, 60, None, None)), now, False)
    state = {"block": "east", "level": old, "rank": rank_of(old), "monitored": old != "unmonitored",
             "as_of": now.isoformat()}
    for topic, payload in fs.state_messages("frostwatch", "old-ranch", [state]):
        model.on_message(topic, payload, now, True)
    html = page.render_page(model.snapshot(now), Display(), 30, now)
    assert f'<span class="lvl">{new}</span>' in html and f">{old}<" not in html
