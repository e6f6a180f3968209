"""The night log for a farm manager: an HTML page (no internet needed), PNG plots and CSVs.

Raises `UsageError` when the night has no readings in the store.
"""

from __future__ import annotations

import csv
import datetime as dt
import html
import json
from pathlib import Path

from frostwatch.advisor import CAUTIONS
from frostwatch.config import Config
from frostwatch.display import Display
from frostwatch.errors import UsageError
from frostwatch.night import night_of_date
from frostwatch.pipeline import LOOKBACK
from frostwatch.reports.plots import plot_block_night
from frostwatch.reports.summary import BlockNight, block_night
from frostwatch.store import Store, from_ms

INSURANCE_NOTICE_H = 72  # usual crop-insurance notice period after discovering a loss (grower-needs I1)


def write_night_report(cfg: Config, store: Store, evening: dt.date, out_dir: Path) -> Path:
    """Write `night-YYYY-MM-DD.html`, one PNG per block and two CSVs into `out_dir`; return the HTML path."""
    d = Display(cfg.site.display_unit, cfg.site.tz)
    night = night_of_date(cfg.site.latitude, cfg.site.longitude, cfg.site.tz, evening)
    start = night.sunset_utc - LOOKBACK
    end = night.sunrise_utc + dt.timedelta(hours=6)
    series = store.readings_window(start, end)
    if not series:
        raise UsageError(
            f"{store.path}: no readings stored for the night of {evening} "
            f"({d.datetime(start)} to {d.datetime(end)}); replay or ingest that night first"
        )
    out_dir.mkdir(parents=True, exist_ok=True)
    stem = f"night-{evening.isoformat()}"
    alerts = store.alerts(night.sunset_utc - dt.timedelta(hours=2), end)
    events = store.events(start, end, kind="health")
    figures: list[BlockNight] = []
    sections = []
    for block in cfg.blocks:
        bn = block_night(block, cfg, series, night)
        figures.append(bn)
        projs = store.projections(night.sunset_utc, night.sunrise_utc, block.id)
        proj_dicts = [
            {"time": from_ms(p["time_utc_ms"]).isoformat(), "predicted_min_c": p["predicted_min_c"], "band_c": p["band_c"]}
            for p in projs if p["predicted_min_c"] is not None
        ]
        dusk = [p for p in projs if p["time_utc_ms"] >= int(night.dusk_utc.timestamp() * 1000)]
        dusk_c = dusk[0]["predicted_min_c"] if dusk else None
        png = out_dir / f"{stem}-{block.id}.png"
        plot_block_night(png, block, cfg, series, night, d, proj_dicts, dusk_c)
        sections.append((bn, png.name, dusk_c))
    csv_path = out_dir / f"{stem}-blocks.csv"
    with csv_path.open("w", newline="") as f:
        w = csv.writer(f)
        w.writerow(["night", "block", "crop", "stage", "station", "kill_10pct_c", "kill_90pct_c", "min_c", "min_at",
                    "minutes_below_t10", "minutes_below_t90", "dusk_forecast_c", "forecast_error_c",
                    "protection_hours", "water_m3", "peak_flow_l_s", "fuel_l"])
        for bn, _, dusk_c in sections:
            err = None if (dusk_c is None or bn.min_c is None) else round(dusk_c - bn.min_c, 2)
            w.writerow([evening.isoformat(), bn.block, bn.crop, bn.stage, bn.station, bn.kill_10pct_c, bn.kill_90pct_c,
                        None if bn.min_c is None else round(bn.min_c, 2),
                        bn.min_at_utc.isoformat() if bn.min_at_utc else "", bn.minutes_below_t10, bn.minutes_below_t90,
                        dusk_c, err, round(sum(r.hours for r in bn.runs), 2),
                        None if bn.water_m3 is None else round(bn.water_m3, 1),
                        None if bn.peak_flow_l_s is None else round(bn.peak_flow_l_s, 2),
                        None if bn.fuel_l is None else round(bn.fuel_l, 1)])
    water_path = out_dir / f"{stem}-water.csv"
    with water_path.open("w", newline="") as f:
        w = csv.writer(f)
        w.writerow(["night", "zone", "start", "stop", "hours", "application_rate_mm_h", "area_ha", "volume_m3", "peak_flow_l_s"])
        for bn, _, _ in sections:
            b = cfg.block(bn.block)
            if b.protection not in ("overtree_sprinkler", "undertree_sprinkler") or not b.application_rate_mm_h or not b.area_ha:
                continue
            for r in bn.runs:
                vol = b.application_rate_mm_h * b.area_ha * 10.0 * r.hours
                w.writerow([evening.isoformat(), b.id, r.start_utc.isoformat(), r.stop_utc.isoformat() if r.stop_utc else "",
                            round(r.hours, 2), b.application_rate_mm_h, b.area_ha, round(vol, 1),
                            round(b.application_rate_mm_h * b.area_ha * 10.0 / 3.6, 2)])
    page = out_dir / f"{stem}.html"
    page.write_text(_html(cfg, d, night, sections, alerts, events, csv_path.name, water_path.name), encoding="utf-8")
    (out_dir / f"{stem}.json").write_text(json.dumps({
        "night": evening.isoformat(),
        "blocks": [{"block": bn.block, "min_c": bn.min_c, "min_at": bn.min_at_utc.isoformat() if bn.min_at_utc else None,
                    "minutes_below_t10": bn.minutes_below_t10, "minutes_below_t90": bn.minutes_below_t90,
                    "water_m3": bn.water_m3} for bn, _, _ in sections],
    }, indent=2))
    return page


def _html(cfg, d: Display, night, sections, alerts, events, csv_name, water_name) -> str:
    e = html.escape
    rows = []
    loss_notes = []
    for bn, png, dusk_c in sections:
        err = "" if (dusk_c is None or bn.min_c is None) else d.delta(dusk_c - bn.min_c)
        runs = ", ".join(f"{d.time(r.start_utc)}–{d.time(r.stop_utc)}" for r in bn.runs) or "none recorded"
        rows.append(
            f"<tr><td>{e(bn.block)}</td><td>{e(bn.crop)}, {e(bn.stage)}</td><td>{e(str(bn.station))}</td>"
            f"<td>{d.temp(bn.min_c)}</td><td>{d.time(bn.min_at_utc)}</td><td>{bn.minutes_below_t10:.0f}</td>"
            f"<td>{bn.minutes_below_t90:.0f}</td><td>{d.temp(dusk_c)}</td><td>{err}</td><td>{e(runs)}</td>"
            f"<td>{'' if bn.water_m3 is None else f'{bn.water_m3:.0f} m³'}</td></tr>"
        )
        if bn.min_c is not None and bn.min_c <= bn.kill_10pct_c:
            deadline = night.sunrise_utc + dt.timedelta(hours=int(cfg.report.get("insurance_notice_h", INSURANCE_NOTICE_H)))
            loss_notes.append(
                f"<li><b>Possible loss in block {e(bn.block)}</b>: {bn.minutes_below_t10:.0f} min at or below T10 "
                f"({d.temp(bn.kill_10pct_c)}), minimum {d.temp(bn.min_c)}. If you carry crop insurance, notice is "
                f"usually due within {cfg.report.get('insurance_notice_h', INSURANCE_NOTICE_H)} h of discovery: by "
                f"{d.datetime(deadline)} at the latest. Assess buds tomorrow: cut about 100 buds across the block after "
                f"they have warmed for 2 hours or more at room temperature, and count brown (dead) pistils.</li>"
            )
    alert_rows = "".join(
        f"<tr><td>{d.time(from_ms(a['time_utc_ms']))}</td><td>{e(a['block'])}</td><td>{e(a['level'])}</td>"
        f"<td>{a['rank']}</td><td>{e(a['message'].splitlines()[0])}</td></tr>"
        for a in alerts
    ) or "<tr><td colspan=5>no alerts</td></tr>"
    incident_rows = "".join(
        f"<li>{d.time(from_ms(ev['time_utc_ms']))} {e(ev['subject'] or '')}: {e(ev['detail'] or '')}</li>" for ev in events
    ) or "<li>none recorded</li>"
    figs = "".join(f'<figure><img src="{e(png)}" alt="block {e(bn.block)} night plot" style="max-width:100%"></figure>'
                   for bn, png, _ in sections)
    cautions = "".join(f"<li>{e(c)}</li>" for c in CAUTIONS)
    return f"""<!doctype html>
<html lang="en"><head><meta charset="utf-8"><meta name="viewport" content="width=device-width, initial-scale=1">
<title>{e(cfg.site.name)}: night of {night.date}</title>
<style>body{{font-family:sans-serif;margin:1em;max-width:70em}}table{{border-collapse:collapse}}
td,th{{border:1px solid #bbb;padding:3px 6px;font-size:90%}}th{{background:#eee}}.loss{{background:#fee;padding:.5em}}</style>
</head><body>
<h1>{e(cfg.site.name)}: night of {night.date}</h1>
<p>Sunset {d.time(night.sunset_utc)}, sunrise {d.time(night.sunrise_utc)} ({e(cfg.site.timezone)}). Temperatures in {d.symbol}.</p>
<h2>Blocks</h2>
<table id="blocks"><tr><th>block</th><th>crop, stage</th><th>coldest sensor</th><th>minimum</th><th>at</th>
<th>min below T10</th><th>min below T90</th><th>dusk forecast</th><th>forecast error</th><th>protection ran</th><th>water</th></tr>
{''.join(rows)}</table>
<p>Data: <a href="{e(csv_name)}">block table (CSV)</a>, <a href="{e(water_name)}">water use per zone (CSV)</a>.</p>
{'<div class="loss"><ul>' + ''.join(loss_notes) + '</ul></div>' if loss_notes else '<p>No block went below its T10.</p>'}
<h2>Plots</h2>{figs}
<h2>Alerts</h2><table id="alerts"><tr><th>time</th><th>block</th><th>level</th><th>rank</th><th>message</th></tr>{alert_rows}</table>
<h2>Sensor incidents</h2><ul>{incident_rows}</ul>
<h2>Cautions</h2><ul>{cautions}</ul>
</body></html>
"""
