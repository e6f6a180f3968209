"""One plan, one message: a level's headline and its action come from the same step and never
disagree; a method not advised tonight gets one line saying why and no resource estimate; a
standby says "get ready" and never "start"; only act and critical say "start".

Checked over every level against many plans (unit), and over every alert of the demo through real
processes (`frostwatch replay --json` of the sample logs, and `frostwatch demo`).
"""

from __future__ import annotations

import datetime as dt
import itertools
import re
from pathlib import Path

import pytest

from frostwatch.advice import plan_advice
from frostwatch.advice.message import compose
from frostwatch.advice.plan import Step
from frostwatch.advice.render import METHOD_NAME, START, Notice
from frostwatch.alerts.levels import LEVELS, step_for_level
from frostwatch.config import Block
from frostwatch.display import Display
from frostwatch.models import Projection

REPO = Path(__file__).resolve().parents[1]
SAMPLE = REPO / "sample_sensor_logs"
NIGHTS = ["2027-04-14-radiation-frost.csv", "2027-04-15-windy-advective.csv", "2027-04-16-cloudy-safe.csv"]
RESOURCE_WORDS = ("running about", "fuel about", "water about", "energy about")
START_WORD = re.compile(r"\bstart\b", re.IGNORECASE)
UTC = dt.UTC
NOW = dt.datetime(2027, 4, 15, 8, 0, tzinfo=UTC)
SUNRISE = dt.datetime(2027, 4, 15, 13, 10, tzinfo=UTC)


def level_of_headline(head: str) -> str:
    """The level a printed headline announces ("east: READY: ..." -> "ready")."""
    from frostwatch.advice.render import LEVEL_WORD

    words = sorted(LEVEL_WORD.items(), key=lambda kv: -len(kv[1]))
    found = [(head.find(f": {w}"), lvl) for lvl, w in words if f": {w}" in head]
    assert found, head
    return min(found)[1]


def check_message(level: str, text: str) -> list[str]:
    """What is wrong with one alert's text (empty when headline and action agree)."""
    problems = []
    lines = text.splitlines()
    head = lines[0]
    advice = next((ln for ln in lines if ln.startswith("Advice: ")), "")
    if "n/a" in text:
        problems.append("prints n/a")
    if level == "ready" and START_WORD.search(text):
        problems.append("a ready says start")
    if level == "ready" and "READY" not in head:
        problems.append("ready headline without READY")
    if level == "protect" and "PROTECT" not in head:
        problems.append("protect headline without PROTECT")
    if level == "all-hands" and "ALL HANDS" not in head:
        problems.append("all-hands headline without ALL HANDS")
    if level in ("protect", "all-hands") and not any(w in advice for w in ("start ", "light ", "protect the block",
                                                                         "keep the", "keep protection", "are running but")):
        problems.append("protect/all-hands advice that does not say to protect")
    if level in ("protect", "all-hands") and "get ready" in advice:
        problems.append("protect/all-hands advice that says get ready")
    if level == "go-look" and ("NOT MONITORED" not in head or "GO LOOK" not in head):
        problems.append("go-look without GO LOOK and NOT MONITORED")
    for method, name in METHOD_NAME.items():
        if f"{name.capitalize()}: not advised tonight" in text:
            if method in START and START[method] in text:
                problems.append(f"{name} both advised and not advised")
            if any(w in text for w in RESOURCE_WORDS):
                problems.append(f"a resource estimate for {name}, not advised")
            if text.count("not advised tonight: ") != 1:
                problems.append("the reason a method is not advised is not said exactly once")
    return problems


def _block(protection: str) -> Block:
    kw = dict(id="b1", crop="apple", stage="full bloom", kill_10pct_c=-2.2, kill_90pct_c=-3.9,
              critical_source="test", protection=protection, margin_c=2.0, mobilisation_min=30.0, wind_machines=2,
              fuel_l_per_h=40.0)
    if "sprinkler" in protection:
        kw.update(margin_c=1.0, application_rate_mm_h=3.5, area_ha=4.0, water_supply_l_s=45.0)
    return Block(**kw)


def _projection(**kw) -> Projection:
    base = dict(time_utc=NOW, block="b1", station="b1-low", air_temp_c=1.0, dew_point_c=-5.0, wet_bulb_c=-1.6,
                predicted_min_c=-3.5, predicted_min_at_utc=SUNRISE, band_c=0.8,
                crossings_utc={"t10_margin": NOW + dt.timedelta(hours=2), "wet_bulb_t10_margin": NOW + dt.timedelta(hours=2)},
                inversion_c=4.0, projected_inversion_c=4.0, inversion_class="strong", wind_speed_m_s=0.6,
                regime="radiation", method="nowcast", sunset_utc=NOW - dt.timedelta(hours=6), sunrise_utc=SUNRISE)
    base.update(kw)
    return Projection(**base)


PROJECTIONS = {
    "likely": {}, "possible": {"predicted_min_c": 0.3}, "low": {"predicted_min_c": 4.0, "crossings_utc": {}},
    "now": {"air_temp_c": -2.5}, "windy": {"wind_speed_m_s": 6.0}, "weak-inversion": {"projected_inversion_c": 0.5},
    "no-wind": {"wind_speed_m_s": None}, "no-tower": {"inversion_c": None, "projected_inversion_c": None},
    "ready-by-passed": {"crossings_utc": {"t10_margin": NOW + dt.timedelta(minutes=10),
                                          "wet_bulb_t10_margin": NOW + dt.timedelta(minutes=10)}},
    "no-crossing": {"crossings_utc": {}},
}


@pytest.mark.parametrize("protection", ["wind_machine", "overtree_sprinkler", "undertree_sprinkler", "heaters", "none"])
def test_every_level_with_every_plan_renders_a_headline_and_action_that_agree(protection):
    d = Display("degC", "America/Los_Angeles")
    b = _block(protection)
    checked = 0
    for (name, kw), running, level in itertools.product(PROJECTIONS.items(), (None, True), [*LEVELS, "go-look"]):
        p = _projection(**kw)
        plan = plan_advice(p, b, NOW, protection_running=running)
        shown = step_for_level(level, plan)
        msg = compose(b.id, level, shown, plan, p, d, Notice.LEVEL)
        assert check_message(level, msg.text) == [], (name, running, level, msg.text)
        if level == "ready":
            assert shown in (Step.GET_READY, Step.KEEP_RUNNING, Step.EASING), (name, running)
        if level == "protect" and running:
            assert "start " not in msg.action, (name, msg.action)  # running protection is never told to start
        checked += 1
    assert checked == len(PROJECTIONS) * 2 * (len(LEVELS) + 1)


@pytest.fixture(scope="module")
def demo_replay(replayed) -> dict:
    """The sample nights replayed through a real `frostwatch replay --json` process (the session's
    shared replay, tests/conftest.py)."""
    from importlib import resources

    text = resources.files("frostwatch.sample_logs").joinpath("demo-farm.toml").read_text(encoding="utf-8")
    return replayed(text, [SAMPLE / n for n in NIGHTS], "demo-farm.toml").doc()


def test_no_demo_alert_has_a_headline_and_action_that_disagree(demo_replay):
    alerts = demo_replay["alerts"]
    assert len(alerts) > 10
    bad = {a["key"]: check_message(a["level"], a["message"]) for a in alerts}
    assert {k: v for k, v in bad.items() if v} == {}
    levels = {a["level"] for a in alerts}
    assert {"ready", "protect", "all-hands", "may-stop"} <= levels
    # the advice field is the message's own advice line
    for a in alerts:
        assert f"Advice: {a['advice']}." in a["message"]


def test_demo_prints_only_consistent_alerts(demo_printed):
    out = demo_printed.stdout  # the session's one `frostwatch demo` (tests/conftest.py)
    assert "n/a" not in out
    blocks = re.split(r"\n  (?=\d{4}-\d{2}-\d{2} \d{2}:\d{2} \w+  )", out.split("\nAlerts:\n", 1)[1].split("\nNight summary")[0])
    checked = 0
    for blk in blocks:
        m = re.match(r"\s*\d{4}-\d{2}-\d{2} \d{2}:\d{2} \w+  (.*)", blk, re.S)
        if not m:
            continue
        assert " rank " not in m.group(1)  # the printed alerts speak words, not ranks
        text = "\n".join(line.strip() for line in m.group(1).splitlines())
        level = level_of_headline(text.splitlines()[0])
        assert check_message(level, text) == [], text
        checked += 1
    assert checked > 10
