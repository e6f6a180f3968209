"""Which tower measures a block's inversion: its own, else the nearest, else the site-wide one,
with the distance said (issue: a 4 C inversion on a tower with no block was ignored)."""

import datetime as dt

import numpy as np
import pytest

from frostwatch import forecast
from frostwatch.config import config_from_dict
from frostwatch.models import StationState
from frostwatch.night import night_of_date
from frostwatch.towers import MAX_TOWER_DISTANCE_M, tower_for_block

SITE = {"name": "T", "latitude": 46.4, "longitude": -120.3, "timezone": "America/Los_Angeles"}


def cfg_with(stations, blocks=None):
    blocks = blocks or [{"id": "ridge", "crop": "apple", "stage": "full bloom", "protection": "wind_machine"},
                        {"id": "flat", "crop": "apple", "stage": "full bloom", "protection": "wind_machine"}]
    return config_from_dict({"site": SITE, "blocks": blocks, "stations": stations})


def healthy(ids):
    return {i: StationState(i, 10.0, "tower", {"air_temperature": 3.0}, {}, True, ()) for i in ids}


BASE = [{"id": "ridge-low", "block": "ridge", "height_m": 1.5, "x_m": 0, "y_m": 0},
        {"id": "flat-low", "block": "flat", "height_m": 1.5, "x_m": 600, "y_m": 0}]


def test_own_tower_first():
    cfg = cfg_with(BASE + [{"id": "ridge-tower", "block": "ridge", "height_m": 10},
                           {"id": "mast", "height_m": 10, "x_m": 10, "y_m": 0}])
    c = tower_for_block(cfg, cfg.block("ridge"), healthy(["ridge-tower", "mast"]))
    assert c.station == "ridge-tower" and c.own and c.describe() == "the block's own tower ridge-tower"


def test_nearest_tower_by_position_with_distance():
    cfg = cfg_with(BASE + [{"id": "flat-tower", "block": "flat", "height_m": 10, "x_m": 600, "y_m": 0},
                           {"id": "mast", "height_m": 10, "x_m": 300, "y_m": 400}])
    c = tower_for_block(cfg, cfg.block("ridge"), healthy(["flat-tower", "mast"]))
    assert c.station == "mast" and c.distance_m == pytest.approx(500.0) and c.site_wide  # 3-4-5 triangle
    assert c.describe() == "site-wide tower mast, 500 m away"
    # the site tower silent: the other block's tower, 600 m away
    c = tower_for_block(cfg, cfg.block("ridge"), healthy(["flat-tower"]))
    assert c.station == "flat-tower" and c.distance_m == pytest.approx(600.0) and not c.site_wide


def test_site_wide_tower_without_positions_and_too_far():
    cfg = cfg_with([{"id": "ridge-low", "block": "ridge", "height_m": 1.5}, {"id": "flat-low", "block": "flat", "height_m": 1.5},
                    {"id": "mast", "height_m": 10}])
    c = tower_for_block(cfg, cfg.block("ridge"), healthy(["mast"]))
    assert c.station == "mast" and c.site_wide and c.distance_m is None
    far = cfg_with(BASE + [{"id": "mast", "height_m": 10, "x_m": MAX_TOWER_DISTANCE_M + 1, "y_m": 0}])
    assert tower_for_block(far, far.block("ridge"), healthy(["mast"])) is None
    assert tower_for_block(cfg, cfg.block("ridge"), {}) is None  # no healthy tower at all


def test_projection_of_a_block_without_a_tower_uses_the_site_tower():
    # a clear night: the crop sensor cools from 6 C, the site-wide tower stays 4 C warmer
    cfg = cfg_with([{"id": "ridge-low", "block": "ridge", "height_m": 1.5, "x_m": 0, "y_m": 0, "interval_s": 300},
                    {"id": "flat-low", "block": "flat", "height_m": 1.5, "interval_s": 300},
                    {"id": "mast", "height_m": 10, "x_m": 0, "y_m": 250, "interval_s": 300}])
    night = night_of_date(46.4, -120.3, cfg.site.tz, dt.date(2027, 4, 20))
    t = np.arange(night.sunset_utc.timestamp() - 3 * 3600, night.sunset_utc.timestamp() + 6 * 3600, 300.0)
    crop = 8.0 - 1.2 * np.sqrt(np.maximum(0, (t - t[0]) / 3600.0))
    series = {("ridge-low", "air_temperature"): (t, crop), ("flat-low", "air_temperature"): (t, crop),
              ("mast", "air_temperature"): (t, crop + 4.0)}
    now = dt.datetime.fromtimestamp(t[-1], dt.UTC)
    p = forecast.project_block(now, cfg.block("ridge"), cfg, series, night)
    assert p.inversion_c == pytest.approx(4.0, abs=0.01)
    assert (p.tower_station, p.tower_own, p.tower_site_wide, p.tower_distance_m) == ("mast", False, True, 250.0)
