"""The walk-forward backtest of the dusk forecast (DESIGN.md 1.4): each night's forecast is issued
at sunset + 2 h from readings up to then, with a calibration learned only from earlier nights of
the same log; its observed minimum is taken from the issue time to one hour after sunrise.

A night whose readings do not cover its window (a gap longer than `stale_after_intervals` of
the speaking sensor's intervals, for instance where a log jumps between years) is neither scored
nor learned from.
"""

from __future__ import annotations

import datetime as dt

import numpy as np

from frostwatch import forecast
from frostwatch.config import Config
from frostwatch.forecast import Learner, Series
from frostwatch.forecast.projection import dusk_memo
from frostwatch.night import LOOKBACK, evening_date, nights_of_dates, slice_series
from frostwatch.physics import humidity


def _iso(t: dt.datetime | None) -> str | None:
    return None if t is None else t.isoformat().replace("+00:00", "Z")


def candidate_nights(cfg: Config, series: Series) -> list[dt.date]:
    """Evening dates on which some crop-height air sensor has readings (sorted)."""
    parts = [np.floor(series[(s.id, "air_temperature")][0] / 3600.0) for s in cfg.stations
             if s.role == "crop" and (s.id, "air_temperature") in series]
    if not parts:
        return []
    hours = np.unique(np.concatenate(parts)).astype(np.int64)  # every whole hour with a reading
    tz = cfg.site.tz
    # an evening lasts from local noon to local noon (23 to 25 hours), so a run of consecutive hours
    # meets every evening from its first hour's to its last's: only the runs' ends are converted
    cut = np.flatnonzero(np.diff(hours) != 1)
    firsts, lasts = hours[np.concatenate(([0], cut + 1))].tolist(), hours[np.concatenate((cut, [len(hours) - 1]))].tolist()
    dates: set[dt.date] = set()
    for a, b in zip(firsts, lasts, strict=True):
        d, last = (evening_date(dt.datetime.fromtimestamp(h * 3600.0, dt.UTC), tz) for h in (a, b))
        while d <= last:
            dates.add(d)
            d += dt.timedelta(days=1)
    return sorted(dates)


def backtest(
    cfg: Config, series: Series, progress=None, nowcast_lead_h: float | None = None,
    nowcast_before_sunrise_h: float | None = None, probes=None,
) -> list[dict]:
    """One row per night and block: the dusk forecast against what happened (walk-forward).

    With `nowcast_lead_h`, each row also holds the nowcast made that many hours before the
    observed minimum (when that is after the issue time), with the same calibration, and its
    band. With `nowcast_before_sunrise_h`, the nowcast made that long before sunrise (a lead a
    grower knows in advance, not one chosen by the outcome) as `sunrise_nowcast_*`.

    `probes(night, record, obs_series)`, when given, returns {name: datetime or None}: at each
    time the block is projected again from the readings up to then (same calibration), and the
    row gets `probe_<name>` = `probe_row(projection)` (benchmarks use it for crossing times).
    """
    if not series:
        return []
    # the calibration the daemon's evaluator keeps (pipeline.Evaluator), without the alert rules,
    # advice and display it also carries: a backtest scores the forecast only
    learners = {b.id: Learner(cfg.forecast.calibration_nights) for b in cfg.blocks}
    p_hpa = float(humidity.pressure_hpa_from_elevation(cfg.site.elevation_m))
    rows: list[dict] = []
    nights = candidate_nights(cfg, series)
    night_objs = nights_of_dates(cfg.site.latitude, cfg.site.longitude, cfg.site.tz, nights) if nights else []
    obs_of = [slice_series(series, (n.sunset_utc - LOOKBACK).timestamp(), n.sunrise_utc.timestamp() + 3600.0)
              for n in night_objs]
    # what each night did depends on its own readings only: all worked out first (the physics
    # priors in one pass), each learned only after its own night has been forecast (below)
    records = {b.id: forecast.night_records(b, cfg, list(zip(obs_of, night_objs, strict=True)), p_hpa)
               for b in cfg.blocks}
    for b in cfg.blocks:  # the nights to be learned are known: their ridge fits worked out at once
        learners[b.id].plan([r for r in records[b.id] if r is not None])
    for k, (d, night, obs) in enumerate(zip(nights, night_objs, obs_of, strict=True)):
        issue = night.dusk_utc
        start_s = (night.sunset_utc - LOOKBACK).timestamp()
        window = slice_series(obs, start_s, issue.timestamp())
        for block in cfg.blocks:
            rec = records[block.id][k]
            if rec is None:
                continue
            cal = learners[block.id].calibration()
            # the dusk forecast from the record's own dusk inputs (the same readings up to t0)
            memo = dusk_memo(block.id, rec, night, cal, p_hpa)
            proj = forecast.project_block(issue, block, cfg, window, night, cal, p_hpa, curves=False, memo=memo)
            if proj.predicted_min_c is not None:
                row = {
                    "night": d.isoformat(),
                    "block": block.id,
                    "station": proj.station,
                    "issued_at": _iso(issue),
                    "predicted_min_c": round(proj.predicted_min_c, 2),
                    "observed_min_c": round(rec.observed_min_c, 2),
                    "observed_min_at": _iso(rec.observed_min_at_utc),
                    "band_c": proj.band_c,
                    "band_low_c": proj.band_low_c,
                    "band_high_c": proj.band_high_c,
                    "regime": proj.regime,
                    "radiation_night": rec.radiation_night,
                    "calibration_nights": cal.n_nights,
                    "protected": rec.protected,
                    "t0_temp_c": round(rec.t0_temp_c, 2),
                    "t0_dew_point_c": None if rec.t0_dew_point_c is None else round(rec.t0_dew_point_c, 2),
                    "t0_wind_m_s": None if rec.t0_wind_m_s is None else round(rec.t0_wind_m_s, 2),
                    "t0_cloud_frac": None if rec.t0_cloud_frac is None else round(rec.t0_cloud_frac, 2),
                    "mean_wind_m_s": None if rec.mean_wind_m_s is None else round(rec.mean_wind_m_s, 2),
                    "max_cloud_frac": None if rec.max_cloud_frac is None else round(rec.max_cloud_frac, 2),
                    "method": proj.method,
                    "notes": list(proj.notes),
                }
                if nowcast_lead_h is not None:
                    at = rec.observed_min_at_utc - dt.timedelta(hours=nowcast_lead_h)
                    nc = band = None
                    if at > issue:
                        now_win = slice_series(obs, start_s, at.timestamp())
                        pn = forecast.project_block(at, block, cfg, now_win, night, cal, p_hpa)
                        nc, band = pn.predicted_min_c, pn.band_c
                    row["nowcast_issued_at"] = _iso(at) if nc is not None else None
                    row["nowcast_min_c"] = nc
                    row["nowcast_band_c"] = band
                if nowcast_before_sunrise_h is not None:
                    at = night.sunrise_utc - dt.timedelta(hours=nowcast_before_sunrise_h)
                    pn = None
                    if at > issue:
                        now_win = slice_series(obs, start_s, at.timestamp())
                        pn = forecast.project_block(at, block, cfg, now_win, night, cal, p_hpa)
                    row["sunrise_nowcast_min_c"] = None if pn is None else pn.predicted_min_c
                    row["sunrise_nowcast_band_c"] = None if pn is None else pn.band_c
                if probes is not None:
                    for name, at in probes(night, rec, obs).items():
                        pn = None
                        if at is not None:
                            now_win = slice_series(obs, start_s, at.timestamp())
                            pn = forecast.project_block(at, block, cfg, now_win, night, cal, p_hpa)
                        row[f"probe_{name}"] = None if pn is None else probe_row(pn)
                rows.append(row)
            # walk-forward: the night joins the history only after it has been forecast
            learners[block.id].learn(rec)
        if progress:
            progress(k + 1, len(nights))
    return rows


def probe_row(p) -> dict:
    """The parts of a projection a benchmark scores: minimum, band edges, crossings."""
    return {
        "time": _iso(p.time_utc),
        "predicted_min_c": p.predicted_min_c,
        "band_c": p.band_c,
        "band_low_c": getattr(p, "band_low_c", None),
        "band_high_c": getattr(p, "band_high_c", None),
        "method": p.method,
        "crossings": {k: _iso(v) for k, v in p.crossings_utc.items()},
    }


def _errors(rows: list[dict]) -> dict:
    if not rows:
        return {"nights": 0, "forecasts": 0, "mae_c": None, "bias_c": None, "rmse_c": None}
    err = np.array([r["predicted_min_c"] - r["observed_min_c"] for r in rows])
    return {
        "nights": len({r["night"] for r in rows}),
        "forecasts": len(rows),
        "mae_c": round(float(np.mean(np.abs(err))), 3),
        "bias_c": round(float(np.mean(err)), 3),
        "rmse_c": round(float(np.sqrt(np.mean(err**2))), 3),
    }


def backtest_summary(rows: list[dict]) -> dict:
    """MAE, bias and RMSE over the rows whose block ran no protection, and over the radiation nights
    among them. Where sprinklers or wind machines ran, the block's own sensors read the protected
    air, not the night the forecast was for, so those rows are counted (`protected_forecasts`) and
    left out of the scores (as they are left out of the learning)."""
    scored = [r for r in rows if not r.get("protected")]
    out = _errors(scored)
    out["protected_forecasts"] = len(rows) - len(scored)
    out["radiation_nights"] = _errors([r for r in scored if r.get("radiation_night")])
    return out
