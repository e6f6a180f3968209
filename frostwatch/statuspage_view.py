"""What the status page shows: the daemon's stored decisions, as `frostwatch status` shows them.

    snap = snapshot(cfg, store, now_utc)      # reads the store only
    html = render_page(snap, refresh_s)       # snap["doc"] is what GET /status.json serves

Nothing here computes advice: each card is the block's newest stored decision (level, step,
headline, action, projection) through `frostwatch.status.decision_json`, with tonight's readings for
the chart. A block nobody is watching is a grey card with a red edge, "NOT MONITORED since
HH:MM: why", never green and never "no alert"; the header says when the daemon stopped and how
old the page's data are.
"""

from __future__ import annotations

import datetime as dt
import html

from frostwatch.advice.codec import parse_utc
from frostwatch.advice.message import compose
from frostwatch.advice.render import GENERAL_CAUTIONS, Notice, level_word
from frostwatch.alerts.levels import LEVELS, level_name, step_for_level
from frostwatch.config import Config
from frostwatch.display import Display
from frostwatch.night import night_at
from frostwatch.pipeline import LOOKBACK
from frostwatch.status import decisions_for_page, status_document
from frostwatch.store import Store, from_ms
from frostwatch.store import reports as q
from frostwatch.units import c_to_f

e = html.escape


def snapshot(cfg: Config, store: Store, now_utc: dt.datetime) -> dict:
    """The page's figures at `now_utc` from the store: the status document, the decisions behind
    it, tonight's crop-height readings for the charts, the alerts and acknowledgements, incidents."""
    doc = status_document(cfg, store, now_utc)
    decisions = decisions_for_page(cfg, store, now_utc)
    d = Display(cfg.site.display_unit, cfg.site.tz)
    night = night_at(cfg.site.latitude, cfg.site.longitude, cfg.site.tz, now_utc)
    crop = [s.id for s in cfg.stations if s.role == "crop" and s.block is not None]
    series = store.readings_window(night.sunset_utc - LOOKBACK, now_utc, stations=crop) if crop else {}
    alerts = store.alerts(night.sunset_utc - dt.timedelta(hours=2), now_utc)
    keys = [a["key"] for a in alerts]
    acks = q.acks_for(store, keys)
    states = q.alert_states(store, keys)
    latest = q.latest_readings(store, now_utc - dt.timedelta(days=7), now_utc)
    blocks = []
    for b, item in zip(cfg.blocks, doc["blocks"], strict=True):
        dcs = decisions.get(b.id)
        mine = [a for a in alerts if a["block"] == b.id]
        last = mine[-1] if mine else None
        station = dcs.projection.station if dcs is not None and dcs.projection.station else None
        station = station or next((s.id for s in cfg.stations_of(b.id, "crop")), None)
        stations = []
        for st in cfg.stations_of(b.id):
            got = latest.get((st.id, "air_temperature"))
            at = None if got is None else from_ms(got[0])
            stations.append({"station": st.id, "height_m": st.height_m, "air_temp_c": None if got is None else got[1],
                             "at_utc": at, "age_min": None if at is None else (now_utc - at).total_seconds() / 60.0})
        ack_rows = sorted(({**r, "level": a["level"], "alert_key": a["key"]} for a in mine for r in acks.get(a["key"], [])),
                          key=lambda r: r["time_utc_ms"])
        blocks.append({
            "block": b, "item": item, "decision": dcs, "alert": last, "acks": ack_rows,
            "alert_state": states.get(last["key"]) if last else None, "stations": stations,
            "observed": series.get((station, "air_temperature")) if station else None,
        })
    health = store.events(now_utc - dt.timedelta(hours=12), now_utc, kind="health")
    return {"now_utc": now_utc, "night": night, "display": d, "doc": doc, "blocks": blocks, "health": health[-10:],
            "site": cfg.site.name}


def _svg_chart(item: dict, snap: dict) -> str:
    """Tonight's observed crop-height air and the stored projected curve against T10/T90, as inline SVG."""
    b, dcs, obs, night, d = item["block"], item["decision"], item["observed"], snap["night"], snap["display"]
    w, h, left, right, top, bottom = 360, 210, 30, 8, 10, 24
    t0 = (night.sunset_utc - dt.timedelta(hours=1)).timestamp()
    t1 = (night.sunrise_utc + dt.timedelta(hours=1)).timestamp()
    conv = c_to_f if d.us else (lambda c: c)
    ys_c = [b.kill_10pct_c, b.kill_90pct_c, b.kill_10pct_c + b.margin_c]
    pts_obs: list[tuple[float, float]] = []
    if obs is not None:
        t, v = obs
        sel = t >= night.sunset_utc.timestamp()
        pts_obs = [(float(a), float(c)) for a, c in zip(t[sel], v[sel], strict=True)]
        ys_c += [c for _, c in pts_obs]
    pts_proj: list[tuple[float, float]] = []
    if dcs is not None and dcs.projection.curve_time_utc:
        p = dcs.projection
        pts_proj = [(x.timestamp(), float(c)) for x, c in zip(p.curve_time_utc, p.curve_air_temp_c, strict=True)
                    if x.timestamp() <= t1]
        ys_c += [c for _, c in pts_proj]
    lo = conv(min(ys_c)) - 1.0
    hi = min(conv(max(ys_c)) + 1.0, conv(b.kill_10pct_c + b.margin_c + 10.0))  # the cold end matters
    X = lambda ts: left + (w - left - right) * (ts - t0) / (t1 - t0)  # noqa: E731
    Y = lambda c: top + (h - top - bottom) * (hi - conv(c)) / (hi - lo)  # noqa: E731

    def line(pts, cls):
        if len(pts) < 2:
            return ""
        step = max(1, len(pts) // 150)
        path = " ".join(f"{X(a):.1f},{max(top, Y(c)):.1f}" for a, c in pts[::step] + [pts[-1]])
        return f'<polyline class="{cls}" points="{path}"/>'

    parts = [f'<svg viewBox="0 0 {w} {h}" class="chart" role="img" aria-label="block {e(b.id)} tonight">']
    label_y: list[float] = []
    for c_val, cls, label in ((b.kill_10pct_c + b.margin_c, "act", "act"), (b.kill_10pct_c, "t10", "T10"),
                              (b.kill_90pct_c, "t90", "T90")):
        y = Y(c_val)
        ly = y - 2
        while any(abs(ly - o) < 10 for o in label_y):  # keep the labels apart when the lines are close
            ly += 10
        label_y.append(ly)
        parts.append(f'<line class="{cls}" x1="{left}" x2="{w - right}" y1="{y:.1f}" y2="{y:.1f}"/>'
                     f'<text x="{left + 3}" y="{ly:.1f}" class="lbl">{label} {d.temp(c_val)}</text>')
    for k in range(int(lo) + 1, int(hi) + 1):
        if k % (2 if hi - lo < 14 else 5) == 0:
            y = top + (h - top - bottom) * (hi - k) / (hi - lo)
            parts.append(f'<text x="{left - 3}" y="{y + 4:.1f}" text-anchor="end" class="ax">{k}</text>')
    start_hour = dt.datetime.fromtimestamp(t0, dt.UTC).astimezone(d.tz).replace(minute=0, second=0, microsecond=0)
    hour = start_hour + dt.timedelta(hours=1)
    while hour.timestamp() < t1:
        if hour.hour % 3 == 0:
            parts.append(f'<text x="{X(hour.timestamp()):.1f}" y="{h - 6}" text-anchor="middle" class="ax">{hour:%H}:00</text>')
        hour += dt.timedelta(hours=1)
    parts.append(line(pts_obs, "obs"))
    parts.append(line(pts_proj, "proj"))
    now_x = X(snap["now_utc"].timestamp())
    if left <= now_x <= w - right:
        parts.append(f'<line class="now" x1="{now_x:.1f}" x2="{now_x:.1f}" y1="{top}" y2="{h - bottom}"/>')
    parts.append("</svg>")
    return "".join(parts)


PAGE_CSS = """
body{font-family:system-ui,-apple-system,"Segoe UI",Roboto,sans-serif;margin:0 auto;padding:0 10px 2em;
max-width:48em;font-size:20px;line-height:1.35;background:#fafafa;color:#111}
h1{font-size:1.3em;margin:.5em 0 .1em}.sub{color:#444;font-size:.85em;margin:0 0 .6em}
.card{background:#fff;border:1px solid #ccc;border-left:10px solid #999;border-radius:6px;padding:.5em .7em;
margin:.7em 0}.card h2{font-size:1.15em;margin:.1em 0 .3em}
.r5{border-left-color:#a00}.r4{border-left-color:#d40}.r3{border-left-color:#d90}.r2{border-left-color:#cc0}
.monitored.r1,.monitored.r0{border-left-color:#2a2}
.card.unmonitored{background:#e6e6e6;border-color:#a00;border-left-color:#a00}
.unmonitored .big{color:#a00}
.banner{background:#a00;color:#fff;font-weight:700;padding:.5em .7em;border-radius:6px;margin:.5em 0}
.big{font-size:1.6em;font-weight:700}.lvl{font-weight:700;text-transform:uppercase}
.bad{color:#a00;font-weight:700}.note{color:#444;font-size:.8em}.action{font-weight:600}
table{border-collapse:collapse;width:100%}td{padding:2px 4px;border-bottom:1px solid #eee;vertical-align:top}
svg.chart{width:100%;height:auto;background:#fff;border:1px solid #ddd}
.chart .obs{fill:none;stroke:#1f77b4;stroke-width:2}.chart .proj{fill:none;stroke:#7b2d8e;stroke-width:2;
stroke-dasharray:6 4}.chart .t10{stroke:#d00;stroke-width:1.5}.chart .t90{stroke:#800;stroke-width:1.5;
stroke-dasharray:5 3}.chart .act{stroke:#f88;stroke-dasharray:2 3}.chart .now{stroke:#888}
.chart .lbl{font-size:10px;fill:#a00}.chart .ax{font-size:10px;fill:#555}
button{font-size:1.2em;padding:.6em 1.4em;border-radius:8px;border:0;background:#d40;color:#fff}
"""


def _ago(seconds: float | None) -> str:
    if seconds is None:
        return "never"
    s = max(0.0, seconds)
    if s < 120:
        return f"{s:.0f} s"
    if s < 7200:
        return f"{s / 60:.0f} min"
    return f"{s / 3600:.1f} h"


def _ack_text(item: dict, d: Display) -> str:
    a, ack, st = item["alert"], item["acks"], item["alert_state"]
    if a is None:
        return ""
    if ack:
        of = "" if ack[-1]["alert_key"] == a["key"] else f" (the {e(ack[-1]['level'])} alert; not this one yet)"
        return (f"acknowledged by {e(str(ack[-1].get('who') or 'someone'))} at "
                f"{d.time(from_ms(ack[-1]['time_utc_ms']))}{of}")
    if st and st.get("state") == "acked":
        return "acknowledged"
    return "not acknowledged" if a["rank"] >= LEVELS["ready"] else ""


def _stations(item: dict, d: Display) -> str:
    rows = []
    for s in item["stations"]:
        age = "no reading" if s["age_min"] is None else f"{_ago(s['age_min'] * 60)} ago"
        rows.append(f"<tr><td>{e(s['station'])} ({d.length(s['height_m'])})</td><td>{d.temp(s['air_temp_c']) if s['air_temp_c'] is not None else ''}</td>"
                    f"<td>{age}</td></tr>")
    return f"<table class='sensors'>{''.join(rows)}</table>"


def _card(item: dict, snap: dict) -> str:
    b, j, dcs, d = item["block"], item["item"], item["decision"], snap["display"]
    title = f"<h2>{e(b.id)}{(' — ' + e(b.name)) if b.name else ''}</h2>"
    crit = f"T10 {d.temp(b.kill_10pct_c)} · T90 {d.temp(b.kill_90pct_c)} ({e(b.crop)}, {e(b.stage)})"
    chart = (f"{_svg_chart(item, snap)}<p class='note'>blue: crop-height air tonight; purple dashed: projection as "
             "last decided; red: T10 and T90; pink dotted: act line (T10 + margin)</p>")
    attrs = f'id="block-{e(b.id)}" data-level="{e(j["level"])}" data-rank="{j["rank"]}"'
    if not j["monitored"]:
        since = f" since {d.time(parse_utc(j['since']))}" if j["since"] else ""
        last = ""
        if dcs is not None and level_name(dcs.frost_level) != "rest":
            msg = compose(b.id, dcs.frost_level, step_for_level(dcs.frost_level, dcs.plan), dcs.plan, dcs.projection,
                          d, Notice.STATE)
            last = (f"<p class='note'>Last decision, {d.datetime(dcs.as_of_utc)}: "
                    f"<b>{e(level_word(dcs.frost_level))}</b>; {e(msg.action)}</p>")
        a = item["alert"]
        if a is not None:
            ack = _ack_text(item, d)
            last += (f"<p class='note'>Last alert: {e(level_word(a['level']))} at "
                     f"{d.time(from_ms(a['time_utc_ms']))}{'; ' + ack if ack else ''}</p>")
        return (f'<section class="card unmonitored" {attrs} data-monitored="false">{title}'
                f'<div class="big not-monitored">NOT MONITORED{e(since)}</div><p class="reason">{e(j["reason"])}</p>'
                f'<p class="action">{e(j["action"])}</p>{last}<div class="note">{crit}</div>{chart}'
                f"{_stations(item, d)}</section>")
    p = j["projection"] or {}
    now = (f"{d.temp(p['air_temp_c'])}" if p.get("air_temp_c") is not None else "")
    where = f"crop-height air at {e(p['station'])}, {d.time(dcs.as_of_utc)}" if p.get("station") else ""
    ack = _ack_text(item, d)
    a = item["alert"]
    since = f" since {d.time(from_ms(a['time_utc_ms']))}" if a and level_name(a["level"]) == level_name(j["level"]) else ""
    pmin = ""
    if p.get("predicted_min_c") is not None:
        band = f" ± {d.delta(p['band_c'])}" if p.get("band_c") is not None else ""
        around = f" around {d.time(parse_utc(p['predicted_min_at']))}" if p.get("predicted_min_at") else ""
        pmin = f"<p>projected minimum <b>{d.temp(p['predicted_min_c'])}</b>{band}{around}</p>"
    extra = []
    if p.get("inversion_c") is not None:
        extra.append(f"inversion {d.delta(p['inversion_c'])}")
    if p.get("dew_point_c") is not None:
        extra.append(f"dew point {d.temp(p['dew_point_c'])}")
    if p.get("wet_bulb_c") is not None:
        extra.append(f"wet bulb {d.temp(p['wet_bulb_c'])}")
    if p.get("wind_speed_m_s") is not None:
        farm = "farm " if dcs is not None and dcs.projection.wind_from_farm else ""
        extra.append(f"{farm}wind {d.wind(p['wind_speed_m_s'])}")
    return (f'<section class="card monitored r{j["rank"]}" {attrs} data-monitored="true">{title}'
            f'<div class="big now-temp">{now}</div><div class="note">{where}; {crit}</div>'
            f'<p><span class="lvl">{e(level_word(j["level"]))}</span>{since} '
            f'<span class="note">{ack}</span></p><p class="headline">{e(j["headline"])}</p>'
            f'<p class="action">{e(j["action"])}</p>{pmin}<p class="note">{e("; ".join(extra))}</p>'
            f'<p class="note">why: {e(j["reason"])}</p>{chart}{_stations(item, d)}</section>')


def _header(snap: dict) -> str:
    doc, d, now = snap["doc"], snap["display"], snap["now_utc"]
    hb = doc["daemon"]
    if doc["daemon_alive"]:
        daemon = f'<p class="sub" id="daemon">frostwatch daemon running (heartbeat {_ago(hb["heartbeat_age_s"])} ago)</p>'
    elif hb is None:
        daemon = '<p class="banner" id="daemon">The frostwatch daemon has never run on this store: no block is watched.</p>'
    elif hb.get("stopped"):
        daemon = (f'<p class="banner" id="daemon">The frostwatch daemon STOPPED at {d.datetime(parse_utc(hb["time"]))}: '
                  "no block is watched.</p>")
    else:
        daemon = (f'<p class="banner" id="daemon">The frostwatch daemon is NOT RUNNING: no heartbeat since '
                  f'{d.datetime(parse_utc(hb["time"]))} ({_ago(hb["heartbeat_age_s"])} ago). No block is watched.</p>')
    data = ("no decision stored yet" if doc["data_as_of"] is None else
            f"decisions as of {d.time(parse_utc(doc['data_as_of']))} ({_ago(doc['data_age_s'])} old)")
    blind = [j["block"] for j in doc["blocks"] if not j["monitored"]]
    watched = [j for j in doc["blocks"] if j["monitored"]]
    if blind:
        head = f'<p class="banner" id="summary">NOT MONITORED: {e(", ".join(blind))}</p>'
    else:
        worst = max(watched, key=lambda j: j["rank"])
        head = (f'<p class="sub" id="summary">Highest level: <b>{e(level_word(worst["level"]))}</b> '
                f'(block {e(worst["block"])})</p>')
    return (f'<p class="sub">As of <b id="as-of">{d.datetime(now)}</b>; <span id="data-age">{data}</span>; '
            f"sunset {d.time(snap['night'].sunset_utc)}, sunrise {d.time(snap['night'].sunrise_utc)}.</p>{daemon}{head}")


def render_page(snap: dict, refresh_s: int) -> str:
    d = snap["display"]
    cards = "".join(_card(item, snap) for item in snap["blocks"])
    if snap["doc"]["daemon_alive"]:
        health = "".join(f"<li>{d.time(from_ms(h['time_utc_ms']))} {e(h['subject'] or '')}: {e(h['detail'] or '')}</li>"
                         for h in snap["health"]) or "<li>none recorded in the last 12 h</li>"
    else:
        health = "<li>unknown: the daemon that checks the sensors is not running</li>"
    cautions = " ".join(e(c) for c in GENERAL_CAUTIONS)
    return f"""<!doctype html>
<html lang="en"><head><meta charset="utf-8"><meta name="viewport" content="width=device-width, initial-scale=1">
<meta http-equiv="refresh" content="{refresh_s}"><title>frostwatch status</title><style>{PAGE_CSS}</style></head>
<body><h1>{e(snap["site"])}</h1>
<p class="sub">This page refreshes every {refresh_s} s and shows what the frostwatch daemon last decided.</p>
{_header(snap)}
{cards}
<h2>Sensor incidents</h2><ul class="note">{health}</ul>
<p class="note">{cautions}</p></body></html>
"""
