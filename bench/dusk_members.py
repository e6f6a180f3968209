"""The dusk forecast's members on each open year's night classes (issue 15, ninth pass): which member
carries a class's error, with what weight, and what the simple methods score when they do not know
the class.

    python -m bench.dusk_members [SITE ...]   (about 10 s; writes bench/results/dusk_members.json)

Each site's year goes through `frostwatch.backtest.backtest` (the code behind `frostwatch backtest
--json`) on bench/tmy.py's log; the night records it learns from are kept and learned again by a
fresh `Learner`, walk-forward, and at each night the dusk blend's members are read from the
calibration the forecast used (`Calibration.dusk_components`) with their shares of the blend, and
the regression on T0 and Td0 alone beside them ("regression_reduced"; the member "regression" is
the K regression that speaks, the full one or, once its walk-forward error is lower, that one:
`calibration.REDUCED_INPUTS`), per class and per kind of dusk (clear and calm, or not). "w" is a
member's mean share of the blend. The replayed blend must give the backtest's forecast on every night (`replay_agrees`).

The classes are bench/forecast_skill.py's ("radiation", "cold" and "all"), so chosen by what the
night did. forecast_skill.py's simple methods are fitted on the class's own earlier nights: they know
that tonight ends below the class's limit. Beside them here, the same simple methods fitted on every
earlier night (walk-forward), a least-squares fit of the minimum on the six dusk inputs over every
night of the year in hindsight (scored on the class), the class-fitted regression used on every night,
and the nights selected by what is known at dusk instead (the forecast below the class's limit).
"""

from __future__ import annotations

import json
import math
import sys
import tempfile
from pathlib import Path

import numpy as np

from bench import forecast_skill as fs
from bench import tmy

RESULTS = Path(__file__).resolve().parent / "results"
EARLY_NIGHTS = 60  # the learner's nights known before this count as its first season


def _stats(e) -> dict | None:
    e = np.asarray(e, float)
    e = e[np.isfinite(e)]
    if not len(e):
        return None
    return {"n": int(len(e)), "mae_c": round(float(np.mean(np.abs(e))), 3), "bias_c": round(float(np.mean(e)), 3)}


def replay_members(cfg, records: list) -> dict:
    """Per night (by date): the blend's forecast (capped at T0, as the projection caps it), each
    member's forecast, the weights of the record that spoke and the nights known, learned walk-forward
    by a fresh `Learner` from the same records in the same order."""
    from frostwatch.forecast import calibration as cal_mod
    from frostwatch.forecast.learner import Learner

    lrn = Learner(cfg.forecast.calibration_nights)
    out = {}
    for rec in records:
        if rec is None:
            continue
        cal = lrn.calibration()
        x = rec.features
        h = max(0.25, rec.hours_to_sunrise)
        comps = cal.dusk_components(rec.prior_c, x, h, rec.evening_curve_c)
        pred = min(cal.predict_c(rec.prior_c, x, h, rec.evening_curve_c, comps), rec.t0_temp_c)
        shares = blend_shares(cal, x, comps, cal_mod)
        if "regression" in comps and cal_mod.REDUCED_INPUTS is not None:
            # the regression on REDUCED_INPUTS alone, whether or not it speaks (not a member of its own)
            comps = {**comps, "regression_reduced": cal.regression_c(x, h, reduced=True)}
        out[rec.night.isoformat()] = {"pred": pred, "comps": comps, "known": cal.n_nights, "x": x,
                                      "regime": cal_mod.dusk_regime(x), "weights": shares}
        lrn.learn(rec)
    return out


def blend_shares(cal, x: tuple, comps: dict, cal_mod) -> dict[str, float]:
    """Each member's share of the dusk forecast, as `Calibration.predict_c` forms it: the skill
    weights of the dusk's record, or while they are not known the learning mean (every member but
    the fall regression alike) or the regression alone; before the regression, the evening curve
    and the prior (`COLD_EVENING_WEIGHT`)."""
    if "regression" not in comps:
        if "evening_curve" in comps:
            return {"evening_curve": cal_mod.COLD_EVENING_WEIGHT, "prior": 1 - cal_mod.COLD_EVENING_WEIGHT}
        return {"prior": 1.0}
    w = dict(dict(cal.dusk_weights).get(cal_mod.dusk_regime(x), ()))
    used = {k: w[k] for k in comps if k in w}
    total = sum(used.values())
    if used and total > 0:
        return {k: v / total for k, v in used.items()}
    if cal_mod.LEARNING_MEAN and cal.learning:
        ks = [k for k in comps if k != "drop_regression"]
        return dict.fromkeys(ks, 1.0 / len(ks))
    return {"regression": 1.0}


def run_site(key: str, work: Path) -> dict:
    from frostwatch import backtest as bt
    from frostwatch import forecast
    from frostwatch.commands.logs import _first_rows
    from frostwatch.config import load_config
    from frostwatch.forecast.calibration import DUSK_METHODS
    from frostwatch.ingest.bulk import read_log_columns
    from frostwatch.store.bulk import series_of_columns

    site = tmy.SITES[key]
    hourly = tmy.read_pvlib(site)
    log, cfg_path, _ = tmy.write_log_and_config(site, work, hourly)
    view = fs.HourlyView(hourly)
    cfg = load_config(str(cfg_path))
    cols, _ = read_log_columns(log, {s.id for s in cfg.stations})
    series = series_of_columns(cols, _first_rows(cols), key_order="file")
    kept: list = []
    night_records = forecast.night_records

    def keep(*a, **k):
        recs = night_records(*a, **k)
        kept.append(recs)
        return recs

    forecast.night_records = keep
    try:
        rows = bt.backtest(cfg, series)
    finally:
        forecast.night_records = night_records
    member = replay_members(cfg, kept[0])
    rows = [r for r in rows if not r.get("protected")]
    agree = all(round(member[r["night"]]["pred"], 2) == r["predicted_min_c"] for r in rows)
    m = [member[r["night"]] for r in rows]
    obs = np.array([r["observed_min_c"] for r in rows])
    pred = np.array([r["predicted_min_c"] for r in rows])
    t_row = np.array([view.last_at_or_before("temp_c", fs._iso_s(r["issued_at"])) for r in rows])
    td_row = np.minimum(np.array([view.last_at_or_before("dew_c", fs._iso_s(r["issued_at"])) for r in rows]), t_row)
    known = np.array([v["known"] for v in m])
    limit = site.cold_below_c
    classes = {
        "radiation": np.array([r["observed_min_c"] < limit and (r["mean_wind_m_s"] or 0) < 2.0
                               and (r["max_cloud_frac"] or 0) <= 0.3 for r in rows]),
        "cold": obs < limit,
        "all": np.ones(len(rows), bool),
    }
    # class-free simple methods: fitted on every earlier night (walk-forward), and in hindsight on every night
    wf_all = fs.walk_forward_regression(t_row, td_row, obs)
    drop_all = fs.walk_forward_mean_drop(t_row, obs)
    x6 = np.array([v["x"] for v in m])
    hindsight = fs.in_sample(list(x6.T), obs)
    out: dict = {"site": key, "tuned_on": site.tuned_on, "cold_below_c": limit, "replay_agrees": agree, "classes": {}}
    for name, sel in classes.items():
        if sel.sum() < fs.MIN_CLASS_NIGHTS:
            continue
        idx = np.nonzero(sel)[0]
        c: dict = {"nights": int(sel.sum()), "frostwatch": _stats(pred[sel] - obs[sel]), "members": {}}
        for part, ps in (("all", np.ones(len(rows), bool)), (f"known < {EARLY_NIGHTS}", known < EARLY_NIGHTS),
                         (f"known >= {EARLY_NIGHTS}", known >= EARLY_NIGHTS)):
            s = sel & ps
            if not s.any():
                continue
            row = {"blend": _stats(pred[s] - obs[s])}
            for meth in (*DUSK_METHODS, "regression_reduced"):
                e = [m[i]["comps"][meth] - obs[i] for i in np.nonzero(s)[0] if meth in m[i]["comps"]]
                w = [m[i]["weights"].get(meth, 0.0) for i in np.nonzero(s)[0]]
                row[meth] = {**(_stats(e) or {}), **({} if meth == "regression_reduced" else {"mean_weight": round(float(np.mean(w)), 3)})}
            c["members"][part] = row
        o = obs[sel]
        c["simple_class_fitted"] = {
            "regression_walk_forward": _stats(fs.walk_forward_regression(t_row[sel], td_row[sel], o) - o),
            "mean_drop_walk_forward": _stats(fs.walk_forward_mean_drop(t_row[sel], o) - o)}
        c["simple_class_free"] = {"regression_walk_forward": _stats(wf_all[sel] - o),
                                  "mean_drop_walk_forward": _stats(drop_all[sel] - o),
                                  "six_dusk_inputs_in_hindsight": _stats(hindsight[sel] - o)}
        if name != "all":
            # the class-fitted walk-forward regression (from the class's 5th night) used on every night
            used = np.full(len(rows), np.nan)
            for k in range(len(rows)):
                earlier = idx[idx < k]
                if len(earlier) >= 5:
                    a = np.column_stack([np.ones(len(earlier)), t_row[earlier], td_row[earlier]])
                    b = np.linalg.lstsq(a, obs[earlier], rcond=None)[0]
                    used[k] = b[0] + b[1] * t_row[k] + b[2] * td_row[k]
            c["class_fitted_regression_on_every_night"] = _stats(used - obs)
        out["classes"][name] = c
    # each member by the dusk's skill record (clear calm dusks, the physics prior's ground, or cloudy or windy)
    out["by_dusk_regime"] = {}
    for regime in sorted({v["regime"] for v in m}):
        s = np.array([v["regime"] == regime for v in m])
        row = {"nights": int(s.sum()), "blend": _stats(pred[s] - obs[s])}
        for meth in (*DUSK_METHODS, "regression_reduced"):
            e = [m[i]["comps"][meth] - obs[i] for i in np.nonzero(s)[0] if meth in m[i]["comps"]]
            w = [m[i]["weights"].get(meth, 0.0) for i in np.nonzero(s)[0]]
            row[meth] = {**(_stats(e) or {}), **({} if meth == "regression_reduced" else {"mean_weight": round(float(np.mean(w)), 3)})}
        out["by_dusk_regime"][regime] = row
    by_fc = pred < limit
    reg = np.array([v["comps"].get("regression", math.nan) for v in m])
    out["forecast_below_limit"] = {"frostwatch": _stats(pred[by_fc] - obs[by_fc]),
                                   "regression_member": _stats(reg[by_fc] - obs[by_fc]),
                                   "observed_below_limit_among_them": int(np.sum(obs[by_fc] < limit))}
    return out


def print_report(res: dict) -> None:
    def cell(s):
        return f"{s['mae_c']:.2f}/{s['bias_c']:+.2f}" if s else "-"

    for s in res["sites"].values():
        print(f"\n{s['site']}{'' if s['tuned_on'] else ' (held out)'}: replay agrees with the backtest: {s['replay_agrees']}")
        for name, c in s["classes"].items():
            print(f"  {name} ({c['nights']} nights): frostwatch {cell(c['frostwatch'])} (MAE/bias degC)")
            for part, row in c["members"].items():
                mem = "; ".join(f"{k} {cell(v) if 'n' in v else '-'}" + (f" w {v['mean_weight']:.2f}" if "mean_weight" in v else "")
                                for k, v in row.items() if k != "blend")
                print(f"    {part:>13}: blend {cell(row['blend'])} (n {row['blend']['n']}); {mem}")
            print("    simple, class-fitted: " + ", ".join(f"{k} {cell(v)}" for k, v in c["simple_class_fitted"].items()))
            print("    simple, class-free:   " + ", ".join(f"{k} {cell(v)}" for k, v in c["simple_class_free"].items()))
            if "class_fitted_regression_on_every_night" in c:
                print(f"    the class-fitted regression used on every night: {cell(c['class_fitted_regression_on_every_night'])}")
        for regime, row in s["by_dusk_regime"].items():
            mem = "; ".join(f"{k} {cell(v) if 'n' in v else '-'}" + (f" w {v['mean_weight']:.2f}" if "mean_weight" in v else "")
                            for k, v in row.items() if k not in ("blend", "nights"))
            print(f"  {regime} dusks, all nights ({row['nights']}): blend {cell(row['blend'])}; {mem}")
        f = s["forecast_below_limit"]
        print(f"  nights forecast below {s['cold_below_c']:g} degC ({f['frostwatch']['n']}, {f['observed_below_limit_among_them']} "
              f"observed below): frostwatch {cell(f['frostwatch'])}, its K regression {cell(f['regression_member'])}")
    print(f"\nresults: {RESULTS / 'dusk_members.json'}")


def main(argv: list[str] | None = None) -> int:
    args = sys.argv[1:] if argv is None else argv
    if (message := tmy.unknown_site(args)) is not None:
        print(message, file=sys.stderr)
        return 2
    work = Path(tempfile.mkdtemp(prefix="frostwatch-members-"))
    res = {"about": __doc__.split("\n\n")[0].replace("\n", " "), "sites": {}}
    for key in args or list(tmy.SITES):
        res["sites"][key] = run_site(key, work / key)
    if not args or set(args) == set(tmy.SITES):
        RESULTS.mkdir(parents=True, exist_ok=True)
        (RESULTS / "dusk_members.json").write_text(json.dumps(res, indent=1) + "\n", encoding="utf-8")
    print_report(res)
    return 0


if __name__ == "__main__":
    sys.exit(main())
