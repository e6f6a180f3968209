"""The estimate between sunset and dusk at a new site (no past night known): tonight's evening
curve counted by its own error (curves.evening_curve_spread_c), and the ready-by times of a
site still learning set no later than dusk (advice.core)."""

from __future__ import annotations

import datetime as dt
import math
from pathlib import Path

import numpy as np
import pytest

from frostwatch import forecast
from frostwatch.advice import plan_advice
from frostwatch.commands.logs import _series_from_readings
from frostwatch.config import load_config
from frostwatch.forecast import curves
from frostwatch.ingest.csvlog import read_sensor_log
from frostwatch.night import night_of_date

FROST_NIGHT = dt.date(2027, 4, 14)


def _demo_frost_night(demo_config, demo_logs):
    cfg = load_config(str(demo_config))
    known = {s.id for s in cfg.stations}
    readings = read_sensor_log(demo_logs[0], known)[0]
    night = night_of_date(cfg.site.latitude, cfg.site.longitude, cfg.site.tz, FROST_NIGHT)
    return cfg, _series_from_readings(readings), night


def _cut(series, now_s: float):
    return {k: (t[t <= now_s], v[t <= now_s]) for k, (t, v) in series.items()}


def test_the_estimate_after_sunset_at_a_new_site_does_not_swing(demo_config, demo_logs):
    """The demo's hill block, no past night known, every 2 min from sunset to dusk. Before: 2.06
    degC at 19:46, -20.0 at 19:48 (one reading after sunset carried to sunrise by the evening
    curve), -6.82 at 19:50, +0.39 at 20:20, -4.23 at dusk (observed minimum -2.4). Now the curve
    counts for what its error allows: no step above 0.8 degC between evaluations, and the band
    holds each next estimate."""
    cfg, series, night = _demo_frost_night(demo_config, demo_logs)
    hill = next(b for b in cfg.blocks if b.id == "hill")
    out = []
    for now_s in np.arange(night.sunset_utc.timestamp() - 120.0, night.dusk_utc.timestamp(), 120.0):
        now = dt.datetime.fromtimestamp(float(now_s), dt.UTC)
        p = forecast.project_block(now, hill, cfg, _cut(series, float(now_s)), night)
        assert p.method == "pre-dusk estimate"
        out.append((p.predicted_min_c, p.band_low_c, p.band_high_c))
    mins = [m for m, _, _ in out]
    steps = np.abs(np.diff(mins))
    assert steps.max() <= 0.8, [round(x, 2) for x in mins[:8]]
    assert min(mins) > -6.0 and max(mins) < 3.0
    assert all(lo <= nxt <= hi + 0.8 for (_, lo, hi), nxt in zip(out, mins[1:], strict=False))


def test_evening_curve_spread_is_the_curve_with_its_error():
    """The same curve as `evening_curve_c` (the same slope); its error large with one reading
    after sunset and shrinking as the evening's readings come, down to the fit's own standard
    error (least squares, worked out here with numpy.polyfit's covariance)."""
    sunset, sunrise = 0.0, 10.5 * 3600.0
    t = np.arange(-3600.0, 7200.0 + 1.0, 60.0)
    rng = np.random.default_rng(3)
    v = 10.0 - 2.0 * np.sqrt(np.maximum(0.0, t / 3600.0)) + rng.normal(0.0, 0.4, len(t))
    errs = []
    for t0 in (60.0, 600.0, 1800.0, 7200.0):
        k = t <= t0
        t0_c = float(v[k][-1])
        got = curves.evening_curve_spread_c(t[k], v[k], sunset, t0, t0_c, sunrise)
        assert got[0] == curves.evening_curve_c(t[k], v[k], sunset, t0, t0_c, sunrise)
        errs.append(got[1])
    assert errs[0] > 10.0 > errs[1] > errs[2] > errs[3]
    x = np.sqrt(np.maximum(0.0, t / 3600.0))
    (b, _), cov = np.polyfit(x, v, 1, cov="unscaled")
    resid = v - np.polyval(np.polyfit(x, v, 1), x)
    se_b = math.sqrt(cov[0, 0] * np.sum(resid**2) / (len(v) - 2))
    carry = math.sqrt(10.5) - math.sqrt(2.0)
    assert errs[3] == pytest.approx(se_b * carry, rel=1e-6)
    assert curves.evening_curve_spread_c(t[:5], v[:5], sunset, -3000.0, 10.0, sunrise) is None  # none after sunset


def test_a_new_site_is_told_to_be_ready_by_dusk_at_the_latest(demo_config, demo_logs):
    """Before dusk at a site still learning, the ready-by time is no later than dusk (or the crew's
    mobilisation time from now, if dusk is nearer): the estimate will still move as the evening's
    cooling shows, and on the demo's frost night it moved 1-3 h earlier. The crossing itself is
    shown as projected. After dusk, the projection's own time."""
    cfg, series, night = _demo_frost_night(demo_config, demo_logs)
    east = next(b for b in cfg.blocks if b.id == "east")
    now = night.sunset_utc + dt.timedelta(minutes=40)
    p = forecast.project_block(now, east, cfg, _cut(series, now.timestamp()), night)
    plan = plan_advice(p, east, now, 980.0)
    assert p.calibration_nights_known == 0 and plan.crossing_utc is not None
    assert plan.crossing_utc - dt.timedelta(minutes=east.mobilisation_min) > night.dusk_utc  # the projection's own
    assert plan.ready_by_utc == night.dusk_utc
    later = night.dusk_utc + dt.timedelta(minutes=10)
    p2 = forecast.project_block(later, east, cfg, _cut(series, later.timestamp()), night)
    plan2 = plan_advice(p2, east, later, 980.0)
    assert plan2.ready_by_utc == plan2.crossing_utc - dt.timedelta(minutes=east.mobilisation_min)


REPO = Path(__file__).resolve().parents[1]
NIGHTS = ["2027-04-14-radiation-frost.csv", "2027-04-15-windy-advective.csv", "2027-04-16-cloudy-safe.csv"]


def test_the_demo_frost_night_gets_one_ready_each_in_time_and_no_updates(replayed):
    """The demo's three nights replayed (`frostwatch replay --json`). Before: every block's READY
    went out at 19:50 from the swing of the estimate (hill's from a -20 degC minimum: its air never
    reached its line until 06:14). Now on the frost night each block's READY comes from an estimate
    that moves smoothly, says ready by dusk (21:47) at the latest while the site is learning, and
    needs no update before its PROTECT (river 21:48, east 22:28: the same as before)."""
    from importlib import resources

    text = resources.files("frostwatch.sample_logs").joinpath("demo-farm.toml").read_text(encoding="utf-8")
    doc = replayed(text, [REPO / "sample_sensor_logs" / n for n in NIGHTS], "demo-farm.toml").doc()
    assert all(p["predicted_min_c"] > -10.0 for p in doc["projections"] if p["predicted_min_c"] is not None)
    night = [a for a in doc["alerts"] if a["time"] < "2027-04-15T12:00"]
    for block in ("east", "river", "hill"):
        mine = [a for a in night if a["block"] == block]
        assert mine[0]["level"] == "ready", (block, mine[0]["message"][:80])
        assert "get ready by 21:47" in mine[0]["message"] or block == "hill", mine[0]["message"][:80]
        assert not any("UPDATE" in a["message"].split("\n")[0] for a in mine), block
    protect = {a["block"]: a["time"] for a in night if a["level"] == "protect"}
    assert protect == {"river": "2027-04-15T04:48:00Z", "east": "2027-04-15T05:28:00Z"}
