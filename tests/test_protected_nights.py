"""Nights with protection running are not learned as natural nights (issue 14, item 3): their
minimum is the sprinklers' or fans' doing. Ten protected nights in a row must not move the
forecast's bias on the natural nights after them by more than 0.2 degC."""

from __future__ import annotations

import datetime as dt

import numpy as np
from forecast_site import make_cfg  # noqa: E402

from frostwatch import backtest as bt
from frostwatch.night import night_of_date

NATURAL_BEFORE, PROTECTED, NATURAL_AFTER = 25, 10, 10
HELD_AT_C = -1.5  # over-tree sprinklers hold the wetted block near this while they run


def season(cfg, seed=7, flags=True):
    """Radiation nights whose minimum follows an Allen-type rule of T0 and Td plus noise, on a
    square-root curve from t0 (reference sheet 1.1). Nights NATURAL_BEFORE.. are cold nights with
    sprinklers running from t0 + 1 h to an hour after sunrise, the air held at HELD_AT_C."""
    rng = np.random.default_rng(seed)
    s = cfg.site
    ts, air, td, run_t, run_v = [], [], [], [], []
    n = NATURAL_BEFORE + PROTECTED + NATURAL_AFTER
    for k in range(n):
        night = night_of_date(s.latitude, s.longitude, s.tz, dt.date(2027, 3, 10) + dt.timedelta(days=k))
        protected = NATURAL_BEFORE <= k < NATURAL_BEFORE + PROTECTED
        t0_c, td_c = (rng.uniform(0, 3), rng.uniform(-12, -8)) if protected else (rng.uniform(0, 9), rng.uniform(-10, -1))
        tn = 0.5 * t0_c + 0.1 * td_c - 4.0 + rng.normal(0, 0.4)
        start, dusk, sunrise = night.sunset_utc.timestamp() - 6 * 3600, night.dusk_utc.timestamp(), night.sunrise_utc.timestamp()
        t = np.arange(start, sunrise + 2 * 3600, 600.0)
        a = np.where(t < dusk, t0_c + 6 * (dusk - t) / (8 * 3600), t0_c + (tn - t0_c) * np.sqrt(np.clip((t - dusk) / (sunrise - dusk), 0, 1)))
        a = np.where(t > sunrise, tn + 2.0 * (t - sunrise) / 3600, a)
        if protected:
            on = (t >= dusk + 3600) & (t <= sunrise + 3600)
            a = np.where(on, np.maximum(a, HELD_AT_C), a)
            run_t.append(t)
            run_v.append(on.astype(float))
        ts.append(t)
        air.append(a)
        td.append(np.minimum(td_c, a))
    t = np.concatenate(ts)
    order = np.argsort(t, kind="stable")
    t, a, d = t[order], np.concatenate(air)[order], np.concatenate(td)[order]
    keep = np.concatenate([[True], np.diff(t) > 0])
    out = {
        ("b-low", "air_temperature"): (t[keep], a[keep]),
        ("b-low", "dew_point_temperature"): (t[keep], d[keep]),
        ("b-low", "wind_speed"): (t[keep], np.full(keep.sum(), 0.4)),
    }
    if flags:
        rt = np.concatenate(run_t)
        out[("b-low", "sprinkler_running")] = (rt, np.concatenate(run_v))
    return out


def last_natural_bias(rows) -> float:
    last = rows[-NATURAL_AFTER:]
    return float(np.mean([r["predicted_min_c"] - r["observed_min_c"] for r in last]))


def without_protected_nights(series, cfg):
    s = cfg.site
    first = night_of_date(s.latitude, s.longitude, s.tz, dt.date(2027, 3, 10) + dt.timedelta(days=NATURAL_BEFORE))
    after = night_of_date(s.latitude, s.longitude, s.tz, dt.date(2027, 3, 10) + dt.timedelta(days=NATURAL_BEFORE + PROTECTED))
    cut0, cut1 = first.sunset_utc.timestamp() - 5 * 3600, after.sunset_utc.timestamp() - 6 * 3600
    return {k: (t[(t < cut0) | (t >= cut1)], v[(t < cut0) | (t >= cut1)]) for k, (t, v) in series.items()}


def test_ten_protected_nights_do_not_move_the_natural_bias(tmp_path):
    cfg = make_cfg(tmp_path, protection="overtree_sprinkler")
    series = season(cfg)
    rows = bt.backtest(cfg, series)
    assert len(rows) == NATURAL_BEFORE + PROTECTED + NATURAL_AFTER
    assert [r["protected"] for r in rows].count(True) == PROTECTED
    learned_through = last_natural_bias(rows)
    never_seen = last_natural_bias(bt.backtest(cfg, without_protected_nights(series, cfg)))
    assert abs(learned_through - never_seen) <= 0.2
    # the calibration says what it left out
    assert rows[-1]["calibration_nights"] == NATURAL_BEFORE + NATURAL_AFTER - 1
    assert any("protection running left out" in n for n in rows[-1]["notes"])


def test_the_same_nights_learned_as_natural_would_drift_warm(tmp_path):
    """Why the running flag matters: without it the held -1.5 degC minima are learned as the
    nights' own, and the natural nights after them are forecast warm."""
    cfg = make_cfg(tmp_path, protection="overtree_sprinkler")
    unflagged = bt.backtest(cfg, season(cfg, flags=False))
    flagged = bt.backtest(cfg, season(cfg))
    assert last_natural_bias(unflagged) - last_natural_bias(flagged) > 0.2
