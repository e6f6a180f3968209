"""Can one nowcast beat the naive drop on both of bench.forecast_skill's nowcast rows? A hindsight ceiling.

    python -m bench.nowcast_ceiling [SITE ...]        (about 10 s a site; run by name only)

bench.forecast_skill scores the nowcast at two instants of each night: 2 h before the observed
minimum (cold nights; an instant chosen by the outcome: the air will fall for two more hours) and
2 h before sunrise (all nights; a lead fixed in advance). The naive drop it is compared with is a
different method at each: the mean fall over the 2 h before earlier nights' minima at the first, the
mean fall to the minimum from that lead at the second. Where a minimum comes at sunrise the two
instants are the same, yet the two naive methods answer differently.

This bench asks whether any one forecast made from what frostwatch knows at the instant could beat
both. On the same nights and instants it records, from the installed package's own projection,
inputs known then: the six nowcast features and the hours left, the nowcast's four members (the
learned regression, tonight's re-fitted square-root curve, the dusk curve, the naive fall), its
blend before and after the approach correction and the approach blend, whether the night counts
as cold (dusk forecast below the mean minimum learned), and from the readings up to then the air
above the lowest reading since sunset, the hours since that lowest reading, the last hour's change,
the fall since sunset and the changes of pressure, cloud, wind and dew point over the last 3 h
(25 inputs with a constant; Sand Point's file holds one constant pressure). It then fits the fall still to come as a linear function of all of them
by least absolute deviations (iteratively reweighted least squares), *in hindsight*, on the two
rows' instants together, with the instants 2 h before the minimum weighted k = 1, 2, 2.5, 3, 4, 8 times,
and reports each row's mean absolute error. A fitted function sees every night, outcomes
included: no walk-forward forecast linear in these inputs does better. Beside it: each row fitted
alone (which also knows which row an instant belongs to), what ships and the naive drops.

Two nonlinear ones beside it, both analog methods (Delle Monache et al. 2013, Mon. Wea. Rev. 141:
the k past instants nearest in predictors each divided by its standard deviation, their realised
falls averaged with weights 1 / distance):
- in hindsight, the same 25 inputs, the analogs drawn from both rows' instants of every *other*
  night (later ones too: leave one night out), those of the first row weighted w = 1-4 times;
- walk-forward, as the projection could run it: the analogs drawn from the half-hourly training
  points of the nights learned before the instant (`NightRecord.nowcast_samples`: the six nowcast
  features as known then and the fall that came), of the same hour left to sunrise, the last
  `ANALOG_MEMORY` of them; alone, and half and half with what ships.

Results go to bench/results/nowcast_ceiling.json and are printed.
"""

from __future__ import annotations

import datetime as dt
import json
import sys
import tempfile
from pathlib import Path

import numpy as np

from bench import forecast_skill as fs
from bench import tmy

RESULTS = Path(__file__).resolve().parent / "results"
WEIGHTS = (1, 2, 2.5, 3, 4, 8)
ANALOG_K = (10, 25, 50)
ANALOG_ROW_WEIGHTS = (1, 2, 3, 4)
ANALOG_MEMORY = 300  # the walk-forward analogs: the most recent training points per hour left
TREND_QUANTITIES = ("air_pressure", "cloud_area_fraction", "wind_speed", "dew_point_temperature")
INPUTS = ("1", "feature x6", "hours_left", "learned", "refit", "dusk_curve", "naive", "blend", "corrected", "final",
          "cold_night", "above_lowest_c", "hours_since_lowest", "change_last_hour_c", "fall_since_sunset_c", "latest_c",
          "changes over 3 h: pressure, cloud, wind, dew point")


def _iso_s(s: str) -> float:
    return dt.datetime.fromisoformat(s.replace("Z", "+00:00")).timestamp()


def record_site(key: str) -> tuple[dict, list[dict], dict, list]:
    """bench.forecast_skill's run of one site, with each probe's inputs recorded by wrapping
    `Calibration.nowcast_drop_c` and `forecast.project_block` for the run (restored after), and
    the night records learned, in order, by the backtest with the probes (`Learner.learn`)."""
    from frostwatch import backtest as bt
    from frostwatch.forecast import calibration as cal_mod
    from frostwatch.forecast import learner as learner_mod

    inputs: dict[float, dict] = {}
    current: dict = {}
    kept: list = []
    learned: list = []
    probing: list = []
    drop_c, project, backtest, process = (cal_mod.Calibration.nowcast_drop_c, bt.forecast.project_block, bt.backtest,
                                          fs._process_figures)
    learn = learner_mod.Learner.learn

    def learn_wrap(self, rec):
        ok = learn(self, rec)
        if ok and probing:
            learned.append(rec)
        return ok

    def drop_wrap(self, f, hours_left, dusk_drop, el, lead=True, dusk_min_c=None, approach=True, blend=None):
        out = drop_c(self, f, hours_left, dusk_drop, el, lead, dusk_min_c, approach, blend)
        if blend is not None and "at" in current:  # project_block's own call
            corrected = drop_c(self, f, hours_left, dusk_drop, el, lead, dusk_min_c, False, blend)[0]
            learned = self.learned_drop_c(f, hours_left)
            naive = self.naive_drop_c(f)
            inputs[current["at"]] = {
                "f": list(f), "hours_left": hours_left, "learned": 0.0 if learned is None else learned,
                "refit": min(0.0, f[0]), "dusk_curve": min(0.0, dusk_drop), "naive": 0.0 if naive is None else naive,
                "blend": blend[0], "corrected": corrected, "final": out[0], "cold_night": float(self.cold_night(dusk_min_c)),
                "n_nights": self.n_nights}
        return out

    def project_wrap(now, block, cfg, window, night, *a, **k):
        current["at"] = now.timestamp()
        try:
            return project(now, block, cfg, window, night, *a, **k)
        finally:
            at = current.pop("at")
            if at in inputs:
                t, v = window[(block_station(cfg, block, window), "air_temperature")]
                m = (t >= night.sunset_utc.timestamp()) & (t <= at)
                tt, vv = t[m], v[m]
                i = int(np.argmin(vv))
                hour = tt >= at - 3600.0
                for q in TREND_QUANTITIES:  # the change over the last 3 h of the block's other readings
                    ts, vs = window.get((block_station(cfg, block, window), q), (np.array([]), np.array([])))
                    now_i = int(np.searchsorted(ts, at, side="right")) - 1
                    then_i = int(np.searchsorted(ts, at - 3 * 3600.0, side="right")) - 1
                    ok = now_i >= 0 and then_i >= 0 and np.isfinite(vs[now_i]) and np.isfinite(vs[then_i])
                    inputs[at][f"{q}_change_3h"] = float(vs[now_i] - vs[then_i]) if ok else 0.0
                inputs[at].update(above_lowest_c=float(vv[-1] - vv[i]), hours_since_lowest=float((at - tt[i]) / 3600.0),
                                  change_last_hour_c=float(vv[-1] - vv[hour][0]), fall_since_sunset_c=float(vv[0] - vv[-1]))

    def backtest_wrap(*a, **k):
        if k.get("probes") is None:
            return backtest(*a, **k)
        probing.append(True)
        learned.clear()
        try:
            rows = backtest(*a, **k)
        finally:
            probing.clear()
        kept[:] = rows
        return rows

    try:
        cal_mod.Calibration.nowcast_drop_c = drop_wrap
        bt.forecast.project_block = project_wrap
        bt.backtest = backtest_wrap
        learner_mod.Learner.learn = learn_wrap
        fs._process_figures = lambda log, cfg_path: {}
        res = fs.run_site(key, Path(tempfile.mkdtemp(prefix="fw-nowcast-ceiling-")))
    finally:
        cal_mod.Calibration.nowcast_drop_c, bt.forecast.project_block, bt.backtest, fs._process_figures = (
            drop_c, project, backtest, process)
        learner_mod.Learner.learn = learn
    return res, kept, inputs, learned


def block_station(cfg, block, window) -> str:
    """The block's crop-height station with air readings in the window (the open sites have one)."""
    ids = [s.id for s in cfg.stations if s.block == block.id and (s.id, "air_temperature") in window]
    return ids[0]


def _matrix(rows: list[dict], inputs: dict, probe: str, obs_key: str, cold_below_c: float, cold_only: bool):
    """(inputs with a constant, the fall that came, what ships minus the observed, and per instant
    (its night, its six nowcast features, the hours left, the nights learned before it))."""
    x, fall, err_shipped, about = [], [], [], []
    for r in rows:
        p = r.get(f"probe_{probe}")
        obs = r[obs_key]
        if p is None or not np.isfinite(obs) or (cold_only and not r["observed_min_c"] < cold_below_c):
            continue
        s = inputs.get(_iso_s(p["time"]))
        if s is None or "above_lowest_c" not in s:
            continue
        latest = p["predicted_min_c"] - s["final"]
        x.append([1.0, *s["f"], s["hours_left"], s["learned"], s["refit"], s["dusk_curve"], s["naive"], s["blend"],
                  s["corrected"], s["final"], s["cold_night"], s["above_lowest_c"], s["hours_since_lowest"],
                  s["change_last_hour_c"], s["fall_since_sunset_c"], latest]
                 + [s[f"{q}_change_3h"] for q in TREND_QUANTITIES])
        fall.append(obs - latest)
        err_shipped.append(p["predicted_min_c"] - obs)
        about.append((r["night"], tuple(s["f"]), s["hours_left"], s["n_nights"]))
    return np.array(x), np.array(fall), np.array(err_shipped), about


def analog_fall_c(pool_x: np.ndarray, pool_fall_c: np.ndarray, x: np.ndarray, k: int,
                  pool_weight: np.ndarray | None = None) -> float:
    """The analog ensemble's fall still to come (Delle Monache et al. 2013, eq. 1 with equal
    predictor weights): the k pool rows nearest to x in each column divided by the pool's standard
    deviation, their falls averaged with weights 1 / max(distance, 1e-3) (times `pool_weight`)."""
    sd = pool_x.std(axis=0)
    sd = np.where(sd > 1e-9, sd, 1.0)
    d = np.sqrt((((pool_x - x) / sd) ** 2).sum(axis=1))
    kk = min(k, len(d))
    pick = np.argpartition(d, kk - 1)[:kk]
    w = 1.0 / np.maximum(d[pick], 1e-3) * (1.0 if pool_weight is None else pool_weight[pick])
    return min(0.0, float(np.dot(w, pool_fall_c[pick]) / w.sum()))


def analogs_in_hindsight(xa, ya, na, xb, yb, nb, shipped_a, shipped_b) -> list[dict]:
    """The analog ensemble on the 25 inputs over both rows' instants of every other night (later
    ones included), the first row's analogs weighted w times: each row's MAE (degC)."""
    x = np.vstack([xa, xb])[:, 1:]  # without the constant
    y = np.concatenate([ya, yb])
    night = np.array(na + nb)
    first = np.concatenate([np.ones(len(ya), bool), np.zeros(len(yb), bool)])
    out = []
    for k in ANALOG_K:
        for w in ANALOG_ROW_WEIGHTS:
            pred = np.array([analog_fall_c(x[other], y[other], x[i], k, np.where(first[other], float(w), 1.0))
                             for i in range(len(y)) for other in [night != night[i]]])
            e = np.abs(pred - y)
            out.append({"k": k, "weight_2h_before_min": w, "before_min_2h_mae_c": round(float(e[first].mean()), 3),
                        "before_sunrise_2h_mae_c": round(float(e[~first].mean()), 3)})
    return out


def analogs_walk_forward(records: list, about_a: list, ya, ea, about_b: list, yb, eb) -> list[dict]:
    """The analog ensemble from the nights learned before each instant: their half-hourly training
    points of the same hour left to sunrise (the nowcast's 1-h bins, the last `ANALOG_MEMORY`), on
    the six nowcast features; alone and half and half with what ships (MAE and bias, degC)."""
    pts = [(n, f, drop) for n, rec in enumerate(records) for f, drop in rec.nowcast_samples]
    night_of = np.array([p[0] for p in pts])
    feats = np.array([p[1] for p in pts], dtype=float)
    falls = np.array([p[2] for p in pts], dtype=float)
    bins = np.minimum(13, np.floor(feats[:, 1] ** 2)).astype(int)
    out = []
    for k in ANALOG_K:
        row = {"k": k}
        for name, about, y, e_shipped in (("before_min_2h", about_a, ya, ea), ("before_sunrise_2h", about_b, yb, eb)):
            err_alone, err_half = [], []
            for (_, f, hours_left, n_learned), fall, e in zip(about, y, e_shipped, strict=True):
                mine = np.nonzero((night_of < n_learned) & (bins == min(13, int(hours_left))))[0][-ANALOG_MEMORY:]
                if len(mine) < 20:  # as the learned nowcast, 20 points before it speaks: what ships alone
                    err_alone.append(e)
                    err_half.append(e)
                    continue
                a = analog_fall_c(feats[mine], falls[mine], np.asarray(f, dtype=float), k) - fall
                err_alone.append(a)
                err_half.append(0.5 * (a + e))
            row[f"{name}_alone_mae_c"] = round(float(np.mean(np.abs(err_alone))), 3)
            row[f"{name}_alone_bias_c"] = round(float(np.mean(err_alone)), 3)
            row[f"{name}_half_with_shipped_mae_c"] = round(float(np.mean(np.abs(err_half))), 3)
        out.append(row)
    return out


def lad_fit(x: np.ndarray, y: np.ndarray, weight: np.ndarray, rounds: int = 60) -> np.ndarray:
    """Least absolute deviations by iteratively reweighted least squares (residuals floored at 0.05 degC)."""
    w = np.ones(len(y))
    beta = np.zeros(x.shape[1])
    for _ in range(rounds):
        sw = np.sqrt(w * weight)
        beta = np.linalg.lstsq(x * sw[:, None], y * sw, rcond=None)[0]
        w = 1.0 / np.maximum(np.abs(y - x @ beta), 0.05)
    return beta


def run_site(key: str) -> dict:
    res, rows, inputs, records = record_site(key)
    cold_below = tmy.SITES[key].cold_below_c
    xa, ya, ea, about_a = _matrix(rows, inputs, "min2h", "observed_min_c", cold_below, True)
    xb, yb, eb, about_b = _matrix(rows, inputs, "sr2h", "_obs_sr2h", cold_below, False)
    mae = lambda x, y, b: round(float(np.mean(np.abs(x @ b - y))), 3)  # noqa: E731
    x, y = np.vstack([xa, xb]), np.concatenate([ya, yb])
    joint = []
    for k in WEIGHTS:
        b = lad_fit(x, y, np.concatenate([np.full(len(ya), float(k)), np.ones(len(yb))]))
        joint.append({"weight_2h_before_min": k, "before_min_2h_mae_c": mae(xa, ya, b), "before_sunrise_2h_mae_c": mae(xb, yb, b)})
    cls = res["classes"]
    naive_a, naive_b = cls["cold"]["naive_2h_before_min"]["mae_c"], cls["all"]["naive_2h_before_sunrise"]["mae_c"]
    hindsight = analogs_in_hindsight(xa, ya, [a[0] for a in about_a], xb, yb, [b[0] for b in about_b], ea, eb)
    return {
        "site": key, "tuned_on": tmy.SITES[key].tuned_on, "instants": {"before_min_2h_cold": len(ya), "before_sunrise_2h_all": len(yb)},
        "inputs": len(INPUTS) + 5 + len(TREND_QUANTITIES) - 1,
        "naive": {"before_min_2h_mae_c": cls["cold"]["naive_2h_before_min"]["mae_c"],
                  "before_sunrise_2h_mae_c": cls["all"]["naive_2h_before_sunrise"]["mae_c"]},
        "shipped": {"before_min_2h_mae_c": round(float(np.mean(np.abs(ea))), 3),
                    "before_sunrise_2h_mae_c": round(float(np.mean(np.abs(eb))), 3)},
        "each_row_fitted_alone": {"before_min_2h_mae_c": mae(xa, ya, lad_fit(xa, ya, np.ones(len(ya)))),
                                  "before_sunrise_2h_mae_c": mae(xb, yb, lad_fit(xb, yb, np.ones(len(yb))))},
        "one_fit_both_rows": joint,
        "both_beaten_by_one_fit": any(j["before_min_2h_mae_c"] < cls["cold"]["naive_2h_before_min"]["mae_c"]
                                      and j["before_sunrise_2h_mae_c"] < cls["all"]["naive_2h_before_sunrise"]["mae_c"]
                                      for j in joint),
        "analogs_in_hindsight": hindsight,
        "both_beaten_by_analogs_in_hindsight": any(h["before_min_2h_mae_c"] < naive_a and h["before_sunrise_2h_mae_c"] < naive_b
                                                   for h in hindsight),
        "analogs_walk_forward": analogs_walk_forward(records, about_a, ya, ea, about_b, yb, eb),
    }


def measure(sites: list[str] | None = None, verbose: bool = True) -> dict:
    out = {"about": __doc__.split("\n\n")[0], "sites": {k: run_site(k) for k in sites or list(tmy.SITES)}}
    if sites is None or set(sites) == set(tmy.SITES):
        RESULTS.mkdir(parents=True, exist_ok=True)
        (RESULTS / "nowcast_ceiling.json").write_text(json.dumps(out, indent=1) + "\n", encoding="utf-8")
    if verbose:
        for s in out["sites"].values():
            n, sh, al = s["naive"], s["shipped"], s["each_row_fitted_alone"]
            print(f"\n{s['site']}{'' if s['tuned_on'] else ' (held out)'}: MAE degC, 2 h before the minimum (cold nights, "
                  f"{s['instants']['before_min_2h_cold']}) / 2 h before sunrise (all nights, {s['instants']['before_sunrise_2h_all']})")
            print(f"  naive drops                          {n['before_min_2h_mae_c']:.3f} / {n['before_sunrise_2h_mae_c']:.3f}")
            print(f"  what ships                           {sh['before_min_2h_mae_c']:.3f} / {sh['before_sunrise_2h_mae_c']:.3f}")
            print(f"  each row fitted alone, in hindsight  {al['before_min_2h_mae_c']:.3f} / {al['before_sunrise_2h_mae_c']:.3f}")
            for j in s["one_fit_both_rows"]:
                print(f"  one fit, in hindsight, weight {j['weight_2h_before_min']:<4g}   "
                      f"{j['before_min_2h_mae_c']:.3f} / {j['before_sunrise_2h_mae_c']:.3f}")
            print(f"  one linear fit beats both naive drops: {s['both_beaten_by_one_fit']}")
            for h in s["analogs_in_hindsight"]:
                print(f"  analogs in hindsight, k {h['k']:<3d} weight {h['weight_2h_before_min']}    "
                      f"{h['before_min_2h_mae_c']:.3f} / {h['before_sunrise_2h_mae_c']:.3f}")
            print(f"  analogs in hindsight beat both naive drops: {s['both_beaten_by_analogs_in_hindsight']}")
            for a in s["analogs_walk_forward"]:
                print(f"  analogs walk-forward, k {a['k']:<3d} alone      {a['before_min_2h_alone_mae_c']:.3f} / "
                      f"{a['before_sunrise_2h_alone_mae_c']:.3f} (bias {a['before_min_2h_alone_bias_c']:+.2f} / "
                      f"{a['before_sunrise_2h_alone_bias_c']:+.2f}); half with what ships "
                      f"{a['before_min_2h_half_with_shipped_mae_c']:.3f} / {a['before_sunrise_2h_half_with_shipped_mae_c']:.3f}")
        if sites is None:
            print(f"\nresults: {RESULTS / 'nowcast_ceiling.json'}")
    return out


def main(argv: list[str] | None = None) -> int:
    args = sys.argv[1:] if argv is None else argv
    if (message := tmy.unknown_site(args)) is not None:
        print(message, file=sys.stderr)
        return 2
    measure(args or None)
    return 0


if __name__ == "__main__":
    sys.exit(main())
