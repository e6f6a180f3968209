"""A site where the Sun does not set gets a clear night, not a crash (physics/sun.py).

The demo farm moved to 82.5 N: in mid-April the Sun stays up all night there (polar day; pvlib's
SPA check of the same rule is in tests/physics/test_sun.py). The night is then a window of zero
length at the Sun's lowest, and the replay runs through it. Before astral, sun.py raised
ValueError for any polar day or night and every command that needed the night died with it.
"""

from __future__ import annotations

import json
import subprocess
import sys
from datetime import date

from frostwatch.night import night_of_date
from frostwatch.physics.sun import POLAR_DAY, sun_day_utc

POLAR_LATITUDE_DEG = 82.5


def test_night_of_date_in_polar_day_is_a_zero_length_night():
    from zoneinfo import ZoneInfo

    tz = ZoneInfo("America/Los_Angeles")
    assert sun_day_utc(POLAR_LATITUDE_DEG, -120.3, date(2027, 4, 14), tz).polar == POLAR_DAY
    night = night_of_date(POLAR_LATITUDE_DEG, -120.3, tz, date(2027, 4, 14))
    assert night.sunset_utc == night.sunrise_utc
    assert night.length_h == 0.0


def test_replay_of_a_polar_day_site_runs_and_reports_the_night(demo_config, demo_logs):
    text = demo_config.read_text(encoding="utf-8")
    assert "\nlatitude = 46.40 " in text
    demo_config.write_text(text.replace("\nlatitude = 46.40 ", f"\nlatitude = {POLAR_LATITUDE_DEG} "),
                           encoding="utf-8")
    p = subprocess.run(
        [sys.executable, "-m", "frostwatch", "replay", str(demo_logs[0]), "--config", str(demo_config),
         "--json", "--no-report"],
        capture_output=True, text=True, timeout=300,
    )
    assert p.returncode == 0, p.stderr
    doc = json.loads(p.stdout)
    assert {n["night"] for n in doc["nights"]} == {"2027-04-14"}
