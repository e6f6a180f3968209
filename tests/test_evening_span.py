"""The evening of an instant kept with its span (issue 19, item 1): `night.evening_span_s` and
`pipeline.Evaluator.night_at` give what `night.evening_date` gives for every instant, on days with
and without a clock change, in zones with whole-hour, half-hour and quarter-hour offsets."""

from __future__ import annotations

import datetime as dt
from zoneinfo import ZoneInfo

from hypothesis import given, settings
from hypothesis import strategies as st

from frostwatch.night import evening_date, evening_span_s

ZONES = ["Etc/GMT+5", "America/New_York", "Europe/London", "Australia/Lord_Howe", "Asia/Kathmandu",
         "Pacific/Apia", "America/St_Johns", "UTC"]


@settings(max_examples=300, deadline=None)
@given(st.sampled_from(ZONES), st.dates(min_value=dt.date(1900, 1, 1), max_value=dt.date(2090, 12, 31)),
       st.integers(min_value=-3 * 3600 * 1_000_000, max_value=27 * 3600 * 1_000_000).map(lambda us: us / 1_000_000))
def test_every_instant_of_a_span_has_its_evening(zone, evening, offset_s):
    """Instants from 3 h before the span's start to 3 h after its end (to the microsecond): inside
    it their evening is the span's, outside it another; no span on a day with a clock change."""
    tz = ZoneInfo(zone)
    span = evening_span_s(evening, tz)
    noon = dt.datetime.combine(evening, dt.time(12), tz).astimezone(dt.UTC)
    t = noon + dt.timedelta(seconds=offset_s)
    if span is None:
        return
    lo, hi = span
    inside = lo <= t.timestamp() < hi
    assert inside == (evening_date(t, tz) == evening)


def test_a_day_with_a_clock_change_has_no_span_and_an_ordinary_day_has_one():
    ny = ZoneInfo("America/New_York")
    assert evening_span_s(dt.date(2024, 3, 9), ny) is None  # 02:00 on the 10th springs forward
    assert evening_span_s(dt.date(2024, 11, 2), ny) is None  # and falls back on 3 November
    lo, hi = evening_span_s(dt.date(2024, 4, 9), ny)
    assert hi - lo == 86400.0
    assert dt.datetime.fromtimestamp(lo, ny) == dt.datetime(2024, 4, 9, 12, tzinfo=ny)


def test_the_evaluator_tells_the_night_of_each_two_minute_instant_as_evening_date_does(tmp_path):
    """A year of instants every 2 min (and a few seconds off them), in turn and out of order,
    across both clock changes: the night `night_at` gives is the night of `evening_date`."""
    from frostwatch.config import load_config
    from frostwatch.pipeline import Evaluator

    for zone in ("America/New_York", "Etc/GMT+5", "Australia/Lord_Howe"):
        toml = tmp_path / f"{zone.replace('/', '_')}.toml"
        toml.write_text(f'[site]\nname = "span"\nlatitude = 36.1\nlongitude = -79.95\nelevation_m = 273.0\n'
                        f'timezone = "{zone}"\n\n[[blocks]]\nid = "b"\ncrop = "apple"\nstage = "full bloom"\n'
                        'protection = "none"\n\n[[stations]]\nid = "s"\nblock = "b"\nheight_m = 2.0\n\n'
                        f'[storage]\npath = "{tmp_path / "x.db"}"\n')
        cfg = load_config(str(toml))
        ev = Evaluator(cfg)
        tz = cfg.site.tz
        start = dt.datetime(2024, 1, 1, tzinfo=dt.UTC)
        instants = [start + dt.timedelta(minutes=2 * k) for k in range(0, 366 * 720, 7)]
        instants += [t + dt.timedelta(seconds=59, microseconds=999_999) for t in instants[::50]]
        instants += instants[::-97]
        for t in instants:
            assert ev.night_at(t).date == evening_date(t, tz), (zone, t)
