"""HTML of the night log: one self-contained page (inline CSS, no scripts, no fonts or links
outside its own folder), readable on a phone and printable.

On a phone (narrower than 700 px) every wide table is stacked: each row becomes a small card, each
cell labelled with its column, so nothing runs off the screen and nothing hides in a box that
scrolls sideways; long words (a record hash, a station name) wrap.
"""

from __future__ import annotations

import datetime as dt
import html

from frostwatch.advice.explain import SOURCES
from frostwatch.advice.plan import Method
from frostwatch.advice.render import GENERAL_CAUTIONS as CAUTIONS
from frostwatch.advice.render import level_word, method_name
from frostwatch.alerts.levels import rank_of
from frostwatch.night import sun_times_words
from frostwatch.reports.summary import no_minimum_words
from frostwatch.reports.thermometers import night_section
from frostwatch.store import from_ms

PAGE_CSS = """
body{font-family:system-ui,-apple-system,"Segoe UI",Roboto,sans-serif;margin:0 auto;padding:0 12px 2em;
max-width:72em;font-size:17px;line-height:1.4;color:#111;overflow-wrap:anywhere}
h1{font-size:1.5em;margin:.6em 0 .2em}h2{font-size:1.25em;margin:1.4em 0 .4em;border-bottom:2px solid #ddd}
h3{font-size:1.1em;margin:1em 0 .3em}
.scroll{overflow-x:auto;-webkit-overflow-scrolling:touch}
table{border-collapse:collapse;margin:.3em 0}td,th{border:1px solid #bbb;padding:4px 8px;text-align:left;
vertical-align:top}th{background:#eee}td.num{text-align:right;white-space:nowrap}
table.kv th{width:45%;font-weight:600;background:#f5f5f5}
.loss{background:#fde8e8;border-left:6px solid #c00;padding:.4em .8em;margin:.6em 0}
.ok{background:#e8f6e8;border-left:6px solid #2a2;padding:.4em .8em;margin:.6em 0}
.note{color:#444;font-size:.92em}.lvl{font-weight:700;white-space:nowrap}
.lvl5{color:#a00}.lvl4{color:#c40}.lvl3{color:#a60}.lvl2{color:#660}.lvl1,.lvl0{color:#070}
figure{margin:.5em 0}img{max-width:100%;height:auto;border:1px solid #ddd}
code{font-size:.85em;word-break:break-all;overflow-wrap:anywhere}
table.compact td,table.compact th{padding:4px 5px}
@media (max-width:700px){
table.stack,table.stack tbody,table.stack tr,table.stack td{display:block;width:auto}
table.stack thead{display:none}
table.stack tr{border:1px solid #bbb;border-left:4px solid #999;margin:.5em 0;padding:.2em .5em}
table.stack td{border:0;padding:1px 0;text-align:left;white-space:normal}
table.stack td::before{content:attr(data-label) ": ";font-weight:600;color:#444}
table.kv th{width:40%}
}
@media print{.scroll{overflow:visible}}
"""
e = html.escape



def _capital(text: str) -> str:
    return text[:1].upper() + text[1:]

def level_span(level: str) -> str:
    return f'<span class="lvl lvl{rank_of(level)}">{e(level_word(level))}</span>'


def stacked_table(ident: str, headers: list[str], rows: list[list[tuple[str, bool]]], cls: str = "") -> str:
    """A table that stacks on a phone: a header row, then each row's cells as (html, numeric),
    every cell labelled with its column for the stacked form."""
    head = "".join(f"<th>{e(h)}</th>" for h in headers)
    num_class = ' class="num"'
    body = "".join(
        "<tr>" + "".join(f'<td{num_class if num else ""} data-label="{e(h)}">{cell}</td>'
                         for h, (cell, num) in zip(headers, row, strict=True)) + "</tr>"
        for row in rows)
    classes = f"stack {cls}".strip()
    return (f'<div class="scroll"><table id="{ident}" class="{classes}"><thead><tr>{head}</tr></thead>'
            f"<tbody>{body}</tbody></table></div>")


def coldest_first(sections):
    return sorted(sections, key=lambda s: (s.bn.min_c is None, s.bn.min_c if s.bn.min_c is not None else 0.0))


def _overview(data) -> str:
    d = data.display
    rows = []
    for s in coldest_first(data.sections):
        bn = s.bn
        rows.append([(f'<a href="#block-{e(bn.block)}">{e(bn.block)}</a>', False),
                     (d.temp(bn.min_c) if bn.min_c is not None else "not trusted" if bn.left_out else "no reading", True),
                     (d.time(bn.min_at_utc) if bn.min_at_utc else "", True),
                     (f"{bn.minutes_below_t10:.0f} min", True), (f"{bn.minutes_below_t90:.0f} min", True)])
    return (stacked_table("blocks", ["block", "minimum", "at", "below T10", "below T90"], rows, "compact")
            + '<p class="note">"below T10/T90": minutes at or below it, interpolated between readings.</p>')


def _runs_text(data, bn) -> str:
    d = data.display
    if not bn.runs:
        b = data.cfg.block(bn.block)
        if b.protection == "none":
            return "no protection configured"
        return "none recorded" if bn.run_quantity else "none recorded (no running sensor, no acknowledgement)"
    parts = [f"{d.time(r.start_utc)}–{d.time(r.stop_utc) if r.stop_utc else 'still running'}" for r in bn.runs]
    src = {"sprinkler_running": "sprinkler running sensor", "wind_machine_running": "wind machine running sensor",
           "acknowledgements": "estimated from acknowledgements"}.get(bn.run_quantity or "", bn.run_quantity or "")
    return f"{', '.join(parts)} ({bn.run_hours:.1f} h; {src})"


def _block_section(data, s) -> str:
    d = data.display
    bn = s.bn
    b = data.cfg.block(bn.block)
    title = f"{bn.block}" + (f" — {b.name}" if b.name else "")
    err = s.forecast_error_c
    if err is None:
        err_txt = "no dusk forecast or no observed minimum to compare"
    else:
        err_txt = (f"forecast {d.temp(s.dusk_forecast_c)}, observed {d.temp(bn.min_c)}: the forecast was "
                   f"{d.delta(abs(err))} {'colder' if err < 0 else 'warmer'} than what happened")
        if bn.runs:
            # the forecast is of the unprotected block; protection changes what is observed
            err_txt += ("; protection ran, so the observed minimum is the protected block's and part of the "
                        "difference is its effect")
    rows = [
        ("crop, stage", f"{e(bn.crop)}, {e(bn.stage)}"),
        ("T10 / T90 (10 % / 90 % bud kill)", f"{d.temp(bn.kill_10pct_c)} / {d.temp(bn.kill_90pct_c)}"),
        ("coldest crop-height sensor", e(bn.station or "none reporting")),
        ("minimum", f'<span class="minimum">{d.temp(bn.min_c)}</span> at {d.time(bn.min_at_utc)}' if bn.min_c is not None
         else e(no_minimum_words(bn))),
        ("minutes at or below T10", f"{bn.minutes_below_t10:.0f}"),
        ("minutes at or below T90", f"{bn.minutes_below_t90:.0f}"),
        ("dusk forecast error", err_txt),
        ("protection", e(method_name(Method(b.protection)) if b.protection != "none" else "none")),
        ("protection ran", e(_runs_text(data, bn))),
    ]
    if bn.water_m3 is not None:
        rows.append(("water used", d.water(bn.water_m3)))
        rows.append(("peak flow", f"{d.flow(bn.peak_flow_l_s)} (nominal: rate × area)"))
    if bn.fuel_l is not None:
        rows.append(("fuel (estimated)", f"{d.fuel(bn.fuel_l)} ({d.fuel_rate(b.fuel_l_per_h)} × {bn.run_hours:.1f} h)"))
    if bn.energy_kwh is not None:
        rows.append(("energy (estimated)", f"{bn.energy_kwh:.0f} kWh"))
    table = "".join(f"<tr><th>{k}</th><td>{v}</td></tr>" for k, v in rows)
    lower = (" Lower panel: how much warmer the tower is than crop height, and the wind." if s.lower_shown else "")
    note = f" {e(s.lower_note)}" if s.lower_note else ""
    fig = (f'<figure><img src="{e(s.png)}" alt="block {e(bn.block)}: temperatures through the night">'
           '<figcaption class="note">Solid: crop-height air; dashed: tower; red lines: T10 and T90; purple: the dusk '
           f'forecast and the projected minimum with its range, as projected through the night; shaded: protection '
           f'running.{lower}{note}</figcaption></figure>') if s.png else ""
    return (f'<section id="block-{e(bn.block)}"><h3>Block {e(title)}</h3><div class="scroll"><table class="kv">'
            f"{table}</table></div>{fig}</section>")


def _loss(data) -> str:
    d = data.display
    losses = data.loss_blocks()
    if not losses:
        return '<div class="ok" id="possible-loss">No block went down to its T10 tonight: no loss expected.</div>'
    h = data.settings.insurance_notice_h
    items = "".join(
        f"<li><b>Block {e(s.bn.block)}</b>: {s.bn.minutes_below_t10:.0f} min at or below T10 "
        f"({d.temp(s.bn.kill_10pct_c)}), {s.bn.minutes_below_t90:.0f} min at or below T90, minimum "
        f"{d.temp(s.bn.min_c)} at {d.time(s.bn.min_at_utc)}.</li>" for s in losses
    )
    return (
        f'<div class="loss" id="possible-loss"><p><b>Possible loss.</b></p><ul>{items}</ul>'
        f"<p>If you carry crop insurance, notice of a possible loss is usually due within {h:g} hours of "
        f"discovering it: by <b>{d.datetime(data.notice_deadline_utc())}</b> at the latest. Check your policy "
        "for the exact period and keep this page, its CSV files and its record hash.</p>"
        "<p><b>Assessing the buds</b>: the day after, "
        "collect about 100 buds or blossoms across the block (low spots and high spots), let them warm at room "
        "temperature for at least 2 hours, cut them across with a sharp blade and count the pistils that have "
        "turned brown or black (dead) against the green ones (alive). Record the percentage per block.</p></div>"
    )


def _deliveries(data, key: str) -> str:
    """Each delivery as recorded: '19:50 console: sent', 'sms to maria: sent after 2 attempts 19:51'."""
    rows = data.deliveries.get(key, [])
    if not rows:
        return '<span class="note">none recorded</span>'
    parts = []
    for r in rows:
        when = from_ms(r["updated_utc_ms"]) if r.get("updated_utc_ms") else None
        who = r.get("recipient") or "*"
        attempts = int(r.get("attempt") or 0)
        parts.append(f"{e(str(r.get('channel') or ''))}{'' if who == '*' else ' to ' + e(str(who))}: "
                     f"{e(str(r.get('status') or ''))}"
                     + (f" after {attempts} attempts" if attempts > 1 else "")
                     + (f" {data.display.time(when)}" if when else ""))
    return "<br>".join(parts)


def _acks(data, key: str) -> str:
    rows = data.acks.get(key, [])
    if not rows:
        return ""
    return "<br>".join(f"{data.display.time(from_ms(r['time_utc_ms']))} by {e(str(r.get('who') or 'someone'))}"
                       f" via {e(str(r.get('via') or '?'))}" for r in rows)


def _alerts(data) -> str:
    d = data.display
    if not data.alerts:
        return '<p id="alerts">No alerts tonight.</p>'
    rows = []
    for a in data.alerts:
        head = (a["message"] or a["advice"] or "").splitlines()[0] if (a["message"] or a["advice"]) else ""
        ack = _acks(data, a["key"])
        if not ack and a["rank"] >= rank_of("ready"):
            ack = '<span class="note">not acknowledged</span>'
        rows.append([(d.time(from_ms(a["time_utc_ms"])), True), (e(a["block"]), False), (level_span(a["level"]), False),
                     (e(head), False), (_deliveries(data, a["key"]), False), (ack, False)])
    return stacked_table("alerts", ["time", "block", "level", "message", "sent", "acknowledged"], rows)


def _decisions(data) -> str:
    """What frostwatch decided through the night (each change of level, step or monitoring), from the
    stored decisions: the same words the alerts and the status page showed."""
    from frostwatch.advice.message import compose, monitoring_reason
    from frostwatch.advice.render import Notice

    d = data.display
    if not data.decisions:
        return '<p id="decisions" class="note">No decision stored for this night.</p>'
    rows = []
    for x in data.decisions:
        if x.monitored:
            what = compose(x.block, x.level, x.step, x.plan, x.projection, d, Notice.STATE).action
        else:
            what = "NOT MONITORED: " + monitoring_reason(x.monitoring, d, x.as_of_utc)
        pmin = d.temp(x.projection.predicted_min_c) if x.projection.predicted_min_c is not None else ""
        rows.append([(d.time(x.as_of_utc), True), (e(x.block), False), (level_span(x.level), False), (e(what), False),
                     (pmin, True)])
    return (stacked_table("decisions", ["time", "block", "level", "advice", "projected minimum"], rows)
            + '<p class="note">Each change of level, advice or monitoring as the daemon decided it (and its last decision); '
            "the status page showed the same.</p>")


def _events(data, events, empty: str, ident: str) -> str:
    d = data.display
    if not events:
        return f'<p id="{ident}" class="note">{empty}</p>'
    items = "".join(f"<li>{d.time(from_ms(ev['time_utc_ms']))} <b>{e(ev['subject'] or '')}</b>: "
                    f"{e(ev['detail'] or '')}</li>" for ev in events)
    return f'<ul id="{ident}">{items}</ul>'


def night_html(data) -> str:
    d, n, cfg = data.display, data.night, data.cfg
    blocks = "".join(_block_section(data, s) for s in coldest_first(data.sections))
    cautions = "".join(f"<li>{e(c)}</li>" for c in CAUTIONS)
    f = data.files
    links = (f'<a href="{e(f.get("blocks_csv", ""))}">block table (CSV)</a> · '
             f'<a href="{e(f.get("water_csv", ""))}">water use per zone (CSV)</a> · '
             f'<a href="{e(f.get("json", ""))}">night record (JSON)</a>')
    return f"""<!doctype html>
<html lang="en"><head><meta charset="utf-8"><meta name="viewport" content="width=device-width, initial-scale=1">
<title>{e(cfg.site.name)}: night of {n.date}</title><style>{PAGE_CSS}</style></head><body>
<h1>{e(cfg.site.name)}: night of {n.date}</h1>
<p id="sun">{e(_capital(sun_times_words(n, d.time)))} ({e(cfg.site.timezone)} local time).
Temperatures in {d.symbol}; T10 and T90 are the temperatures that kill about 10 % and 90 % of the buds
in 30 minutes at the block's stage.</p>
{_loss(data)}
<h2>Blocks, coldest first</h2>
{_overview(data)}
<p class="note">Data: {links}.</p>
{blocks}
<h2>Alerts, deliveries and acknowledgements</h2>
{_alerts(data)}
<h2>What frostwatch decided</h2>
{_decisions(data)}
<h2>Sensor incidents</h2>
{_events(data, data.health, "No sensor incidents recorded.", "incidents")}
{"" if data.offsets is None else night_section(data.offsets, d)}
<h2>Stage changes</h2>
{_events(data, data.stage_changes, "No stage change recorded for this night.", "stage-changes")}
<h2>Cautions</h2><ul id="cautions">{cautions}</ul>
<section id="notes"><h2>Notes and sources</h2><ul class="note">{"".join(f"<li>{e(x)}</li>" for x in SOURCES)}</ul></section>
<h2>Record</h2>
<p id="record" class="note">{data.readings_count} readings from {d.datetime(n.sunset_utc - dt.timedelta(hours=6))}
to {d.datetime(n.sunrise_utc + dt.timedelta(hours=6))}; SHA-256 of those readings:
<code>{data.readings_sha256}</code>. SHA-256 of the night record ({e(f.get("json", ""))}):
<code>{f.get("json_sha256", "")}</code>. Keep a copy off the farm computer: a changed record no longer
matches its hash.</p>
</body></html>
"""
