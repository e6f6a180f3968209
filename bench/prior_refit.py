"""The clear-night prior's one constant (the air layer's effective admittance) refitted on the open
typical years, with held-out checks (issue 16: one saturation formula everywhere, the constant
refitted and the figures rerun).

    python -m bench.prior_refit

Fit set: Greensboro TMY3 nights that stayed clear and calm all night (mean wind below 2 m s-1,
total cloud never above 3 tenths, sunset to sunrise), the prior's own ground, with its inputs as
a forecast at t0 saw them; split into odd and even nights (fit on one, check on the other).
Held out: the FAO-FP ch. 5 ten-night sample (reference sheet 1.1, 12 h assumed), Sand Point and
Miami nights of the same kind, and every site's nights that were clear and calm at t0 (where the
forecast blends the prior in). Prints MAE/bias (degC) per constant; writes
bench/results/prior_refit.json.
"""

from __future__ import annotations

import json
import tempfile
from pathlib import Path

import numpy as np

from bench import tmy

RESULTS = Path(__file__).resolve().parent / "results"
GRID = tuple(range(900, 2001, 100))
FAO = [(3.2, -4.2, -3.1), (0.8, -8.8, -5.0), (0.2, -6.5, -6.3), (2.6, -6.2, -5.4), (4.4, -6.1, -4.0),
       (5.2, 2.6, -2.5), (2.7, -0.7, -4.8), (1.2, -1.7, -5.0), (4.5, -1.2, -4.4), (5.6, 0.1, -3.3)]


def night_inputs(key: str) -> tuple[np.ndarray, np.ndarray, float]:
    """(clear calm all night, clear calm at t0) rows of T0, Td0, hours, wind0, cloud0, Tmin."""
    from frostwatch import forecast
    from frostwatch.backtest import candidate_nights
    from frostwatch.commands.logs import _first_rows
    from frostwatch.config import load_config
    from frostwatch.ingest.bulk import read_log_columns
    from frostwatch.pipeline import LOOKBACK, Evaluator, slice_series
    from frostwatch.store.bulk import series_of_columns

    site = tmy.SITES[key]
    log, cfg_path, _ = tmy.write_log_and_config(site, Path(tempfile.mkdtemp(prefix="fw-prior-")))
    cfg = load_config(str(cfg_path))
    cols, _ = read_log_columns(log, {s.id for s in cfg.stations})
    series = series_of_columns(cols, _first_rows(cols), key_order="file")
    ev = Evaluator(cfg)
    whole, dusk = [], []
    for d in candidate_nights(cfg, series):
        night = ev.night(d)
        win = slice_series(series, (night.sunset_utc - LOOKBACK).timestamp(), night.sunrise_utc.timestamp() + 3600.0)
        rec = forecast.night_record(cfg.blocks[0], cfg, win, night, ev.pressure_hpa)
        if rec is None or rec.t0_dew_point_c is None:
            continue
        row = (rec.t0_temp_c, rec.t0_dew_point_c, max(0.25, rec.hours_to_sunrise), rec.t0_wind_m_s or 0.0,
               rec.t0_cloud_frac or 0.0, rec.observed_min_c)
        if rec.mean_wind_m_s is not None and rec.mean_wind_m_s < 2.0 and (rec.max_cloud_frac or 0.0) <= 0.3:
            whole.append(row)
        if (rec.t0_cloud_frac or 0.0) <= 0.3 and (rec.t0_wind_m_s or 0.0) <= 2.5:
            dusk.append(row)
    return np.array(whole), np.array(dusk), ev.pressure_hpa


def score(constant: float, rows: np.ndarray, pressure_hpa: float) -> dict:
    from frostwatch.physics import clear_night_prior, night_energy_balance

    old = clear_night_prior.AIR_ADMITTANCE_EFFECTIVE_J_M2_K_S05
    clear_night_prior.AIR_ADMITTANCE_EFFECTIVE_J_M2_K_S05 = night_energy_balance.AIR_ADMITTANCE_EFFECTIVE_J_M2_K_S05 = constant
    try:
        pr = clear_night_prior.clear_night_minimum_prior_c(rows[:, 0], rows[:, 1], rows[:, 2], rows[:, 3], rows[:, 4], pressure_hpa)
    finally:
        clear_night_prior.AIR_ADMITTANCE_EFFECTIVE_J_M2_K_S05 = night_energy_balance.AIR_ADMITTANCE_EFFECTIVE_J_M2_K_S05 = old
    e = np.asarray(pr, dtype=float) - rows[:, 5]
    e = e[np.isfinite(e)]
    return {"n": int(len(e)), "mae_c": round(float(np.mean(np.abs(e))), 3), "bias_c": round(float(np.mean(e)), 3)}


def run(verbose: bool = True) -> dict:
    fao = np.array([(t0, td, 12.0, 0.0, 0.0, tn) for t0, td, tn in FAO])
    sets: dict[str, tuple[np.ndarray, float]] = {}
    for key in tmy.SITES:
        whole, dusk, p = night_inputs(key)
        sets[f"{key} clear calm all night"] = (whole, p)
        sets[f"{key} clear calm at t0"] = (dusk, p)
    g, p = sets["greensboro clear calm all night"]
    sets = {"fit: greensboro odd nights": (g[0::2], p), "check: greensboro even nights": (g[1::2], p),
            "fit: greensboro all of them": (g, p), **{f"held out: {k}": v for k, v in sets.items() if k != "greensboro clear calm all night"},
            "held out: FAO-FP ch. 5 sample": (fao, 1013.25)}
    table = {str(c): {name: score(c, rows, pr) for name, (rows, pr) in sets.items()} for c in GRID}
    res = {"about": __doc__.split("\n\n")[0], "grid": table}
    RESULTS.mkdir(parents=True, exist_ok=True)
    (RESULTS / "prior_refit.json").write_text(json.dumps(res, indent=1) + "\n", encoding="utf-8")
    if verbose:
        names = list(next(iter(table.values())))
        print("constant  " + " | ".join(names))
        for c, row in table.items():
            print(f"{c:>8}  " + " | ".join(f"{row[n]['n']} {row[n]['mae_c']:.2f}/{row[n]['bias_c']:+.2f}" for n in names))
    return res


if __name__ == "__main__":
    run()
