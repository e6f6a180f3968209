"""The night report, the status page and the fleet page on a phone (412 px) and on a desktop
(1280 px), in headless Chromium: no element runs off the viewport sideways, the document does not
scroll sideways, and no table needs its box to scroll (a DOM probe measures scrollWidth against
clientWidth and every element's right edge). Screenshots are kept in test-artifacts/screens/
(gitignored). Also: the report's alert rows show the delivery that was recorded (replay records
its console delivery), a block without a tower and an anemometer gets no empty lower plot panel
and says why, and the record hash wraps."""

from __future__ import annotations

import datetime as dt
import json
import re

import pytest
from reports_helpers import overflow_check

from frostwatch.cli import main
from frostwatch.config import load_config
from frostwatch.store import Store

pytestmark = pytest.mark.slow
WIDTHS = (412, 1280)
NOW = dt.datetime.fromisoformat("2027-04-15T04:30:00-07:00").astimezone(dt.UTC)  # mid-frost, demo night


@pytest.fixture(scope="module")
def reports(season_store, tmp_path_factory):
    out = tmp_path_factory.mktemp("phone-reports")
    for night in ("2027-04-14", "2027-04-15"):
        assert main(["report", "--config", str(season_store), "--night", night, "--out", str(out)]) == 0
    return out


@pytest.mark.parametrize("night", ["2027-04-14", "2027-04-15"])
@pytest.mark.parametrize("width", WIDTHS)
def test_the_night_report_fits_the_screen(reports, night, width):
    page = (reports / f"night-{night}.html").read_text(encoding="utf-8")
    got = overflow_check(page, reports, f"report-{night}", width)
    assert got["vw"] == width and got["tables"] >= 5
    assert got["bad"] == [], got


def test_report_alert_rows_show_the_recorded_delivery_and_the_hash_wraps(reports):
    page = (reports / "night-2027-04-14.html").read_text(encoding="utf-8")
    table = page.split('id="alerts"', 1)[1].split("</table>", 1)[0]
    assert "none recorded" not in table
    assert re.search(r'data-label="sent">console: sent \d\d:\d\d<', table), table[:2000]
    assert 'data-label="level"' in table and 'data-label="acknowledged"' in table
    assert "overflow-wrap:anywhere" in page and re.search(r"<code>[0-9a-f]{64}</code>", page)


def test_a_block_without_tower_or_anemometer_has_no_empty_panel_and_says_why(reports):
    from PIL import Image

    page = (reports / "night-2027-04-14.html").read_text(encoding="utf-8")
    hill = page.split('id="block-hill"', 1)[1].split("</section>", 1)[0]
    assert "no tower sensor and no wind sensor: the plot has no lower panel" in hill
    assert "Lower panel" not in hill
    east = page.split('id="block-east"', 1)[1].split("</section>", 1)[0]
    assert "Lower panel" in east and "no lower panel" not in east
    h_hill = Image.open(reports / "night-2027-04-14-hill.png").size[1]
    h_east = Image.open(reports / "night-2027-04-14-east.png").size[1]
    assert h_hill < h_east * 0.85  # the lower panel is left out, not drawn empty
    assert Image.open(reports / "night-2027-04-14-east.png").size[0] <= 700  # drawn for a narrow screen


def _status_page(cfg_path, now, alive=True) -> str:
    from frostwatch.status.render import render_page
    from frostwatch.status.snapshot import snapshot

    cfg = load_config(cfg_path)
    with Store.open(cfg.storage.path) as store:
        beat = {"time": (now - dt.timedelta(seconds=40)).isoformat(), "stored_every_s": 300} if alive else None
        store.set_meta("daemon.heartbeat", json.dumps(beat))
        return render_page(snapshot(cfg, store, now), 60)


@pytest.mark.parametrize("alive", [True, False])
@pytest.mark.parametrize("width", WIDTHS)
def test_the_status_page_fits_the_screen(frost_night_store, tmp_path, width, alive):
    page = _status_page(frost_night_store, NOW, alive)
    assert ("NOT MONITORED" in page) is not alive
    got = overflow_check(page, tmp_path, f"status-{'live' if alive else 'blind'}", width)
    assert got["vw"] == width and got["bad"] == [], got


def _fleet_page(now) -> str:
    from frostwatch.display import Display
    from frostwatch.fleet import page
    from frostwatch.fleet import site as fs
    from frostwatch.fleet.view import FleetModel

    model = FleetModel()
    for k, name in enumerate(("cedar-bench-orchard-with-a-long-name", "alder-flat", "quiet-ridge")):
        t = now - dt.timedelta(minutes=30 if k == 2 else 0)  # the last one has gone quiet
        model.on_message(*fs.info_message("frostwatch", fs.info_doc(name, name.replace("-", " ").title(), 3,
                                                                      ["sensor east-low silent"] if k else [], t)),
                         t, True)
        model.on_message(*fs.heartbeat_message("frostwatch", name, fs.heartbeat_doc(t, 60, None, None)), t, False)
        states = [{"block": b, "level": lvl, "rank": r, "monitored": lvl != "go-look", "as_of": t.isoformat(),
                   "predicted_min_c": -3.2, "band_c": 1.5, "predicted_min_at": (t + dt.timedelta(hours=2)).isoformat(),
                   "t10_crossing_at": (t + dt.timedelta(hours=1)).isoformat(), "acknowledged": lvl != "rest",
                   "action": "start the wind machines now: the air temperature may reach -0.2 °C by 05:10",
                   "reason": "no reading from its crop-height sensor (east-low) since 03:10"}
                  for b, lvl, r in (("east", "protect", 4), ("river-lower-terrace", "go-look", 4), ("hill", "rest", 0))]
        for topic, payload in fs.state_messages("frostwatch", name, states):
            model.on_message(topic, payload, t, True)
    return page.render_page(model.snapshot(now), Display("degC", "America/Los_Angeles"), 30, now)


@pytest.mark.parametrize("width", WIDTHS)
def test_the_fleet_page_fits_the_screen(tmp_path, width):
    now = dt.datetime(2027, 4, 15, 11, 30, tzinfo=dt.UTC)
    page = _fleet_page(now)
    assert "PROTECT" in page and "GO LOOK" in page
    got = overflow_check(page, tmp_path, "fleet", width)
    assert got["vw"] == width and got["bad"] == [], got
