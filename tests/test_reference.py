"""Reference air for the sprinkler stop rule: the wet bulb of unsprinkled air, checked against
psychrolib (ASHRAE 2017), and which station supplies it (DESIGN.md 1.4, second round)."""

import math

import numpy as np
import psychrolib
import pytest

from frostwatch.config import config_from_dict
from frostwatch.physics.humidity import vapour_pressure_hpa_from_dew_point
from frostwatch.pipeline import protection_running
from frostwatch.reference import driest_dew_point_c, reference_air, reference_station_for

psychrolib.SetUnitSystem(psychrolib.SI)
P = 1013.25
NOW = 1_800_000_000.0


def _wet_bulb_psychrolib(t, td):
    w = psychrolib.GetHumRatioFromVapPres(float(vapour_pressure_hpa_from_dew_point(td)) * 100.0, P * 100.0)
    return psychrolib.GetTWetBulbFromHumRatio(t, w, P * 100.0)


def _series(air_from, air_to, td=-6.0, quantity="dew_point_temperature", end=NOW):
    t = end + np.arange(-1800.0, 1.0, 120.0)
    air = np.linspace(air_from, air_to, len(t))
    hum = np.full(len(t), td)
    if quantity == "relative_humidity":
        hum = 100.0 * vapour_pressure_hpa_from_dew_point(td) / vapour_pressure_hpa_from_dew_point(air)
    return {("met", "air_temperature"): (t, air), ("met", quantity): (t[::5], hum[::5])}


def test_reference_wet_bulb_and_trend_vs_psychrolib():
    # air -3 -> -1 C over 30 min at a dew point of -6 C: the wet bulb now is psychrolib's for
    # (-1, -6); its trend is the rise of psychrolib's wet bulb over the half hour, per hour
    ref = reference_air(_series(-3.0, -1.0), "met", NOW, P)
    assert ref.wet_bulb_c == pytest.approx(_wet_bulb_psychrolib(-1.0, -6.0), abs=0.05)
    rise = (_wet_bulb_psychrolib(-1.0, -6.0) - _wet_bulb_psychrolib(-3.0, -6.0)) * 2.0
    assert ref.wet_bulb_trend_c_per_h == pytest.approx(rise, abs=0.1)
    from_rh = reference_air(_series(-3.0, -1.0, quantity="relative_humidity"), "met", NOW, P)
    assert from_rh.wet_bulb_c == pytest.approx(ref.wet_bulb_c, abs=0.05)


def test_reference_needs_fresh_air_and_humidity():
    assert reference_air(_series(-3.0, -1.0, end=NOW - 3600.0), "met", NOW, P) is None  # an hour old
    only_air = {k: v for k, v in _series(-3.0, -1.0).items() if k[1] == "air_temperature"}
    assert reference_air(only_air, "met", NOW, P) is None
    assert reference_air({}, "met", NOW, P) is None


def test_driest_dew_point_over_the_night():
    s = _series(-3.0, -1.0, td=-6.0)
    s[("b-low", "dew_point_temperature")] = (np.array([NOW - 7200, NOW - 600]), np.array([-4.0, -1.5]))
    assert driest_dew_point_c(s, ["b-low", "met"], NOW - 8000, NOW) == pytest.approx(-6.0)
    assert driest_dew_point_c(s, ["b-low"], NOW - 8000, NOW) == pytest.approx(-4.0)
    assert driest_dew_point_c(s, ["nobody"], NOW - 8000, NOW) is None
    rh = _series(-3.0, -1.0, td=-7.0, quantity="relative_humidity")
    assert driest_dew_point_c(rh, ["met"], NOW - 8000, NOW) == pytest.approx(-7.0, abs=0.05)
    assert not math.isnan(driest_dew_point_c(rh, ["met"], NOW - 8000, NOW))


def test_which_station_is_the_reference():
    base = {"site": {"name": "T", "latitude": 46.0, "longitude": -120.0, "timezone": "America/Los_Angeles"},
            "blocks": [{"id": "a", "crop": "apple", "stage": "full bloom", "protection": "overtree_sprinkler",
                        "application_rate_mm_h": 3.5},
                       {"id": "b", "crop": "pear", "stage": "full bloom"}],
            "stations": [{"id": "a-low", "block": "a", "height_m": 1.5}, {"id": "b-low", "block": "b", "height_m": 1.5}]}
    cfg = config_from_dict(base)
    assert reference_station_for(cfg, cfg.block("a")) is None
    base["stations"].append({"id": "met", "height_m": 2.0, "role": "weather"})
    cfg = config_from_dict(base)
    assert reference_station_for(cfg, cfg.block("a")).id == "met"
    base["blocks"][0]["reference_station"] = "b-low"
    cfg = config_from_dict(base)
    assert reference_station_for(cfg, cfg.block("a")).id == "b-low"


def test_a_running_flag_from_any_station_of_the_block_counts():
    # DESIGN.md 1.4 (second round): sprinkler_running or wind_machine_running from any station
    t = np.array([NOW - 600.0, NOW - 60.0])
    s = {("b-tower", "wind_machine_running"): (t, np.array([0.0, 1.0])),
         ("b-low-2", "sprinkler_running"): (t - 300.0, np.array([1.0, 0.0]))}
    assert protection_running(s, ["b-low", "b-low-2", "b-tower"], NOW) is True  # the latest flag wins
    assert protection_running(s, ["b-low", "b-low-2"], NOW) is False
    assert protection_running(s, ["b-low"], NOW) is None
