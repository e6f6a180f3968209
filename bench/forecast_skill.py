"""Forecast skill on pvlib's open typical years (Greensboro NC, Sand Point AK, Miami FL), walk-forward,
beside simple methods computed in the same run on the same nights.

    python -m bench.forecast_skill [SITE ...]        (or: python -m bench forecast_skill)

Each site's file becomes a sensor log (bench/tmy.py: read through pvlib, checked row for row
against an independent parse of the raw file) and goes through `frostwatch.backtest.backtest`, the
code behind `frostwatch backtest --json`, with extra projections at chosen times (probes).

Night classes: "radiation" nights have a mean wind below 2 m s-1 and a total sky cover never above
3 tenths from sunset to sunrise, and a minimum below the site's cold limit; "cold" nights are all
nights with a minimum below it (10 degC; 15 degC at Miami, where frost never comes); "all" is every
scored night. A class needs 5 nights to be scored. The first two classes are chosen by what the
night did, which the simple methods fitted or averaged on the class exploit and a forecast issued
at dusk cannot: "all" is the comparison free of that selection.

Simple methods, on the same nights, from the hourly rows alone (not from frostwatch's view):
- regression Tmin = b0 + b1 T + b2 Td on the last hourly row at or before sunset + 2 h (the issue
  time), leave-one-out over the class's nights (it sees later nights and knows each night's
  class, so it is a strong reference), and walk-forward (fitted on earlier nights of the class
  only, from the 5th on; earlier nights fall back to the mean drop);
- T - mean drop of the earlier nights of the class (walk-forward);
- for the projection 2 h before the observed minimum: the reading then minus the mean 2-h drop
  before the minimum of the earlier nights of the class (walk-forward). The same at a lead not
  chosen by the outcome, 2 h before sunrise.
In-sample fits on the class (a ceiling no honest forecast reaches) are printed beside them.

Band: the 80 % band [band_low_c, band_high_c]; coverage and the share below its lower edge.
Crossings: for nights whose crop air crosses T10 + margin after sunset, the crossing time projected
3 h and 1 h before it (median and 90th percentile of the absolute error; a projection that does not
cross before sunrise counts as an error of its time to sunrise + 1 h). Events: at dusk, "below
0 degC" and "below T10 + margin" decided from the band's cold edge: probability of detection and
false alarm ratio. Cold start: bias over each site's first 10 scored nights.

Results go to bench/results/forecast_skill.json and are printed.
"""

from __future__ import annotations

import datetime as dt
import json
import os
import resource
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

from bench import tmy

RESULTS = Path(__file__).resolve().parent / "results"
TARGETS = {
    "greensboro": {"radiation_mae_c": 1.3, "cold_mae_c": 1.9, "nowcast_2h_mae_c": 0.7},
    "sand_point": {"nowcast_2h_mae_c": 0.45},
    "abs_bias_c": 0.2, "band_inside": (0.75, 0.85), "band_below_max": 0.12,
    "crossing_3h_median_min": 30.0, "cold_start_abs_bias_c": 0.5, "event_pod_min": 0.95, "event_far_max": 0.25,
}
MIN_CLASS_NIGHTS = 5
COLD_START_NIGHTS = 10


def _iso_s(s: str | None) -> float | None:
    return None if s is None else dt.datetime.fromisoformat(s.replace("Z", "+00:00")).timestamp()


def _stats(pred, obs) -> dict | None:
    pred, obs = np.asarray(pred, float), np.asarray(obs, float)
    ok = np.isfinite(pred) & np.isfinite(obs)
    if not ok.any():
        return None
    e = pred[ok] - obs[ok]
    return {"n": int(ok.sum()), "mae_c": round(float(np.mean(np.abs(e))), 3),
            "rmse_c": round(float(np.sqrt(np.mean(e**2))), 3), "bias_c": round(float(np.mean(e)), 3)}


def loo_regression(t_c, td_c, tmin_c) -> np.ndarray:
    """Leave-one-out least squares Tmin = b0 + b1 T + b2 Td (Allen 1957 form, FAO-FP ch. 5)."""
    x = np.column_stack([np.ones_like(t_c), t_c, td_c])
    out = np.empty_like(tmin_c)
    for k in range(len(tmin_c)):
        m = np.arange(len(tmin_c)) != k
        out[k] = x[k] @ np.linalg.lstsq(x[m], tmin_c[m], rcond=None)[0]
    return out


def walk_forward_regression(t_c, td_c, tmin_c, min_nights: int = 5) -> np.ndarray:
    """The same fitted on earlier nights only; before `min_nights`, T minus the mean earlier drop
    (the first night, with nothing earlier, is not forecast: NaN)."""
    x = np.column_stack([np.ones_like(t_c), t_c, td_c])
    out = np.full_like(tmin_c, np.nan)
    for k in range(1, len(tmin_c)):
        if k >= min_nights:
            out[k] = x[k] @ np.linalg.lstsq(x[:k], tmin_c[:k], rcond=None)[0]
        else:
            out[k] = t_c[k] - np.mean(t_c[:k] - tmin_c[:k])
    return out


def walk_forward_mean_drop(now_c, tmin_c) -> np.ndarray:
    """now - the mean (now - Tmin) of the earlier nights (NaN for the first)."""
    drop = now_c - tmin_c
    csum = np.concatenate([[0.0], np.cumsum(drop)[:-1]])
    k = np.arange(len(drop))
    with np.errstate(invalid="ignore", divide="ignore"):
        return np.where(k > 0, now_c - csum / np.maximum(k, 1), np.nan)


def in_sample(cols, tmin_c) -> np.ndarray:
    x = np.column_stack([np.ones_like(tmin_c)] + list(cols))
    return x @ np.linalg.lstsq(x, tmin_c, rcond=None)[0]


class HourlyView:
    """The site's hourly rows sorted by time, for values known at an instant (no frostwatch code)."""

    def __init__(self, h: tmy.Hourly):
        o = np.argsort(h.time_s, kind="stable")
        self.t = h.time_s[o]
        self.f = {k: v[o] for k, v in h.fields.items()}

    def last_at_or_before(self, field: str, t_s: float) -> float:
        i = int(np.searchsorted(self.t, t_s, side="right")) - 1
        return float(self.f[field][i]) if i >= 0 and t_s - self.t[i] <= 3600.0 else float("nan")

    def crossing_after(self, start_s: float, end_s: float, threshold_c: float) -> float | None:
        """First time in [start, end] the air falls to the threshold (linear between rows), when
        it was above it at `start`."""
        i0 = int(np.searchsorted(self.t, start_s, side="right")) - 1
        i1 = int(np.searchsorted(self.t, end_s, side="right"))
        t, v = self.t[max(i0, 0):i1], self.f["temp_c"][max(i0, 0):i1]
        if len(t) < 2 or v[0] <= threshold_c or np.any(np.diff(t) > 5400):
            return None
        below = np.nonzero(v <= threshold_c)[0]
        if not len(below):
            return None
        j = int(below[0])
        f = (v[j - 1] - threshold_c) / (v[j - 1] - v[j])
        return float(t[j - 1] + f * (t[j] - t[j - 1]))


def run_site(key: str, work: Path) -> dict:
    import pandas as pd

    from frostwatch import backtest as bt
    from frostwatch.commands.logs import _first_rows
    from frostwatch.config import load_config
    from frostwatch.ingest.bulk import read_log_columns
    from frostwatch.store.bulk import series_of_columns

    site = tmy.SITES[key]
    hourly = tmy.read_pvlib(site)
    raw = tmy.read_raw(site)
    agree = bool(np.array_equal(hourly.time_s, raw.time_s)) and all(
        np.array_equal(hourly.fields[f], raw.fields[f], equal_nan=True) for f in tmy.QUANTITIES)
    log, cfg_path, _ = tmy.write_log_and_config(site, work, hourly)
    view = HourlyView(hourly)

    floors, floor_cpus = [], []
    for _ in range(3):
        t, c = time.perf_counter(), time.process_time()
        df = pd.read_csv(log)
        pd.to_datetime(df["time"], format="ISO8601", utc=True)
        floors.append(time.perf_counter() - t)
        floor_cpus.append(time.process_time() - c)
    floor_s, floor_cpu_s = float(np.median(floors)), float(np.median(floor_cpus))

    # load_config imports the modules that check the other sections on its first call: done here,
    # as the imports above are (the figure is a backtest's work; bench.startup times imports)
    load_config(str(cfg_path))
    t = time.perf_counter()
    cpu = time.process_time()
    cfg = load_config(str(cfg_path))
    # as `frostwatch backtest` reads a log (frostwatch.commands.logs): the bulk parse, first value of a key
    cols, rejections = read_log_columns(log, {s.id for s in cfg.stations})
    series = series_of_columns(cols, _first_rows(cols), key_order="file")
    n_readings = len(cols)
    plain = bt.backtest(cfg, series)
    wall_s = time.perf_counter() - t
    cpu_s = time.process_time() - cpu
    process = _process_figures(log, cfg_path)

    block = cfg.blocks[0]
    thr_c = block.kill_10pct_c + block.margin_c

    def probes(night, rec, obs):
        out = {}
        min_s = rec.observed_min_at_utc.timestamp()
        at = min_s - 2 * 3600.0
        out["min2h"] = dt.datetime.fromtimestamp(at, dt.UTC) if at > night.dusk_utc.timestamp() else None
        out["sr2h"] = night.sunrise_utc - dt.timedelta(hours=2)
        tc = view.crossing_after(night.sunset_utc.timestamp(), night.sunrise_utc.timestamp() + 3600.0, thr_c)
        for lead in (3, 1):
            ok = tc is not None and tc - lead * 3600.0 >= night.sunset_utc.timestamp()
            out[f"x{lead}h"] = dt.datetime.fromtimestamp(tc - lead * 3600.0, dt.UTC) if ok else None
        return out

    t = time.perf_counter()
    rows = bt.backtest(cfg, series, probes=probes)
    probe_wall_s = time.perf_counter() - t
    assert [r["predicted_min_c"] for r in rows] == [r["predicted_min_c"] for r in plain]

    # each row's hourly-row view: values at the issue time, class inputs, the observed crossing
    for r in rows:
        issue_s = _iso_s(r["issued_at"])
        r["_t_row"] = view.last_at_or_before("temp_c", issue_s)
        r["_td_row"] = min(view.last_at_or_before("dew_c", issue_s), r["_t_row"])
        p = r["probe_min2h"]
        r["_now2h"] = view.last_at_or_before("temp_c", _iso_s(p["time"])) if p else float("nan")
        sr2 = r["probe_sr2h"]
        r["_now_sr2h"] = view.last_at_or_before("temp_c", _iso_s(sr2["time"])) if sr2 else float("nan")
        low = r.get("band_low_c")
        r["_low"] = low if low is not None else r["predicted_min_c"] - r["band_c"]
        high = r.get("band_high_c")
        r["_high"] = high if high is not None else r["predicted_min_c"] + r["band_c"]
    # 2 h before sunrise the minimum still to come is taken from then to sunrise + 1 h
    for r in rows:
        sr2 = r["probe_sr2h"]
        r["_obs_sr2h"] = float("nan")
        if sr2 is not None:
            s0 = _iso_s(sr2["time"])
            m = (view.t >= s0) & (view.t <= s0 + 3 * 3600.0)
            r["_obs_sr2h"] = float(view.f["temp_c"][m].min()) if m.any() else float("nan")

    a = lambda key_, rs: np.array([r[key_] for r in rs], dtype=float)  # noqa: E731
    cold_below = site.cold_below_c
    classes = {
        "radiation": [r for r in rows if r["observed_min_c"] < cold_below and (r["mean_wind_m_s"] or 0) < 2.0
                      and (r["max_cloud_frac"] or 0) <= 0.3],
        "cold": [r for r in rows if r["observed_min_c"] < cold_below],
        "all": rows,
    }
    out: dict = {
        "site": key, "source": f"pvlib {site.file} ({hourly.name}, {site.kind.upper()})",
        "tuned_on": site.tuned_on, "conversion_agrees_with_raw_parse": agree,
        "readings": n_readings, "rejected_rows": len(rejections), "nights_scored": len(rows),
        "cold_below_c": cold_below, "t10_margin_c": round(thr_c, 2), "classes": {},
    }
    for name, rs in classes.items():
        if len(rs) < MIN_CLASS_NIGHTS:
            continue
        obs = a("observed_min_c", rs)
        t_row, td_row = a("_t_row", rs), a("_td_row", rs)
        c: dict = {"nights": len(rs)}
        c["frostwatch"] = _stats(a("predicted_min_c", rs), obs)
        c["regression_loo"] = _stats(loo_regression(t_row, td_row, obs), obs)
        c["regression_walk_forward"] = _stats(walk_forward_regression(t_row, td_row, obs), obs)
        c["mean_drop_walk_forward"] = _stats(walk_forward_mean_drop(t_row, obs), obs)
        c["in_sample_t_td"] = _stats(in_sample([t_row, td_row], obs), obs)
        c["in_sample_t_td_cloud_wind"] = _stats(
            in_sample([t_row, td_row, a("t0_cloud_frac", rs), a("t0_wind_m_s", rs)], obs), obs)
        # the projection 2 h before the observed minimum, beside the naive drop on the same nights
        nc = [r for r in rs if r["probe_min2h"] is not None]
        if nc:
            o = a("observed_min_c", nc)
            c["projection_2h_before_min"] = _stats([r["probe_min2h"]["predicted_min_c"] for r in nc], o)
            c["naive_2h_before_min"] = _stats(walk_forward_mean_drop(a("_now2h", nc), o), o)
        sr = [r for r in rs if r["probe_sr2h"] is not None and np.isfinite(r["_obs_sr2h"])]
        if sr:
            o = a("_obs_sr2h", sr)
            c["projection_2h_before_sunrise"] = _stats([r["probe_sr2h"]["predicted_min_c"] for r in sr], o)
            c["naive_2h_before_sunrise"] = _stats(walk_forward_mean_drop(a("_now_sr2h", sr), o), o)
        low, high = a("_low", rs), a("_high", rs)
        c["band_inside_frac"] = round(float(np.mean((obs >= low) & (obs <= high))), 3)
        c["band_below_frac"] = round(float(np.mean(obs < low)), 3)
        c["band_width_median_c"] = round(float(np.median(high - low)), 2)
        if nc:
            lo = np.array([_band_edge(r["probe_min2h"], "low") for r in nc])
            hi = np.array([_band_edge(r["probe_min2h"], "high") for r in nc])
            o = a("observed_min_c", nc)
            c["band_2h_inside_frac"] = round(float(np.mean((o >= lo) & (o <= hi))), 3)
            c["band_2h_below_frac"] = round(float(np.mean(o < lo)), 3)
        out["classes"][name] = c
    out["crossings"] = _crossings(rows, view, thr_c)
    out["events"] = {f"below {lbl}": _events(rows, v) for lbl, v in (("0 degC", 0.0), ("T10 + margin", thr_c))}
    first = rows[:COLD_START_NIGHTS]
    learning = [any("learning" in n for n in r.get("notes", ())) for r in first]
    out["cold_start"] = {**(_stats(a("predicted_min_c", first), a("observed_min_c", first)) or {}),
                         "nights_saying_learning": int(sum(learning))}
    out["timing"] = {"backtest_wall_s": round(wall_s, 3), "backtest_cpu_s": round(cpu_s, 3),
                     "pandas_read_floor_s": round(floor_s, 4), "pandas_read_floor_cpu_s": round(floor_cpu_s, 4),
                     "ratio_to_floor": round(wall_s / floor_s, 1) if floor_s > 0 else None, "target_ratio": 3.0,
                     "cpu_ratio_to_floor": round(cpu_s / floor_cpu_s, 1) if floor_cpu_s > 0 else None,
                     "load_average_1min": round(os.getloadavg()[0], 2),
                     "probe_pass_wall_s": round(probe_wall_s, 3), **process}
    return out


def _process_figures(log: Path, cfg_path: Path) -> dict:
    """`frostwatch backtest --json` as a new process beside a process that reads the same CSV
    with pandas (imports included in both), median wall time of 3 each."""
    import subprocess

    def median_wall_cpu(cmd: list[str]) -> tuple[float, float]:
        walls, cpus = [], []
        for _ in range(3):
            t, r = time.perf_counter(), resource.getrusage(resource.RUSAGE_CHILDREN)
            subprocess.run(cmd, check=True, stdout=subprocess.DEVNULL, cwd=log.parent)  # not the checkout: the installed package
            walls.append(time.perf_counter() - t)
            r2 = resource.getrusage(resource.RUSAGE_CHILDREN)
            cpus.append(r2.ru_utime - r.ru_utime + r2.ru_stime - r.ru_stime)
        return float(np.median(walls)), float(np.median(cpus))

    read = (f"import pandas as pd; df = pd.read_csv({str(log)!r}); "
            "pd.to_datetime(df['time'], format='ISO8601', utc=True)")
    floor_s, floor_cpu_s = median_wall_cpu([sys.executable, "-c", read])
    wall_s, cpu_s = median_wall_cpu([sys.executable, "-m", "frostwatch", "backtest", "--config", str(cfg_path), "--json",
                                     str(log)])
    return {"process_wall_s": round(wall_s, 3), "process_pandas_floor_s": round(floor_s, 3),
            "process_ratio_to_floor": round(wall_s / floor_s, 2), "process_cpu_s": round(cpu_s, 3),
            "process_pandas_floor_cpu_s": round(floor_cpu_s, 3), "process_cpu_ratio_to_floor": round(cpu_s / floor_cpu_s, 2)}


def _band_edge(p: dict, side: str) -> float:
    v = p.get(f"band_{side}_c")
    if v is not None:
        return v
    return p["predicted_min_c"] + (-1 if side == "low" else 1) * (p["band_c"] or 0.0)


def _crossings(rows: list[dict], view: HourlyView, thr_c: float) -> dict:
    out = {}
    for lead in (3, 1):
        err_min, err_cold = [], []
        for r in rows:
            p = r.get(f"probe_x{lead}h")
            if p is None:
                continue
            at_s = _iso_s(p["time"])
            actual = at_s + lead * 3600.0
            sunrise_end = view_sunrise_end(r)
            for key_, acc in (("t10_margin", err_min), ("t10_margin_cold_edge", err_cold)):
                x = p["crossings"].get(key_)
                if key_ == "t10_margin_cold_edge" and key_ not in p["crossings"]:
                    continue
                proj = _iso_s(x) if x else sunrise_end
                acc.append((proj - actual) / 60.0)
        e = np.abs(np.array(err_min))
        row = {"n": len(err_min)}
        if len(e):
            row.update(median_abs_min=round(float(np.median(e)), 1), p90_abs_min=round(float(np.percentile(e, 90)), 1),
                       median_signed_min=round(float(np.median(err_min)), 1))
        if err_cold:
            ec = np.array(err_cold)
            row.update(cold_edge_median_signed_min=round(float(np.median(ec)), 1),
                       cold_edge_late_frac=round(float(np.mean(ec > 0)), 3))
        out[f"lead_{lead}h"] = row
    return out


def view_sunrise_end(r: dict) -> float:
    """Sunrise + 1 h of the row's night, from its issue time and observed window (the row keeps
    no sunrise: the observed minimum is at most an hour after it, so take the later of the two)."""
    return max(_iso_s(r["observed_min_at"]), _iso_s(r["issued_at"]) + 6 * 3600.0)


def _pod_far(obs: np.ndarray, warn: np.ndarray) -> tuple[int, int, int, float | None, float | None]:
    hits, misses, fa = int(np.sum(obs & warn)), int(np.sum(obs & ~warn)), int(np.sum(~obs & warn))
    return (hits, misses, fa, round(hits / (hits + misses), 3) if hits + misses else None,
            round(fa / (hits + fa), 3) if hits + fa else None)


def best_far_at_pod(obs: np.ndarray, forecast_c: np.ndarray, threshold_c: float, pod_min: float) -> dict | None:
    """A ceiling for any rule that warns when this forecast is below some level: over levels from
    threshold - 3 to threshold + 6 degC (0.1 degC steps), the lowest false alarm ratio among those
    with a probability of detection >= `pod_min` (chosen after the fact, so no rule does better)."""
    best = None
    for off in np.round(np.arange(-3.0, 6.0001, 0.1), 1):
        _, _, _, pod, far = _pod_far(obs, forecast_c < threshold_c + off)
        if pod is not None and far is not None and pod >= pod_min and (best is None or far < best["far"]):
            best = {"level_minus_threshold_c": float(off), "pod": pod, "far": far}
    return best


def _events(rows: list[dict], threshold_c: float) -> dict:
    obs = np.array([r["observed_min_c"] < threshold_c for r in rows])
    low = np.array([r["_low"] for r in rows])
    hits, misses, fa, pod, far = _pod_far(obs, low < threshold_c)
    pod_min = TARGETS["event_pod_min"]
    return {"events": int(obs.sum()), "hits": hits, "misses": misses, "false_alarms": fa, "pod": pod, "far": far,
            "best_far_cold_edge": best_far_at_pod(obs, low, threshold_c, pod_min),
            "best_far_middle": best_far_at_pod(obs, np.array([r["predicted_min_c"] for r in rows]), threshold_c, pod_min)}


def run(verbose: bool = True, out_dir: Path | None = None, sites: list[str] | None = None) -> dict:
    work = Path(out_dir or tempfile.mkdtemp(prefix="frostwatch-bench-"))
    res = {"about": __doc__.split("\n\n")[0], "targets": TARGETS, "sites": {}}
    for key in sites or list(tmy.SITES):
        res["sites"][key] = run_site(key, work / key)
    RESULTS.mkdir(parents=True, exist_ok=True)
    if sites is None or set(sites) == set(tmy.SITES):
        (RESULTS / "forecast_skill.json").write_text(json.dumps(res, indent=1) + "\n", encoding="utf-8")
    if verbose:
        print_report(res)
    return res


def _cell(s: dict | None) -> str:
    return f"{s['n']:>4} {s['mae_c']:>5.2f} {s['bias_c']:>+6.2f}" if s else f"{'-':>17}"


def print_report(res: dict) -> None:
    methods = [
        ("frostwatch", "frostwatch dusk forecast (walk-forward)"),
        ("regression_loo", "regression on T, Td at issue, leave-one-out"),
        ("regression_walk_forward", "the same, walk-forward"),
        ("mean_drop_walk_forward", "T - mean drop of earlier nights"),
        ("in_sample_t_td", "in-sample T, Td (a ceiling)"),
        ("in_sample_t_td_cloud_wind", "in-sample T, Td, cloud, wind (a ceiling)"),
        ("projection_2h_before_min", "frostwatch 2 h before the minimum"),
        ("naive_2h_before_min", "now - mean 2-h drop of earlier nights"),
        ("projection_2h_before_sunrise", "frostwatch 2 h before sunrise"),
        ("naive_2h_before_sunrise", "now - mean drop to the minimum, same lead"),
    ]
    for s in res["sites"].values():
        cls = s["classes"]
        names = [c for c in ("radiation", "cold", "all") if c in cls]
        print(f"\n{s['source']}{'' if s['tuned_on'] else ' (held out: not used to choose anything)'}: {s['readings']} readings, "
              f"{s['nights_scored']} nights scored; conversion agrees with the raw parse: {s['conversion_agrees_with_raw_parse']}")
        head = "".join(f"{c + ' (' + str(cls[c]['nights']) + ')':>22}" for c in names)
        print(f"{'method (n, MAE, bias in degC)':<46}{head}")
        for mk, label in methods:
            if not any(mk in cls[c] for c in names):
                continue
            print(f"{label:<46}" + "".join(f"{_cell(cls[c].get(mk)):>22}" for c in names))
        for c in names:
            k = cls[c]
            extra = (f"; 2 h before the minimum {k['band_2h_inside_frac']:.0%} inside, {k['band_2h_below_frac']:.0%} below"
                     if "band_2h_inside_frac" in k else "")
            print(f"  80 % band, {c}: dusk {k['band_inside_frac']:.0%} inside, {k['band_below_frac']:.0%} below its "
                  f"lower edge (median width {k['band_width_median_c']} degC){extra}")
        for lead, x in s["crossings"].items():
            if x.get("n"):
                ce = (f"; cold edge median {x['cold_edge_median_signed_min']:+.0f} min, late on {x['cold_edge_late_frac']:.0%}"
                      if "cold_edge_median_signed_min" in x else "")
                print(f"  T10 + margin crossing projected {lead.split('_')[1]} ahead: n={x['n']}, median |error| "
                      f"{x['median_abs_min']:.0f} min, p90 {x['p90_abs_min']:.0f} min (median signed {x['median_signed_min']:+.0f}){ce}")
        for name, e in s["events"].items():
            if e["events"]:
                print(f"  event '{name}' at dusk from the band's cold edge: {e['events']} events, POD {e['pod']}, FAR {e['far']}")
                for what, key in (("cold edge", "best_far_cold_edge"), ("middle", "best_far_middle")):
                    b = e.get(key)
                    if b:
                        print(f"    any level on the {what} (chosen after the fact): lowest FAR with POD >= "
                              f"{TARGETS['event_pod_min']:g} is {b['far']} (POD {b['pod']}, level {b['level_minus_threshold_c']:+.1f} degC)")
        cs = s["cold_start"]
        if cs.get("n"):
            print(f"  cold start (first {cs['n']} nights): bias {cs['bias_c']:+.2f}, MAE {cs['mae_c']:.2f}; "
                  f"{cs['nights_saying_learning']} say the site is still learning")
        t = s["timing"]
        print(f"  backtest of the year in process {t['backtest_wall_s']:.3f} s; pandas floor {t['pandas_read_floor_s']:.4f} s: "
              f"{t['ratio_to_floor']}x (target <= {t.get('target_ratio', 3.0):g}x)")
        if "cpu_ratio_to_floor" in t:
            print(f"    CPU time {t['backtest_cpu_s']:.3f} s against {t['pandas_read_floor_cpu_s']:.4f} s: "
                  f"{t['cpu_ratio_to_floor']}x (load average {t['load_average_1min']})")
        if "process_wall_s" in t:
            print(f"  as a process, `frostwatch backtest --json` {t['process_wall_s']:.2f} s (CPU {t['process_cpu_s']:.2f} s); "
                  f"a pandas process reading the same CSV {t['process_pandas_floor_s']:.2f} s (CPU "
                  f"{t['process_pandas_floor_cpu_s']:.2f} s): {t['process_ratio_to_floor']}x ({t['process_cpu_ratio_to_floor']}x CPU)")
    print(f"\nresults: {RESULTS / 'forecast_skill.json'}")


def main(argv: list[str] | None = None) -> int:
    args = sys.argv[1:] if argv is None else argv
    if (message := tmy.unknown_site(args)) is not None:
        print(message, file=sys.stderr)
        return 2
    run(sites=args or None)
    return 0


if __name__ == "__main__":
    sys.exit(main())
