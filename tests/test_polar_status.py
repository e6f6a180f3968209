"""A farm at 78.2 N: in June the Sun stays up all night, in December it does not rise. The night's
projection, alerts, decisions and report run through both without error, replayed evaluations
run forward in time once each, and the status page and the night report say in plain words
that the Sun does not set or rise instead of showing one time for both sunset and sunrise.

Whether the Sun sets is checked outside this project with pvlib's NREL SPA solar position (Reda &
Andreas 2004): the Sun's centre against the sunrise-sunset altitude, -0.833 deg.
"""

from __future__ import annotations

import datetime as dt
import json
import re
from pathlib import Path
from zoneinfo import ZoneInfo

import pandas as pd
import pvlib
import pytest

from frostwatch.cli import main
from frostwatch.config import load_config
from frostwatch.night import Night, night_of_date, nights_of_dates, sun_times_words
from frostwatch.physics.sun import POLAR_DAY, POLAR_NIGHT
from frostwatch.status.render import render_page
from frostwatch.status.snapshot import snapshot
from frostwatch.store import Store

LATITUDE_DEG = 78.2  # Svalbard's latitude; the demo farm's longitude and time zone kept
LONGITUDE_DEG = -120.3
TZ = ZoneInfo("America/Los_Angeles")
SUNRISE_SUNSET_ELEVATION_DEG = -0.833


def _clock(t: dt.datetime) -> str:
    return t.astimezone(TZ).strftime("%H:%M")


def _spa_elevations_deg(start_utc: dt.datetime, hours: int) -> pd.Series:
    times = pd.date_range(start_utc, periods=hours * 12 + 1, freq="5min")
    return pvlib.solarposition.get_solarposition(times, LATITUDE_DEG, LONGITUDE_DEG, method="nrel_numpy")[
        "elevation"]


@pytest.mark.parametrize(("evening", "sun_stays_up", "words"), [
    (dt.date(2027, 6, 20), True, "sun up all night (no sunset, no sunrise)"),
    (dt.date(2027, 12, 20), False, "no sunrise today (the sun stays below the horizon)"),
], ids=["june", "december"])
def test_a_night_at_78n_says_the_sun_does_not_set_or_rise_as_pvlib_spa_finds(evening, sun_stays_up, words):
    night = night_of_date(LATITUDE_DEG, LONGITUDE_DEG, TZ, evening)
    why = POLAR_DAY if sun_stays_up else POLAR_NIGHT
    assert (night.no_sunset, night.no_sunrise) == (why, why)
    assert sun_times_words(night, _clock) == words
    # pvlib SPA over the evening's local noon to the next local noon: never below (June) or never
    # above (December) the sunrise-sunset altitude
    noon_utc = dt.datetime.combine(evening, dt.time(12), TZ).astimezone(dt.UTC)
    spa = _spa_elevations_deg(noon_utc, 24)
    assert (spa.min() > SUNRISE_SUNSET_ELEVATION_DEG) if sun_stays_up else (spa.max() < SUNRISE_SUNSET_ELEVATION_DEG)


def test_an_ordinary_night_and_the_nights_either_side_of_a_polar_season_name_what_happens():
    sunset = dt.datetime(2027, 4, 15, 3, 0, tzinfo=dt.UTC)
    sunrise = dt.datetime(2027, 4, 15, 13, 30, tzinfo=dt.UTC)
    assert sun_times_words(Night(dt.date(2027, 4, 14), sunset, sunrise), _clock) == "sunset 20:00, sunrise 06:30"
    # 78.2 N on 26 October: the last sunset before the polar night. pvlib SPA has the Sun's centre
    # reach -0.77 deg at noon on the 26th (above the sunrise-sunset altitude: it rises and sets)
    # and -1.11 deg on the 27th (below: no sunrise)
    last = night_of_date(LATITUDE_DEG, LONGITUDE_DEG, TZ, dt.date(2027, 10, 26))
    assert (last.no_sunset, last.no_sunrise) == ("", POLAR_NIGHT)
    words = sun_times_words(last, _clock)
    assert words == f"sunset {_clock(last.sunset_utc)}, no sunrise in the morning (the sun stays below the horizon)"
    for day, rises in ((dt.date(2027, 10, 26), True), (dt.date(2027, 10, 27), False)):
        highest_deg = _spa_elevations_deg(dt.datetime.combine(day, dt.time(0), TZ).astimezone(dt.UTC), 24).max()
        assert bool(highest_deg > SUNRISE_SUNSET_ELEVATION_DEG) == rises, (day, highest_deg)
    # one night of the spring's first sunrise: the Sun did not rise on the evening's date
    first = Night(dt.date(2027, 2, 14), sunset, sunrise, no_sunset=POLAR_NIGHT)
    assert sun_times_words(first, _clock) == "no sunset (the sun did not rise), sunrise 06:30"


def test_a_season_of_nights_at_once_says_where_the_sun_does_not_set_or_rise_as_night_by_night():
    # the one-pass sun times (replay, backtest) carry the same words as one night at a time, through
    # the autumn's last sunsets into the polar night and the spring's into the midnight sun
    evenings = [dt.date(2027, 10, 20) + dt.timedelta(days=k) for k in range(10)]
    evenings += [dt.date(2027, 4, 10) + dt.timedelta(days=k) for k in range(12)]
    many = nights_of_dates(LATITUDE_DEG, LONGITUDE_DEG, TZ, evenings)
    assert many == [night_of_date(LATITUDE_DEG, LONGITUDE_DEG, TZ, d) for d in evenings]
    assert {(n.no_sunset, n.no_sunrise) for n in many} == {("", ""), ("", POLAR_NIGHT), (POLAR_NIGHT, POLAR_NIGHT),
                                                           (POLAR_DAY, POLAR_DAY)}


def _replay_polar_night(demo_config: Path, demo_logs: list[Path], tmp_path: Path, evening: dt.date,
                        capsys, report: bool) -> dict:
    """The demo's radiation-frost night moved to `evening` at 78.2 N, replayed into the store."""
    text = demo_config.read_text(encoding="utf-8")
    assert "\nlatitude = 46.40 " in text
    demo_config.write_text(text.replace("\nlatitude = 46.40 ", f"\nlatitude = {LATITUDE_DEG} "), encoding="utf-8")
    morning = evening + dt.timedelta(days=1)
    log = tmp_path / f"{evening}-polar.csv"
    log.write_text(demo_logs[0].read_text(encoding="utf-8").replace("2027-04-14T", f"{evening}T")
                   .replace("2027-04-15T", f"{morning}T"), encoding="utf-8")
    capsys.readouterr()
    args = ["replay", str(log), "--config", str(demo_config), "--json"] + ([] if report else ["--no-report"])
    assert main(args) == 0
    return json.loads(capsys.readouterr().out)


@pytest.mark.parametrize(("evening", "words", "report"), [
    (dt.date(2027, 6, 20), "sun up all night", False),
    (dt.date(2027, 12, 20), "no sunrise today", True),
], ids=["june", "december"])
def test_a_78n_farm_replays_and_its_status_page_says_the_sun_does_not_set_or_rise(
        demo_config, demo_logs, tmp_path, capsys, evening, words, report):
    doc = _replay_polar_night(demo_config, demo_logs, tmp_path, evening, capsys, report)
    keys = [a["key"] for a in doc["alerts"]]
    assert keys and len(keys) == len(set(keys)), "an alert sent twice"
    times = [p["time"] for p in doc["projections"]]
    assert times == sorted(times), "evaluations ran back in time"
    assert len(times) == len(set(zip(times, (p["block"] for p in doc["projections"]), strict=True)))
    assert all(n["min_c"] is not None for n in doc["nights"])
    cfg = load_config(demo_config)
    now = dt.datetime.combine(evening + dt.timedelta(days=1), dt.time(2, 0), TZ).astimezone(dt.UTC)
    with Store.open(cfg.storage.path) as store:
        beat = {"time": (now - dt.timedelta(seconds=40)).isoformat(), "stored_every_s": 300}
        store.set_meta("daemon.heartbeat", json.dumps(beat))
        page = render_page(snapshot(cfg, store, now), 30)
    sun = re.search(r'<span id="sun">([^<]*)</span>', page).group(1)
    assert sun.startswith(words) and not re.search(r"\d\d:\d\d", sun), sun
    assert "NOT MONITORED" not in page and page.count('data-monitored="true"') == len(cfg.blocks)
    if report:  # the night report says it too
        night_report = next(Path(r) for r in doc["reports"] if Path(r).name == f"night-{evening}.html")
        sun = re.search(r'<p id="sun">([^(]*)\(', night_report.read_text(encoding="utf-8")).group(1)
        assert sun.lower().startswith(words) and not re.search(r"\d\d:\d\d", sun), sun
