"""The walk-forward backtest (DESIGN.md 1.4): no peeking at the night itself or later ones, nights
the log does not cover are neither scored nor learned, and the command's two outputs."""

from __future__ import annotations

import datetime as dt
import json
import subprocess
import sys

import numpy as np
import pytest
from forecast_site import SITE, make_cfg  # noqa: E402,F401

from frostwatch import backtest as bt
from frostwatch.backtest import backtest, backtest_summary

N_NIGHTS = 14


def synthetic_log(cfg, n=N_NIGHTS, seed=3):
    """`n` nights of 10-min readings: each night's minimum follows an Allen-type rule of its
    T0 and dew point plus noise, on a square-root curve from t0 (reference sheet 1.1)."""
    from frostwatch.night import night_of_date

    rng = np.random.default_rng(seed)
    s = cfg.site
    t_all, air_all, td_all = [], [], []
    for k in range(n):
        night = night_of_date(s.latitude, s.longitude, s.tz, dt.date(2027, 3, 20) + dt.timedelta(days=k))
        t0, td = rng.uniform(0, 9), rng.uniform(-10, -1)
        tn = 0.5 * t0 + 0.1 * td - 4.0 + rng.normal(0, 0.4)
        start, dusk, sunrise = night.sunset_utc.timestamp() - 6 * 3600, night.dusk_utc.timestamp(), night.sunrise_utc.timestamp()
        t = np.arange(start, sunrise + 2 * 3600, 600.0)
        air = np.where(t < dusk, t0 + 6 * (dusk - t) / (8 * 3600), t0 + (tn - t0) * np.sqrt(np.clip((t - dusk) / (sunrise - dusk), 0, 1)))
        air = np.where(t > sunrise, tn + 2.0 * (t - sunrise) / 3600, air)
        t_all.append(t)
        air_all.append(air)
        td_all.append(np.minimum(td, air))
    t = np.concatenate(t_all)
    order = np.argsort(t, kind="stable")
    t, air, td = t[order], np.concatenate(air_all)[order], np.concatenate(td_all)[order]
    keep = np.concatenate([[True], np.diff(t) > 0])
    return {
        ("b-low", "air_temperature"): (t[keep], air[keep]),
        ("b-low", "dew_point_temperature"): (t[keep], td[keep]),
        ("b-low", "wind_speed"): (t[keep], np.full(keep.sum(), 0.4)),
    }


def cut(series, end_s):
    return {k: (t[t <= end_s], v[t <= end_s]) for k, (t, v) in series.items()}


def test_forecast_for_night_k_unchanged_when_later_nights_removed(tmp_path):
    cfg = make_cfg(tmp_path)
    series = synthetic_log(cfg)
    full = backtest(cfg, series)
    assert len(full) == N_NIGHTS
    for k in (0, 3, 9, N_NIGHTS - 2):
        # keep everything up to the end of night k's observation window (sunrise + 1 h)
        end = dt.datetime.fromisoformat(full[k]["observed_min_at"].replace("Z", "+00:00")).timestamp() + 3 * 3600
        part = backtest(cfg, cut(series, end))
        assert part[: k + 1] == full[: k + 1]


def test_forecast_never_sees_its_own_night(tmp_path):
    """Changing night k's minimum (after its issue time) changes no forecast up to k."""
    cfg = make_cfg(tmp_path)
    series = synthetic_log(cfg)
    full = backtest(cfg, series)
    k = 8
    issue = dt.datetime.fromisoformat(full[k]["issued_at"].replace("Z", "+00:00")).timestamp()
    t, v = series[("b-low", "air_temperature")]
    v2 = v.copy()
    later = (t > issue) & (t < issue + 8 * 3600)
    v2[later] -= 5.0
    changed = dict(series)
    changed[("b-low", "air_temperature")] = (t, v2)
    rows = backtest(cfg, changed)
    assert [r["predicted_min_c"] for r in rows[: k + 1]] == [r["predicted_min_c"] for r in full[: k + 1]]
    assert rows[k]["observed_min_c"] < full[k]["observed_min_c"] - 4.0
    assert rows[k + 1]["predicted_min_c"] != full[k + 1]["predicted_min_c"]  # learned afterwards


def test_calibration_counts_only_earlier_nights_and_improves(tmp_path):
    cfg = make_cfg(tmp_path)
    rows = backtest(cfg, synthetic_log(cfg, n=24))
    assert [r["calibration_nights"] for r in rows] == list(range(len(rows)))
    err = np.abs([r["predicted_min_c"] - r["observed_min_c"] for r in rows])
    assert err[-8:].mean() < 1.0  # the site's own rule is learned (noise 0.4 degC)
    assert err[-8:].mean() < err[:4].mean()


def test_uncovered_night_is_neither_scored_nor_learned(tmp_path):
    cfg = make_cfg(tmp_path)
    series = synthetic_log(cfg)
    full = backtest(cfg, series)
    # a three-hour hole in night 5
    issue = dt.datetime.fromisoformat(full[5]["issued_at"].replace("Z", "+00:00")).timestamp()
    holed = {k: (t[(t < issue + 3600) | (t > issue + 4 * 3600)], v[(t < issue + 3600) | (t > issue + 4 * 3600)]) for k, (t, v) in series.items()}
    rows = backtest(cfg, holed)
    assert full[5]["night"] not in [r["night"] for r in rows]
    assert len(rows) == N_NIGHTS - 1
    assert rows[5]["calibration_nights"] == 5


def test_summary_has_contract_keys_and_radiation_split():
    rows = [
        {"night": "2027-04-01", "predicted_min_c": -1.0, "observed_min_c": -2.0, "radiation_night": True},
        {"night": "2027-04-02", "predicted_min_c": 1.0, "observed_min_c": 0.0, "radiation_night": False},
        {"night": "2027-04-03", "predicted_min_c": 0.0, "observed_min_c": 2.0, "radiation_night": False},
    ]
    s = backtest_summary(rows)
    assert s["nights"] == 3 and s["mae_c"] == pytest.approx(4 / 3, abs=1e-3) and s["bias_c"] == 0.0
    assert s["radiation_nights"]["nights"] == 1 and s["radiation_nights"]["bias_c"] == 1.0
    assert backtest_summary([])["mae_c"] is None
    # a block whose protection ran is counted, not scored: its sensors read the protected air
    ran = {"night": "2027-04-04", "predicted_min_c": -6.0, "observed_min_c": -1.0, "radiation_night": True,
           "protected": True}
    s2 = backtest_summary([*rows, ran])
    assert {k: s2[k] for k in ("nights", "forecasts", "mae_c", "bias_c")} == {k: s[k] for k in ("nights", "forecasts", "mae_c", "bias_c")}
    assert s2["protected_forecasts"] == 1 and s2["radiation_nights"]["forecasts"] == 1


def test_candidate_nights_follow_the_data(tmp_path):
    cfg = make_cfg(tmp_path)
    nights = bt.candidate_nights(cfg, synthetic_log(cfg, n=3))
    assert nights[0] == dt.date(2027, 3, 20) and len(nights) <= 5


def test_backtest_command_table_and_json(tmp_path, demo_config, demo_logs):
    cmd = [sys.executable, "-m", "frostwatch", "backtest", *map(str, demo_logs), "--config", str(demo_config)]
    out = subprocess.run(cmd + ["--json"], capture_output=True, text=True, timeout=120)
    assert out.returncode == 0, out.stderr
    doc = json.loads(out.stdout)
    assert set(doc) == {"nights", "summary"}
    for r in doc["nights"]:
        assert {"night", "station", "issued_at", "predicted_min_c", "observed_min_c", "observed_min_at"} <= set(r)
    assert doc["summary"]["nights"] == 3
    out = subprocess.run(cmd, capture_output=True, text=True, timeout=120)
    assert out.returncode == 0 and "walk-forward" in out.stdout and "east-low" in out.stdout
    # the rows marked as clear calm nights are the ones the summary line counts (the regime column
    # is what the forecast saw at dusk, which a night can turn from)
    lines = out.stdout.splitlines()
    marked = [x for x in lines if " yes" in x and "not scored" not in x]
    flagged = [r for r in doc["nights"] if r.get("radiation_night") and not r["protected"]]
    assert len(marked) == len(flagged) == doc["summary"]["radiation_nights"]["forecasts"] > 0
    assert f"clear calm nights (mean wind < 2 m/s, cloud <= 0.3 over the night; 'yes' above): {len(flagged)} forecasts" in out.stdout
    # hill has no anemometer: its nights are judged by the farm's wind, as its alerts are, so the
    # windy night (5-7 m/s at the other blocks) is not a clear calm night there either
    windy = {r["block"]: r for r in doc["nights"] if r["night"] == "2027-04-15"}
    assert not any(r["radiation_night"] for r in windy.values())
    assert windy["hill"]["mean_wind_m_s"] > 2.0
    # the demo's first night ran sprinklers (river) and wind machines (east): their sensors read the
    # protected air, so those rows are shown, marked, and left out of the scores
    ran = {(r["night"], r["block"]) for r in doc["nights"] if r["protected"]}
    assert ran == {("2027-04-14", "east"), ("2027-04-14", "river")}
    assert doc["summary"]["protected_forecasts"] == 2 and doc["summary"]["forecasts"] == len(doc["nights"]) - 2
    assert sum("protection ran: not scored" in x for x in lines) == 2
    assert "2 forecast(s) left out: sprinklers or wind machines ran" in out.stdout


def test_learned_nowcast_is_walk_forward_and_follows_tonight(tmp_path):
    """The nowcast learned from past nights' half-hourly points: used once enough are known,
    close to the truth on these exact square-root nights (noise only in each night's minimum),
    and unchanged when later nights are removed."""
    from frostwatch import forecast
    from frostwatch.pipeline import Evaluator, slice_series

    cfg = make_cfg(tmp_path)
    series = synthetic_log(cfg, n=16)
    full = bt.backtest(cfg, series, nowcast_lead_h=2.0, nowcast_before_sunrise_h=2.0)
    late = [r for r in full[-6:] if r["nowcast_min_c"] is not None]
    assert late and all(r["sunrise_nowcast_min_c"] is not None for r in full[-6:])
    err = np.abs([r["nowcast_min_c"] - r["observed_min_c"] for r in late])
    assert err.mean() < 0.5
    end = dt.datetime.fromisoformat(full[10]["observed_min_at"].replace("Z", "+00:00")).timestamp() + 3 * 3600
    part = bt.backtest(cfg, cut(series, end), nowcast_lead_h=2.0, nowcast_before_sunrise_h=2.0)
    assert part[:11] == full[:11]
    # the method says which nowcast spoke
    ev = Evaluator(cfg)
    for r in full[:-1]:
        ev.learn_night(ev.night(dt.date.fromisoformat(r["night"])), series)
    cal = ev.calibration("b")
    assert cal.nowcast_ready
    night = ev.night(dt.date.fromisoformat(full[-1]["night"]))
    now = night.dusk_utc + dt.timedelta(hours=3)
    win = slice_series(series, night.sunset_utc.timestamp() - 6 * 3600, now.timestamp())
    p = forecast.project_block(now, cfg.blocks[0], cfg, win, night, cal)
    assert p.method.startswith("nowcast (") and "learned" in p.method
    assert abs(p.predicted_min_c - full[-1]["observed_min_c"]) < 1.0


def test_every_projection_sees_only_its_past(tmp_path):
    """Perturb every reading after a projection's time (air, dew point, wind, on this night and
    all later ones): the projection made then (minimum, band, crossings) does not move, nor does
    anything about earlier nights."""
    cfg = make_cfg(tmp_path)
    series = synthetic_log(cfg)
    k = 9

    def probes(night, rec, obs):
        return {"late": night.dusk_utc + dt.timedelta(hours=3)}

    full = bt.backtest(cfg, series, probes=probes)
    at = dt.datetime.fromisoformat(full[k]["probe_late"]["time"].replace("Z", "+00:00")).timestamp()
    rng = np.random.default_rng(11)
    changed = {}
    for key, (t, v) in series.items():
        v2 = v.copy()
        after = t > at
        v2[after] += rng.normal(0.0, 3.0, after.sum()) - 2.0
        if key[1] == "wind_speed":
            v2 = np.abs(v2)
        changed[key] = (t, v2)
    rows = bt.backtest(cfg, changed, probes=probes)
    assert rows[k]["probe_late"] == full[k]["probe_late"]
    assert rows[k]["band_low_c"] == full[k]["band_low_c"] and rows[k]["band_high_c"] == full[k]["band_high_c"]
    for a, b in zip(rows[:k], full[:k], strict=True):
        assert a == b


def test_live_features_match_the_training_features():
    """The nowcast learns from features computed for past nights in one pass (feature_matrix) and
    is applied to features computed at one instant (features_at): they must be the same numbers."""
    from frostwatch.forecast import nowcast

    rng = np.random.default_rng(5)
    t = np.cumsum(rng.uniform(200, 400, 200))
    v = 10 - 1.4 * np.sqrt(np.maximum(t - 7200, 0) / 3600) + rng.normal(0, 0.2, len(t))
    for now in (9000.0, 20000.0, 41000.0, float(t[120])):
        one = nowcast.features_at(t, v, 7200.0, 10.0, 50000.0, now, 1.3, 0.4, 2.5)
        latest, feats, ok = nowcast.feature_matrix(t, v, 7200.0, 10.0, 50000.0, np.array([now]), np.array([1.3]),
                                                   np.array([0.4]), np.array([2.5]))
        assert ok[0] and one[0] == latest[0]
        assert np.allclose(one[1], feats[0], atol=1e-9)


def test_the_pipeline_does_not_import_the_backtest():
    """The pipeline never imports the backtest, at module level or inside a function (issue 16: no
    import circles; the backtest keeps its own learners and no longer imports the pipeline)."""
    import ast
    import inspect

    from frostwatch import pipeline

    tree = ast.parse(inspect.getsource(pipeline))
    imported = [a.name for n in ast.walk(tree) if isinstance(n, ast.Import) for a in n.names]
    imported += [f"{n.module}.{a.name}" for n in ast.walk(tree) if isinstance(n, ast.ImportFrom) for a in n.names]
    assert [m for m in imported if "backtest" in m] == []
    assert not hasattr(pipeline, "backtest")
