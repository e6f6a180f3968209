"""The season summary: every stored night of a year, per block and in total (grower-needs E1, B6).

Nights, alerts per level, nights acted on (protection ran, from running sensors or acknowledged
alerts), nights below T10 per block, the dusk forecast's skill through the season (from the
stored projections: the first one issued at or after dusk against the observed minimum), water
and run hours. Writes `season-YYYY.html`, `season-YYYY-nights.csv` and `season-YYYY-blocks.csv`.

Raises `UsageError` when the store holds no night of that year.
"""

from __future__ import annotations

import csv
import datetime as dt
import html
from collections import Counter
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from frostwatch.advice.render import GENERAL_CAUTIONS as CAUTIONS
from frostwatch.alerts.levels import level_name, rank_of
from frostwatch.config import Config
from frostwatch.display import Display
from frostwatch.errors import UsageError
from frostwatch.night import evening_date, night_of_date
from frostwatch.pipeline import LOOKBACK
from frostwatch.reports.render import PAGE_CSS, level_span
from frostwatch.reports.settings import report_settings
from frostwatch.reports.summary import block_night, runs_from_acks
from frostwatch.reports.thermometers import offset_check, season_table
from frostwatch.store import Store, from_ms
from frostwatch.store import reports as q

e = html.escape


@dataclass
class Season:
    year: int
    nights: list[dt.date]
    rows: list[dict]  # one per night and block
    alerts_per_level: dict[str, int]
    alert_nights_act: int  # nights with an act or critical alert
    nights_acted_on: int  # nights on which protection ran somewhere


def _nights_in_year(cfg: Config, store: Store, year: int) -> list[dt.date]:
    tz = cfg.site.tz
    start = dt.datetime(year, 1, 1, 12, tzinfo=tz).astimezone(dt.UTC)
    end = dt.datetime(year + 1, 1, 1, 12, tzinfo=tz).astimezone(dt.UTC)
    hours = q.nights_with_readings(store, start, end)
    nights = set()
    for ms in hours:
        t = from_ms(ms)
        local = t.astimezone(tz)
        if local.hour >= 18 or local.hour < 7:  # a reading in the night's hours names that night
            nights.add(evening_date(t, tz))
    return sorted(d for d in nights if d.year == year)


def season_summary(cfg: Config, store: Store, year: int) -> Season:
    settings = report_settings(cfg)
    nights = _nights_in_year(cfg, store, year)
    if not nights:
        raise UsageError(f"{store.path}: no night of {year} has readings in the store; replay or ingest that season first")
    rows: list[dict] = []
    levels: Counter[str] = Counter()
    act_nights = acted = 0
    for d in nights:
        night = night_of_date(cfg.site.latitude, cfg.site.longitude, cfg.site.tz, d)
        end = night.sunrise_utc + dt.timedelta(hours=6)
        series = store.readings_window(night.sunset_utc - LOOKBACK, end)
        alerts = store.alerts(night.sunset_utc - dt.timedelta(hours=2), end)
        levels.update(level_name(a["level"]) for a in alerts)
        if any(a["rank"] >= rank_of("protect") for a in alerts):
            act_nights += 1
        acks = q.acks_for(store, [a["key"] for a in alerts])
        ran = False
        for b in cfg.blocks:
            ack_runs = runs_from_acks([a for a in alerts if a["block"] == b.id], acks,
                                      night.sunrise_utc + dt.timedelta(hours=2)) if b.protection != "none" else None
            bn = block_night(b, cfg, series, night, ack_runs=ack_runs, energy_kw=settings.energy_kw.get(b.id))
            projs = [p for p in store.projections(night.dusk_utc, night.sunrise_utc, b.id) if p["predicted_min_c"] is not None]
            dusk_c = projs[0]["predicted_min_c"] if projs else None
            ran = ran or bn.run_hours > 0
            rows.append({
                "night": d.isoformat(), "block": b.id, "station": bn.station or "",
                "kill_10pct_c": round(bn.kill_10pct_c, 2), "min_c": None if bn.min_c is None else round(bn.min_c, 2),
                "minutes_below_t10": bn.minutes_below_t10, "minutes_below_t90": bn.minutes_below_t90,
                "below_t10": bool(bn.min_c is not None and bn.min_c <= bn.kill_10pct_c),
                "dusk_forecast_c": None if dusk_c is None else round(dusk_c, 2),
                "forecast_error_c": None if (dusk_c is None or bn.min_c is None) else round(dusk_c - bn.min_c, 2),
                "max_alert": max((level_name(a["level"]) for a in alerts if a["block"] == b.id), key=rank_of,
                                 default=""),
                "protection_hours": round(bn.run_hours, 2),
                "water_m3": None if bn.water_m3 is None else round(bn.water_m3, 1),
                "fuel_l": None if bn.fuel_l is None else round(bn.fuel_l, 1),
                "energy_kwh": None if bn.energy_kwh is None else round(bn.energy_kwh, 1),
                # a night the block's protection ran: its sensors read the protected air, not the
                # night that was forecast (as the backtest and the learning leave it out)
                "forecast_scored": dusk_c is not None and bn.min_c is not None and bn.run_hours == 0,
            })
        acted += ran
    return Season(year, nights, rows, dict(levels), act_nights, acted)


def block_totals(season: Season, cfg: Config) -> list[dict]:
    out = []
    for b in cfg.blocks:
        rs = [r for r in season.rows if r["block"] == b.id]
        errs = np.array([r["forecast_error_c"] for r in rs if r["forecast_scored"]], dtype=float)
        out.append({
            "year": season.year, "block": b.id, "nights": len(rs),
            "nights_below_t10": sum(r["below_t10"] for r in rs),
            "minutes_below_t10": round(sum(r["minutes_below_t10"] for r in rs), 1),
            "season_min_c": min((r["min_c"] for r in rs if r["min_c"] is not None), default=None),
            "forecasts": int(errs.size),
            "forecasts_not_scored": sum(r["forecast_error_c"] is not None and not r["forecast_scored"] for r in rs),
            "forecast_mae_c": round(float(np.mean(np.abs(errs))), 2) if errs.size else None,
            "forecast_bias_c": round(float(np.mean(errs)), 2) if errs.size else None,
            "nights_protected": sum(r["protection_hours"] > 0 for r in rs),
            "protection_hours": round(sum(r["protection_hours"] for r in rs), 2),
            "water_m3": round(sum(r["water_m3"] or 0.0 for r in rs), 1) if any(r["water_m3"] is not None for r in rs) else None,
            "fuel_l": round(sum(r["fuel_l"] or 0.0 for r in rs), 1) if any(r["fuel_l"] is not None for r in rs) else None,
        })
    return out


NIGHT_COLUMNS = ["night", "block", "station", "kill_10pct_c", "min_c", "minutes_below_t10", "minutes_below_t90",
                 "below_t10", "dusk_forecast_c", "forecast_error_c", "max_alert", "protection_hours", "water_m3",
                 "fuel_l", "energy_kwh", "forecast_scored"]
TOTAL_COLUMNS = ["year", "block", "nights", "nights_below_t10", "minutes_below_t10", "season_min_c", "forecasts",
                 "forecast_mae_c", "forecast_bias_c", "nights_protected", "protection_hours", "water_m3", "fuel_l",
                 "forecasts_not_scored"]
THERMOMETER_COLUMNS = ["year", "station", "role", "offset_k", "windy_hours", "days", "flagged"]


def write_season_report(cfg: Config, store: Store, year: int, out_dir: Path) -> Path:
    season = season_summary(cfg, store, year)
    totals = block_totals(season, cfg)
    out_dir.mkdir(parents=True, exist_ok=True)
    stem = f"season-{year}"
    for name, cols, rows in ((f"{stem}-nights.csv", NIGHT_COLUMNS, season.rows), (f"{stem}-blocks.csv", TOTAL_COLUMNS, totals)):
        with (out_dir / name).open("w", newline="", encoding="utf-8") as f:
            w = csv.DictWriter(f, fieldnames=cols)
            w.writeheader()
            w.writerows(rows)
    page = out_dir / f"{stem}.html"
    tz = cfg.site.tz  # every day of the year counts: the windy hours are mostly days, not nights
    offsets = offset_check(cfg, store, dt.datetime(year, 1, 1, tzinfo=tz).astimezone(dt.UTC),
                           dt.datetime(year + 1, 1, 1, tzinfo=tz).astimezone(dt.UTC))
    with (out_dir / f"{stem}-thermometers.csv").open("w", newline="", encoding="utf-8") as f:
        w = csv.DictWriter(f, fieldnames=THERMOMETER_COLUMNS)
        w.writeheader()
        w.writerows({"year": year, "station": x.station, "role": x.role,
                     "offset_k": None if x.offset_k is None else round(x.offset_k, 2), "windy_hours": x.hours,
                     "days": x.days, "flagged": x.flagged} for x in offsets.sensors)
    page.write_text(_season_html(cfg, season, totals, stem, season_table(offsets, Display(cfg.site.display_unit,
                                                                                            cfg.site.tz))),
                    encoding="utf-8")
    return page


def _m3(v: float | None, d: Display) -> str:
    return "" if v is None else d.water(v)


def _not_scored(row: dict) -> str:
    """The mark of a night's forecast error that the block's totals leave out."""
    if row["forecast_error_c"] is None or row["forecast_scored"]:
        return ""
    return "<br><span class='note'>protection ran: not scored</span>"


def _season_html(cfg: Config, s: Season, totals: list[dict], stem: str, thermometers: str = "") -> str:
    d = Display(cfg.site.display_unit, cfg.site.tz)
    lv = sorted(s.alerts_per_level.items(), key=lambda kv: -rank_of(kv[0]))
    lv_rows = "".join(f"<tr><td>{level_span(k)}</td><td class='num'>{n}</td></tr>" for k, n in lv) or \
        "<tr><td colspan=2>no alerts</td></tr>"
    t_rows = "".join(
        f"<tr><td>{e(t['block'])}</td><td class='num'>{t['nights_below_t10']}</td>"
        f"<td class='num'>{d.temp(t['season_min_c'])}</td>"
        f"<td class='num'>{d.delta(t['forecast_mae_c'])}</td><td class='num'>{d.delta(t['forecast_bias_c'])}</td>"
        f"<td class='num'>{t['protection_hours']:.1f} h</td>"
        f"<td class='num'>{_m3(t['water_m3'], d)}</td></tr>"
        for t in totals
    )
    n_rows = "".join(
        f"<tr><td>{r['night']}</td><td>{e(r['block'])}</td><td class='num'>{d.temp(r['min_c'])}</td>"
        f"<td class='num'>{r['minutes_below_t10']:.0f}</td><td class='num'>{d.temp(r['dusk_forecast_c'])}</td>"
        f"<td class='num'>{d.delta(r['forecast_error_c'])}{_not_scored(r)}</td>"
        f"<td>{level_span(r['max_alert']) if r['max_alert'] else ''}</td>"
        f"<td class='num'>{r['protection_hours']:.1f}</td></tr>"
        for r in s.rows
    )
    cautions = "".join(f"<li>{e(c)}</li>" for c in CAUTIONS)
    return f"""<!doctype html>
<html lang="en"><head><meta charset="utf-8"><meta name="viewport" content="width=device-width, initial-scale=1">
<title>{e(cfg.site.name)}: frost season {s.year}</title><style>{PAGE_CSS}</style></head><body>
<h1>{e(cfg.site.name)}: frost season {s.year}</h1>
<table class="kv" id="season"><tr><th>nights recorded</th><td>{len(s.nights)} ({s.nights[0]} to {s.nights[-1]})</td></tr>
<tr><th>nights with a protect or all-hands alert</th><td>{s.alert_nights_act}</td></tr>
<tr><th>nights protection ran (acted on)</th><td>{s.nights_acted_on}</td></tr></table>
<h2>Alerts per level</h2><table id="levels"><tr><th>level</th><th>alerts</th></tr>{lv_rows}</table>
<h2>Per block</h2>
<div class="scroll"><table id="block-totals"><tr><th>block</th><th>nights below T10</th><th>season minimum</th>
<th>forecast error (mean absolute)</th><th>forecast bias</th><th>protection</th><th>water</th></tr>{t_rows}</table></div>
<p class="note">Forecast error: the first projection at or after dusk (sunset + 2 h) minus the observed minimum;
a negative bias means the forecasts ran colder than the nights. A night a block's protection ran is
listed but not scored: its sensors read the protected air, not the night that was forecast. Data:
<a href="{stem}-nights.csv">per night (CSV)</a> · <a href="{stem}-blocks.csv">per block (CSV)</a> ·
<a href="{stem}-thermometers.csv">thermometers (CSV)</a>.</p>
<h2>Night by night</h2>
<div class="scroll"><table id="nights"><tr><th>night</th><th>block</th><th>minimum</th><th>min. below T10</th>
<th>dusk forecast</th><th>error</th><th>highest alert</th><th>protection h</th></tr>{n_rows}</table></div>
{thermometers}
<h2>Cautions</h2><ul>{cautions}</ul>
</body></html>
"""
