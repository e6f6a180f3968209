"""The farm's thermometers checked against each other (`frostwatch.forecast.crosscheck`).

A bare MQTT number is taken as °C; a sensor sending °F then stores 38.5 for 3.6 °C, inside the
plausible range. The pure rules first (a warm outlier left out, a real cold-air pocket trusted, a
cold outlier reported but kept, a lone sensor judged only by its own jumps), then the whole
pipeline through a real `frostwatch replay` of the demo farm's radiation-frost night with the
hill block's only crop-height sensor sending bare °F: before, the hill block said "REST: tonight
looks safe: minimum 26.6 °C" on a night its air fell to -2.4 °C.

The thresholds are judgement (see the module's docstring): 15 K from the farm's median is not
weather; a night inversion, a cold-air pocket and a sunlit sensor together stay under it.
"""

from __future__ import annotations

import csv
import datetime as dt
import html
import json
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest

from frostwatch.advice.message import doubt_words
from frostwatch.advice.short import not_monitored_body
from frostwatch.config.model import Station
from frostwatch.decision import MonitorReason
from frostwatch.display import Display
from frostwatch.forecast import crosscheck, sensors
from frostwatch.forecast.crosscheck import NOT_WEATHER_K, jump_doubt, peer_doubts
from frostwatch.gsm7 import septets

NIGHT = Path(__file__).resolve().parent.parent / "sample_sensor_logs" / "2027-04-14-radiation-frost.csv"
T0_S = 1_800_000_000.0


def f_to_c(f: float) -> float:
    return (f - 32.0) / 1.8


# ---- the pure rules ------------------------------------------------------------------------------

def test_a_crop_sensor_sending_bare_fahrenheit_among_celsius_peers_is_left_out_with_the_cause():
    # 38.5 °F is 3.6 °C; the farm's others read 3.4-4.1 °C
    doubts = peer_doubts({"hill-low": 38.5, "east-low": 3.4, "east-tower": 4.1, "river-low": 3.9})
    assert set(doubts) == {"hill-low"}
    x = doubts["hill-low"]
    assert (x.kind, x.left_out, x.peers_low_c, x.peers_high_c, x.peers) == ("warm", True, 3.4, 4.1, 3)
    words = doubt_words(x, Display("degC"))
    assert words.startswith("hill-low reads 38.5 °C while the farm's other thermometers read 3.4 to 4.1 °C: "
                            "is it sending °F (38.5 °F is 3.6 °C)? Set its unit"), words
    us = doubt_words(x, Display("degF"))  # a grower reading °F: the number it sent, and that it was taken as °C
    assert "reads 101.3 °F" in us and "it sent 38.5, which was taken as °C" in us, us


@pytest.mark.parametrize("true_c", [-10.0, -5.0, -2.0, 0.0, 3.6, 10.0])
def test_fahrenheit_read_as_celsius_is_caught_over_the_whole_frost_band(true_c):
    as_f = true_c * 1.8 + 32.0  # what the misconfigured sensor sends, stored as °C
    doubts = peer_doubts({"bad": as_f, "a": true_c - 0.3, "b": true_c + 0.4, "tower": true_c + 3.0})
    assert set(doubts) == {"bad"} and doubts["bad"].left_out
    assert crosscheck.fahrenheit_fits(doubts["bad"])  # the words ask "is it sending °F?"


def test_a_genuine_cold_air_pocket_and_a_strong_inversion_stay_trusted():
    # a frost hollow 8 K below the slope sensors, a tower 8 K above crop height on a strong night:
    # weather, not a fault (13 K between the hollow and the tower, under NOT_WEATHER_K)
    air = {"hollow-low": -4.0, "slope-low": 4.0, "east-low": 3.6, "tower": 9.0}
    assert peer_doubts(air) == {}
    assert peer_doubts({"hollow-low": 4.0 - (NOT_WEATHER_K - 0.1), "a": 4.0, "b": 4.1}) == {}


def test_a_cold_outlier_is_reported_but_still_speaks():
    doubts = peer_doubts({"wet-low": -25.0, "a": 3.4, "b": 4.1, "c": 3.9})
    x = doubts["wet-low"]
    assert (x.kind, x.left_out, x.peers_low_c, x.peers_high_c) == ("cold", False, 3.4, 4.1)
    assert "still used" in doubt_words(x, Display("degC"))
    st = Station("wet-low", "b1", 1.5, "crop")
    state = sensors.station_state(st, _steady("wet-low", -25.0), T0_S, 3.0)
    assert crosscheck.trusted(state, doubts) is state and state.healthy
    # against a single other thermometer either could be wrong: the colder one is not doubted
    assert set(peer_doubts({"wet-low": -25.0, "a": 3.4})) == {"a"}  # the warmer of two is left out


def test_of_two_thermometers_the_warmer_is_left_out():
    doubts = peer_doubts({"hill-low": 38.5, "east-tower": 4.0})
    assert set(doubts) == {"hill-low"} and doubts["hill-low"].peers == 1
    assert "the farm's other thermometer reads 4.0 °C" in doubt_words(doubts["hill-low"], Display("degC"))


def _steady(sid: str, value_c: float, n: int = 24, every_s: float = 300.0, noise: float = 0.05) -> dict:
    t = T0_S - every_s * np.arange(n)[::-1]
    v = value_c + noise * np.sin(np.arange(n))  # never flat: not a stuck sensor
    return {(sid, "air_temperature"): (t, v)}


def test_a_lone_sensor_is_judged_only_by_its_own_jumps():
    t = T0_S + 300.0 * np.arange(24)
    celsius = 3.6 - 0.05 * np.arange(24)
    # it sent °C, then (a firmware update, a reset) °F from the 13th reading on
    switched = np.where(np.arange(24) >= 12, celsius * 1.8 + 32.0, celsius)
    x = jump_doubt("hill-low", t, switched, float(t[-1]))
    assert x is not None and (x.kind, x.left_out) == ("jump", True)
    assert x.jump_from_c == pytest.approx(celsius[11]) and x.jump_at_utc.timestamp() == t[12]
    words = doubt_words(x, Display("degC"))
    assert "jumped from 3.0 °C to" in words and "is it sending °F now" in words, words
    assert jump_doubt("hill-low", t, switched, float(t[11])) is None  # only readings up to now count
    back = switched.copy()
    back[18:] = celsius[18:]  # set right again: trusted at once
    assert jump_doubt("hill-low", t, back, float(t[-1])) is None
    # the documented limit: a lone sensor that sent °F from its first reading shows no jump
    assert jump_doubt("hill-low", t, celsius * 1.8 + 32.0, float(t[-1])) is None
    # a real rise is slower: mixing brings down at most the inversion, a few K
    assert jump_doubt("hill-low", t, celsius + np.where(np.arange(24) >= 12, 8.0, 0.0), float(t[-1])) is None
    # a gap longer than JUMP_MAX_GAP_S is not judged (a sensor back after an hour may be right)
    gap = t + np.where(np.arange(24) >= 12, 3600.0, 0.0)
    assert jump_doubt("hill-low", gap, switched, float(gap[-1])) is None


def test_the_left_out_state_is_not_healthy_and_carries_no_temperature():
    st = Station("hill-low", "hill", 1.5, "crop")
    series = {**_steady("hill-low", 38.5), ("hill-low", "relative_humidity"): _steady("x", 80.0)[("x", "air_temperature")]}
    state = sensors.station_state(st, series, T0_S, 3.0)
    assert state.healthy
    doubts = peer_doubts({"hill-low": 38.5, "a": 3.4, "b": 4.1})
    left = crosscheck.trusted(state, doubts)
    assert not left.healthy and "air_temperature" not in left.latest and "relative_humidity" in left.latest
    assert crosscheck.trusted(state, doubts) is left  # the same object again (the monitoring memo's identity)
    assert sensors.speaking_station([left]) is None


def test_the_short_text_names_the_cause_in_gsm7():
    x = peer_doubts({"hill-low": 38.5, "a": 3.4, "b": 4.1, "c": 3.9})["hill-low"]
    body = not_monitored_body("hill", "go-look", None, ("hill-low",), None, Display("degC"), MonitorReason.IMPLAUSIBLE,
                              (x,))
    assert "hill-low reads 38.5C, farm 3.4-4.1C: sending F?" in body, body
    assert septets(body) <= 160


# ---- the whole pipeline: a real replay -------------------------------------------------------------

def _replay(tmp_path: Path, rows, name: str, config: str | None = None) -> tuple[dict, str]:
    cfg = tmp_path / "demo-farm.toml"
    cfg.write_text(config or (NIGHT.parent / "demo-farm.toml").read_text(encoding="utf-8"))
    log = tmp_path / f"{name}.csv"
    with log.open("w", newline="") as g:
        csv.writer(g).writerows(rows)
    reports = tmp_path / f"reports-{name}"
    p = subprocess.run([sys.executable, "-m", "frostwatch", "replay", str(log), "--config", str(cfg), "--json",
                        "--report-dir", str(reports)], capture_output=True, text=True, timeout=600)
    assert p.returncode == 0, p.stderr[-2000:]
    return json.loads(p.stdout), html.unescape(next(reports.glob("night-*.html")).read_text(encoding="utf-8"))


def _night_rows(change=lambda row: row):
    with NIGHT.open(newline="") as f:
        rows = list(csv.reader(f))
    return [rows[0]] + [change(list(r)) for r in rows[1:]]


def _hill_in_fahrenheit(row):
    if row[1] == "hill-low" and row[2] == "air_temperature":
        row[3], row[4] = f"{float(row[3]) * 1.8 + 32.0:.1f}", ""  # a bare number: taken as °C
    return row


def test_replay_a_crop_sensor_sending_fahrenheit_never_shows_its_block_safe(tmp_path):
    doc, page = _replay(tmp_path, _night_rows(_hill_in_fahrenheit), "fahrenheit")
    hill = [a for a in doc["alerts"] if a["block"] == "hill"]
    assert [a["level"] for a in hill] == ["go-look"], [a["message"].splitlines()[0] for a in hill]
    head = hill[0]["message"].splitlines()[0]
    assert head.startswith("hill: GO LOOK: NOT MONITORED since "), head
    assert "its crop-height sensor is not trusted: hill-low reads" in head and "is it sending °F (" in head, head
    assert "sending F?" in hill[0]["short"]
    assert not [p for p in doc["projections"] if p["block"] == "hill" and p["predicted_min_c"] is not None]
    # the river block's morning stop rule does not take hill-low (its reference station) as its wet bulb
    river_stop = [a for a in doc["alerts"] if a["block"] == "river" and a["level"] == "may-stop"]
    assert river_stop and "hill-low" not in river_stop[0]["short"], river_stop
    assert "the reference station hill-low has no fresh reading frostwatch can trust" in river_stop[0]["message"]
    # the other blocks are judged as before (the cross-check leaves them alone)
    assert {a["block"] for a in doc["alerts"] if a["level"] == "all-hands"} == {"east"}
    decided = page.split('id="decisions"', 1)[1].split("</table>", 1)[0]
    assert "NOT MONITORED: its crop-height sensor is not trusted: hill-low reads" in decided
    assert "is it sending °F" in decided
    # the night's summary: no minimum from the °F readings (before: "minimum 27.7 °C ... 0 min at or below T10")
    (hill_night,) = [n for n in doc["nights"] if n["block"] == "hill"]
    assert hill_night["min_c"] is None and hill_night["left_out"] == ["hill-low"], hill_night
    assert "no trusted crop-height reading this night (hill-low out of line" in page


def test_replay_a_genuine_cold_air_pocket_stays_trusted_and_is_warned_for(tmp_path):
    def colder(row):  # the hill's air 6 K colder all night than the demo farm's: a frost hollow
        if row[1] == "hill-low" and row[2] == "air_temperature":
            row[3] = f"{float(row[3]) - 6.0:.2f}"
        return row

    doc, page = _replay(tmp_path, _night_rows(colder), "hollow")
    hill = [a for a in doc["alerts"] if a["block"] == "hill"]
    assert "go-look" not in [a["level"] for a in hill]
    assert "all-hands" in [a["level"] for a in hill], [a["message"].splitlines()[0] for a in hill]
    assert "not trusted" not in page


ALONE = """
[site]
name = "Lone Pear"
latitude = 46.40
longitude = -120.30
elevation_m = 320
timezone = "America/Los_Angeles"

[[blocks]]
id = "hill"
crop = "pear"
stage = "tight cluster"

[[stations]]
id = "hill-low"
block = "hill"
height_m = 1.5

[storage]
path = "frostwatch.db"
"""


def test_replay_a_lone_sensor_that_switches_to_fahrenheit_is_left_out_from_the_jump(tmp_path):
    switch = dt.datetime(2027, 4, 14, 23, 0, tzinfo=dt.timezone(dt.timedelta(hours=-7)))

    def alone(row):
        if row[1] != "hill-low":
            return None
        if row[2] == "air_temperature" and dt.datetime.fromisoformat(row[0]) >= switch:
            row[3], row[4] = f"{float(row[3]) * 1.8 + 32.0:.1f}", ""
        return row

    rows = [r for r in _night_rows(alone) if r is not None]
    doc, _ = _replay(tmp_path, rows, "alone", ALONE)
    hill = [a for a in doc["alerts"] if a["block"] == "hill"]
    go_look = [a for a in hill if a["level"] == "go-look"]
    assert go_look, [a["message"].splitlines()[0] for a in hill]
    assert dt.datetime.fromisoformat(go_look[0]["time"].replace("Z", "+00:00")) >= switch
    assert "hill-low jumped from" in go_look[0]["message"] and "is it sending °F now" in go_look[0]["message"]
    assert "rest" not in [a["level"] for a in hill if a["time"] > go_look[0]["time"]]


def test_replay_a_lone_sensor_that_always_sent_fahrenheit_cannot_be_told_from_weather(tmp_path):
    # the documented limit (README): no other thermometer and no jump; nothing to compare with
    rows = [r for r in _night_rows(lambda r: _hill_in_fahrenheit(r) if r[1] == "hill-low" else None) if r is not None]
    doc, _ = _replay(tmp_path, rows, "alone-f", ALONE)
    assert "go-look" not in [a["level"] for a in doc["alerts"] if a["block"] == "hill"]
