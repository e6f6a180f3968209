"""The night and season reports name a thermometer that reads warm against the farm's others in
windy hours (grower-needs B5). The demo frost night's store, with five windy afternoons before it
added here (every air sensor at one temperature, hill-low 1.6 K warm): the truth is set by the
test, not taken from frostwatch."""

from __future__ import annotations

import csv
import datetime as dt
import html
import json
import re
from zoneinfo import ZoneInfo

import pytest

from frostwatch.cli import main
from frostwatch.display import Display
from frostwatch.forecast import offsets as off
from frostwatch.models import Reading
from frostwatch.reports.thermometers import flagged_sentence, night_section
from frostwatch.store import Store

EVENING = "2027-04-14"
TZ = ZoneInfo("America/Los_Angeles")
AIR = ("east-low", "east-tower", "river-low", "river-low-b", "hill-low")  # the demo farm's air thermometers
WARM_K = 1.6


def _db(cfg_path):
    return cfg_path.parent / "frostwatch.db"


def _plain(page: str) -> str:
    return html.unescape(re.sub(r"\s+", " ", re.sub(r"<[^>]+>", " ", page)))


def test_the_demo_night_alone_names_no_thermometer_and_says_why(frost_night_store, tmp_path):
    assert main(["report", "--config", str(frost_night_store), "--night", EVENING, "--out", str(tmp_path)]) == 0
    page = (tmp_path / f"night-{EVENING}.html").read_text(encoding="utf-8")
    assert "Thermometers to check" not in page
    assert 'id="thermometers"' in page
    text = _plain(page)
    assert "Thermometers not compared with each other over the last 14 days" in text or \
        "none reads 1.0 °C or more warmer or colder" in text
    rec = json.loads((tmp_path / f"night-{EVENING}.json").read_text())["thermometer_offsets"]
    assert not any(s["flagged"] for s in rec["sensors"])


@pytest.fixture(scope="module")
def warm_hill(frost_night_store):
    """Five windy afternoons (12:00-17:00 local, 5 m/s on east-low) before the night, each air
    sensor reading 12.0 degC every 5 min, hill-low 1.6 K more."""
    readings = []
    for day in range(9, 14):
        for k in range(5 * 12):
            t = dt.datetime(2027, 4, day, 12, tzinfo=TZ).astimezone(dt.UTC) + dt.timedelta(minutes=5 * k)
            readings.append(Reading(t, "east-low", "wind_speed", 5.0))
            readings += [Reading(t, s, "air_temperature", 12.0 + (WARM_K if s == "hill-low" else 0.0)) for s in AIR]
    store = Store.open(_db(frost_night_store))
    store.add_readings(readings, "test")
    store.close()
    return frost_night_store


def test_the_night_report_names_the_warm_thermometer(warm_hill, tmp_path):
    assert main(["report", "--config", str(warm_hill), "--night", EVENING, "--out", str(tmp_path)]) == 0
    text = _plain((tmp_path / f"night-{EVENING}.html").read_text(encoding="utf-8"))
    assert "Thermometers to check" in text
    m = re.search(r"hill-low read ([\d.]+) °C warmer than the farm's other thermometers in (\d+) windy hours "
                  r"on (\d+) days: check its radiation shield and its calibration \(an ice bath\); a warm sensor "
                  r"makes frostwatch call frost late for its block", text)
    assert m, text[text.find("Thermometers to check"):][:600]
    assert abs(float(m.group(1)) - WARM_K) <= 0.2 and int(m.group(2)) >= 25 and int(m.group(3)) == 5
    for other in ("east-low read", "river-low read", "east-tower read"):
        assert other not in text
    rec = json.loads((tmp_path / f"night-{EVENING}.json").read_text())["thermometer_offsets"]
    hill = next(s for s in rec["sensors"] if s["station"] == "hill-low")
    assert hill["flagged"] and abs(hill["offset_k"] - WARM_K) <= 0.2
    assert [s["station"] for s in rec["sensors"] if s["flagged"]] == ["hill-low"]


def test_the_season_report_tables_every_thermometer(warm_hill, tmp_path):
    assert main(["report", "--config", str(warm_hill), "--season", "2027", "--out", str(tmp_path)]) == 0
    page = (tmp_path / "season-2027.html").read_text(encoding="utf-8")
    assert 'id="thermometer-offsets"' in page.replace("'", '"')
    rows = {r["station"]: r for r in csv.DictReader((tmp_path / "season-2027-thermometers.csv").open())}
    assert set(rows) == set(AIR)
    assert rows["hill-low"]["flagged"] == "True" and abs(float(rows["hill-low"]["offset_k"]) - WARM_K) <= 0.2
    assert all(rows[s]["flagged"] == "False" for s in AIR if s != "hill-low")
    assert "hill-low read 1.6 °C warmer" in _plain(page)


def test_the_sentence_is_in_the_growers_units():
    s = off.SensorOffset("hill-low", "crop", 1.6, 9, 3)
    assert flagged_sentence(s, Display("degF", TZ)) == (
        "hill-low read 2.9 °F warmer than the farm's other thermometers in 9 windy hours on 3 days: check its "
        "radiation shield and its calibration (an ice bath); a warm sensor makes frostwatch call frost late for "
        "its block.")
    cold = off.SensorOffset("river-low", "crop", -1.2, 7, 2)
    assert flagged_sentence(cold, Display("degC", TZ)).startswith(
        "river-low read 1.2 °C colder than the farm's other thermometers in 7 windy hours on 2 days")


def test_a_farm_without_wind_reads_not_compared_in_mph_units():
    now = dt.datetime(2027, 4, 15, tzinfo=dt.UTC)
    check = off.OffsetCheck(now, now, 0, 0, (), 5, off.NO_WIND)
    page = night_section(check, Display("degF", TZ))
    assert "Thermometers to check" not in page
    assert "not compared with each other over the last 14 days: no wind was measured" in page
    calm = off.OffsetCheck(now, now, 40, 0, (), 5, off.NO_WINDY_HOUR)
    assert "no hour had a wind of 7 mph or more" in night_section(calm, Display("degF", TZ))


def test_a_warm_weather_station_is_told_by_what_it_sets():
    s = off.SensorOffset("shed-air", "weather", 1.4, 8, 2)
    assert flagged_sentence(s, Display("degC", TZ)).endswith(
        "check its radiation shield and its calibration (an ice bath); a weather station that reads warm makes "
        "frostwatch call the sprinklers' stop too early.")
