"""The status page as HTML, from a snapshot (`frostwatch.status.snapshot`): one card per block.

    html = render_page(snap, refresh_s)

Nothing here computes advice: each card shows the block's newest stored decision (level, step,
headline, action, projection) as `frostwatch status` shows it, with tonight's chart. A block
nobody is watching is a grey card with a red edge, "NOT MONITORED since HH:MM: why", never
green and never "no alert"; the header says when the daemon stopped and how old the page's data
are. Every text from the store or the config is escaped with html.escape
(tests/reports/test_statuspage.py::test_page_escapes_names_from_the_config).

No template engine: the pages are about 150 lines of f-strings, and Jinja2, the one that escapes
by default, brings MarkupSafe, whose speedups are compiled (a C extension per platform).
"""

from __future__ import annotations

import html

from frostwatch.advice.codec import parse_utc
from frostwatch.advice.message import compose
from frostwatch.advice.render import GENERAL_CAUTIONS, Notice, level_word
from frostwatch.alerts.levels import LEVELS, level_name, step_for_level
from frostwatch.display import Display
from frostwatch.night import sun_times_words
from frostwatch.status.chart import svg_chart
from frostwatch.status.style import PAGE_CSS
from frostwatch.status.web import ago
from frostwatch.store import from_ms

e = html.escape


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
        age = "no reading" if s["age_min"] is None else f"{ago(s['age_min'] * 60)} ago"
        rows.append(f"<tr><td>{e(s['station'])} ({d.length(s['height_m'])})</td><td>{d.temp(s['air_temp_c']) if s['air_temp_c'] is not None else ''}</td>"
                    f"<td>{age}</td></tr>")
    return f"<table class='sensors'>{''.join(rows)}</table>"


def _card(item: dict, snap: dict) -> str:
    b, j, dcs, d = item["block"], item["item"], item["decision"], snap["display"]
    title = f"<h2>{e(b.id)}{(' — ' + e(b.name)) if b.name else ''}</h2>"
    crit = f"T10 {d.temp(b.kill_10pct_c)} · T90 {d.temp(b.kill_90pct_c)} ({e(b.crop)}, {e(b.stage)})"
    chart = (f"{svg_chart(item, snap)}<p class='note'>blue: crop-height air tonight; purple dashed: projection as "
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
        daemon = f'<p class="sub" id="daemon">frostwatch daemon running (heartbeat {ago(hb["heartbeat_age_s"])} ago)</p>'
    elif hb is None:
        daemon = '<p class="banner" id="daemon">The frostwatch daemon has never run on this store: no block is watched.</p>'
    elif hb.get("stopped"):
        daemon = (f'<p class="banner" id="daemon">The frostwatch daemon STOPPED at {d.datetime(parse_utc(hb["time"]))}: '
                  "no block is watched.</p>")
    else:
        daemon = (f'<p class="banner" id="daemon">The frostwatch daemon is NOT RUNNING: no heartbeat since '
                  f'{d.datetime(parse_utc(hb["time"]))} ({ago(hb["heartbeat_age_s"])} ago). No block is watched.</p>')
    data = ("no decision stored yet" if doc["data_as_of"] is None else
            f"decisions as of {d.time(parse_utc(doc['data_as_of']))} ({ago(doc['data_age_s'])} old)")
    blind = [j["block"] for j in doc["blocks"] if not j["monitored"]]
    watched = [j for j in doc["blocks"] if j["monitored"]]
    if blind:
        head = f'<p class="banner" id="summary">NOT MONITORED: {e(", ".join(blind))}</p>'
    else:
        worst = max(watched, key=lambda j: j["rank"])
        head = (f'<p class="sub" id="summary">Highest level: <b>{e(level_word(worst["level"]))}</b> '
                f'(block {e(worst["block"])})</p>')
    return (f'<p class="sub">As of <b id="as-of">{d.datetime(now)}</b>; <span id="data-age">{data}</span>; '
            f'<span id="sun">{e(sun_times_words(snap["night"], d.time))}</span>.</p>{daemon}{head}')


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


def _small_page(title: str, body: str) -> str:
    return (f'<!doctype html><html lang="en"><head><meta charset="utf-8"><meta name="viewport" '
            f'content="width=device-width, initial-scale=1"><title>{title}</title><style>{PAGE_CSS}</style>'
            f'</head><body>{body}</body></html>')


def ack_form_page(quoted_token: str) -> str:
    """The one-use link's page: a button that POSTs the acknowledgement (a GET never does it)."""
    return _small_page("Acknowledge", '<h1>Acknowledge this alert?</h1><p>Pressing the button tells frostwatch that '
                       'you are on it: repeats and escalation of this alert stop.</p><form method="post" '
                       f'action="/ack/{e(quoted_token)}"><button type="submit" id="confirm">Yes, I am on it</button>'
                       '</form>')


def ack_result_page(ok: bool, message: str) -> str:
    title = "Acknowledged" if ok else "Not acknowledged"
    return _small_page(title, f'<h1 id="result">{title}</h1><p>{e(message)}</p><p><a href="/">status page</a></p>')
