"""The naive fall in the nowcast's skill blend, checked on pvlib's Sand Point AK TMY3 year (Wilcox &
Marion 2008), converted by bench/tmy.py and backtested walk-forward as `frostwatch backtest` would.

The naive method a grower would use: the reading now minus the mean fall over the 2 h before the
minimum of earlier nights. frostwatch learns that fall from each past night (`fall_before_min_c`)
and blends it with its other nowcasts by their recent skill. The fall is checked against the
file's own hourly rows, parsed without frostwatch (the csv module, bench/tmy.py `read_raw`), and
the projection made 2 h before the minimum against the same naive method computed from those rows.
"""

from __future__ import annotations

import datetime as dt
import importlib.util
import sys
from pathlib import Path

import numpy as np
import pytest

pytest.importorskip("pvlib")

from frostwatch import backtest as bt  # noqa: E402
from frostwatch.commands.logs import _series_from_readings  # noqa: E402
from frostwatch.config import load_config  # noqa: E402
from frostwatch.ingest.csvlog import read_sensor_log  # noqa: E402

_SPEC = importlib.util.spec_from_file_location("bench_tmy", Path(__file__).resolve().parents[1] / "bench" / "tmy.py")
tmy = importlib.util.module_from_spec(_SPEC)
sys.modules["bench_tmy"] = tmy
_SPEC.loader.exec_module(tmy)

SITE = tmy.SITES["sand_point"]


@pytest.fixture(scope="module")
def sand_point(tmp_path_factory):
    log, cfg_path, _ = tmy.write_log_and_config(SITE, tmp_path_factory.mktemp("sand_point"))
    cfg = load_config(str(cfg_path))
    readings, rejections = read_sensor_log(log, {s.id for s in cfg.stations})
    assert not rejections
    return cfg, _series_from_readings(readings), tmy.read_raw(SITE)


def _backtest(cfg, series, records=None):
    def keep(night, rec, obs):
        if records is not None:
            records.append((night, rec))
        return {}
    return bt.backtest(cfg, series, nowcast_lead_h=2.0, probes=keep)


def test_each_nights_fall_before_its_minimum_is_the_hourly_rows_own(sand_point):
    cfg, series, raw = sand_point
    records = []
    _backtest(cfg, series, records)
    t, temp = raw.time_s, raw.fields["temp_c"]
    checked = 0
    for night, rec in records:
        start_s, end_s = night.dusk_utc.timestamp(), night.sunrise_utc.timestamp() + 3600.0
        sel = (t >= start_s) & (t <= end_s)
        i = int(np.argmin(temp[sel]))
        min_s, min_c = float(t[sel][i]), float(temp[sel][i])
        assert rec.observed_min_c == pytest.approx(min_c, abs=1e-9)
        before = np.nonzero(t == min_s - 7200.0)[0]  # hourly rows: one row exactly 2 h earlier
        if min_s - 7200.0 < start_s:
            assert rec.fall_before_min_c is None
            continue
        assert rec.fall_before_min_c == pytest.approx(float(temp[before[0]]) - min_c, abs=1e-9)
        checked += 1
    assert checked > 200  # measured 306 of 354 nights


def _cold_nowcast_errors(rows, raw):
    """(frostwatch's nowcast 2 h before the minimum, the naive method from the hourly rows) minus
    the observed minimum, on the cold nights (minimum below 10 degC) where both exist. The naive
    method: the row at that time minus the mean (row 2 h before the minimum - minimum) of the
    earlier such nights (walk-forward), as bench/forecast_skill.py computes it."""
    order = np.argsort(raw.time_s, kind="stable")  # the months come from different years
    t, temp = raw.time_s[order], raw.fields["temp_c"][order]
    fw, naive, falls = [], [], []
    for r in rows:
        if r.get("nowcast_min_c") is None or r["observed_min_c"] >= SITE.cold_below_c:
            continue
        at_s = dt.datetime.fromisoformat(r["nowcast_issued_at"].replace("Z", "+00:00")).timestamp()
        now_c = float(temp[int(np.searchsorted(t, at_s, side="right")) - 1])
        if falls:
            fw.append(r["nowcast_min_c"] - r["observed_min_c"])
            naive.append(now_c - np.mean(falls) - r["observed_min_c"])
        falls.append(now_c - r["observed_min_c"])
    return np.array(fw), np.array(naive)


def test_the_naive_fall_in_the_blend_brings_the_projection_2h_before_the_minimum_closer(sand_point, forecast_setting):
    cfg, series, raw = sand_point
    forecast_setting("NOWCAST_LEAD_CORRECTION", False)  # the blend itself, before the approach correction (tested below)
    with_naive, naive = _cold_nowcast_errors(_backtest(cfg, series), raw)
    forecast_setting("USE_NAIVE", False)
    without, _ = _cold_nowcast_errors(_backtest(cfg, series), raw)
    assert len(with_naive) > 150  # measured 201 cold nights
    mae = lambda e: float(np.mean(np.abs(e)))  # noqa: E731
    assert mae(with_naive) <= mae(without) - 0.04  # measured 0.51 against 0.57
    assert abs(with_naive.mean()) < abs(without.mean())  # measured +0.36 against +0.45
    # the naive method itself, knowing the minimum is 2 h away, is still ahead (measured 0.40):
    # recorded, not hidden (bench/results/forecast_variants.json)
    assert mae(naive) < mae(with_naive)


def _band_2h(rows):
    return [(r["night"], r["probe_min2h"]["band_low_c"], r["probe_min2h"]["band_high_c"]) for r in rows if r.get("probe_min2h")]


def _with_probe(cfg, series):
    def at_2h(night, rec, obs):
        at = rec.observed_min_at_utc - dt.timedelta(hours=2)
        return {"min2h": at if at > night.dusk_utc else None}
    return bt.backtest(cfg, series, nowcast_lead_h=2.0, probes=at_2h)


def test_the_approach_correction_brings_the_projection_2h_before_the_minimum_closer_and_keeps_the_band(
        sand_point, forecast_setting):
    """The blend's fall still to come, scaled by the ratio learned at the instants 2 h before past
    nights' minima (walk-forward, on nights forecast at dusk below the mean minimum learned), against
    the same blend without it; the band stays the blend's own."""
    cfg, series, raw = sand_point
    forecast_setting("NOWCAST_APPROACH_BLEND", False)  # the correction alone (the approach blend on top is tested below)
    rows_on = _with_probe(cfg, series)
    on, naive = _cold_nowcast_errors(rows_on, raw)
    forecast_setting("NOWCAST_LEAD_CORRECTION", False)
    rows_off = _with_probe(cfg, series)
    off, _ = _cold_nowcast_errors(rows_off, raw)
    mae = lambda e: float(np.mean(np.abs(e)))  # noqa: E731
    assert len(on) == len(off) > 150
    assert mae(on) <= mae(off) - 0.02  # measured 0.48 against 0.51
    assert abs(on.mean()) <= abs(off.mean()) - 0.05  # measured +0.27 against +0.35
    assert mae(naive) < mae(on)  # the naive method, knowing the minimum is 2 h away, is still ahead (0.40)
    # the dusk forecast is untouched, and so is the nowcast's band (its centre is the blend before the correction)
    assert [r["predicted_min_c"] for r in rows_on] == [r["predicted_min_c"] for r in rows_off]
    assert _band_2h(rows_on) == _band_2h(rows_off)
    assert any("past nights' approach" in r["probe_min2h"]["method"] for r in rows_on if r.get("probe_min2h"))


def test_the_approach_blend_brings_the_projection_2h_before_the_minimum_closer_and_keeps_the_band(
        sand_point, forecast_setting):
    """On the corrected nights, while the last 2 h cooled, the corrected fall mixed with the naive
    fall by their skill at past nights' instants 2 h before the minimum (walk-forward), against the
    corrected blend alone; the dusk forecast and the band do not move."""
    cfg, series, raw = sand_point
    rows_on = _with_probe(cfg, series)
    on, naive = _cold_nowcast_errors(rows_on, raw)
    forecast_setting("NOWCAST_APPROACH_BLEND", False)
    rows_off = _with_probe(cfg, series)
    off, _ = _cold_nowcast_errors(rows_off, raw)
    mae = lambda e: float(np.mean(np.abs(e)))  # noqa: E731
    assert len(on) == len(off) > 150
    assert mae(on) <= mae(off) - 0.015  # measured 0.454 against 0.479
    assert abs(on.mean()) < abs(off.mean())  # measured +0.25 against +0.27
    assert mae(naive) < mae(on)  # the naive method, knowing the minimum is 2 h away, is still ahead (0.40)
    assert [r["predicted_min_c"] for r in rows_on] == [r["predicted_min_c"] for r in rows_off]
    assert _band_2h(rows_on) == _band_2h(rows_off)
    assert any("2 h before past nights' minima" in r["probe_min2h"]["method"] for r in rows_on if r.get("probe_min2h"))
