"""The local status page: one read-only page for whoever is up at night, readable on a phone.

Standard library only (`http.server.ThreadingHTTPServer`): no framework on a Pi. It binds
127.0.0.1 by default; any other address needs a token (`[status_page] token_file` or `token`),
and then every request must carry `?token=...` (which sets a cookie) or that cookie, else 403.
Acknowledgement links (`/ack/<token>`) are exempt from the page token: the ack token is itself
signed and one-use (frostwatch.alerts.acks); GET shows a confirm button, POST acknowledges.

    server = make_server(cfg, "127.0.0.1", 0)        # tests: port 0 picks a free one
    serve(cfg, bind, port, token)                    # the daemon runs this in a thread

Paths: `/` the page, `/status.json` the same figures as JSON, `/ack/<token>`, `/healthz`, and
`POST /gateway/ack` for an SMS or push gateway's reply callback.
Raises `UsageError` when asked to bind beyond loopback without a token.
"""

from __future__ import annotations

import datetime as dt
import hmac
import html
import io
import ipaddress
import json
import logging
import re
import threading
import time
import urllib.parse
from collections.abc import Callable
from http import cookies
from http.server import BaseHTTPRequestHandler, ThreadingHTTPServer

from frostwatch import forecast
from frostwatch.advice import plan_advice
from frostwatch.advice import render as advice_render
from frostwatch.advice.render import GENERAL_CAUTIONS as CAUTIONS
from frostwatch.alerts.rules import LEVELS
from frostwatch.config import Config
from frostwatch.errors import UsageError
from frostwatch.pipeline import LOOKBACK, Evaluator, slice_series
from frostwatch.reports.settings import status_page_settings
from frostwatch.store import Store, from_ms
from frostwatch.store import reports as q

log = logging.getLogger("frostwatch.statuspage")
COOKIE = "frostwatch_token"
CACHE_S = 20.0  # a page computed less than this long ago is served again (many phones, one Pi)
# A request (line, headers, body) must arrive whole within this; a client that drips it byte by
# byte is cut off then, so it holds a handler thread no longer. Connections beyond
# MAX_CONNECTIONS at once are closed at once: the thread count stays bounded.
REQUEST_DEADLINE_S = 10.0
WRITE_TIMEOUT_S = 10.0
MAX_CONNECTIONS = 16
MAX_BODY_BYTES = 8192
e = html.escape


def is_loopback(bind: str) -> bool:
    if bind in ("localhost", "ip6-localhost"):
        return True
    try:
        return ipaddress.ip_address(bind).is_loopback
    except ValueError:
        return False


# ---- what the page shows ---------------------------------------------------------------------


def snapshot(cfg: Config, store: Store, now_utc: dt.datetime, evaluator: Evaluator | None = None) -> dict:
    """Every block's figures at `now_utc` (pure apart from reading the store)."""
    ev = evaluator or Evaluator(cfg)
    d = ev.display
    night = ev.night_at(now_utc)
    series = store.readings_window(night.sunset_utc - LOOKBACK, now_utc)
    window = slice_series(series, (night.sunset_utc - LOOKBACK).timestamp(), now_utc.timestamp())
    alerts = store.alerts(night.sunset_utc - dt.timedelta(hours=2), now_utc)
    keys = [a["key"] for a in alerts]
    acks = q.acks_for(store, keys)
    states = q.alert_states(store, keys)
    now_s = now_utc.timestamp()
    blocks = []
    for b in cfg.blocks:
        stations = []
        for st in cfg.stations_of(b.id):
            ss = forecast.station_state(st, window, now_s, cfg.forecast.stale_after_intervals)
            at = ss.latest_at_utc.get("air_temperature")
            stations.append({
                "station": st.id, "role": st.role, "height_m": st.height_m,
                "air_temp_c": ss.latest.get("air_temperature"), "at_utc": at,
                "age_min": None if at is None else (now_utc - at).total_seconds() / 60.0,
                "healthy": ss.healthy, "problems": list(ss.problems),
            })
        try:
            proj = forecast.project_block(now_utc, b, cfg, window, night, ev.calibration(b.id), ev.pressure_hpa)
            plan = plan_advice(proj, b, now_utc, ev.pressure_hpa)
            adv = advice_render.action(plan.step, plan, d)
            proj_error = None
        except Exception as exc:  # the page must render even when a block cannot be projected
            log.exception("status page: cannot project block %s", b.id)
            proj, adv, proj_error = None, None, f"{type(exc).__name__}: {exc}"
        mine = [a for a in alerts if a["block"] == b.id]
        last = mine[-1] if mine else None
        crop = [s for s in cfg.stations_of(b.id, role="crop")]
        obs = None
        if proj is not None and proj.station and (proj.station, "air_temperature") in window:
            obs = window[(proj.station, "air_temperature")]
        elif crop and (crop[0].id, "air_temperature") in window:
            obs = window[(crop[0].id, "air_temperature")]
        ack_rows = sorted(({**r, "level": a["level"], "alert_key": a["key"]} for a in mine for r in acks.get(a["key"], [])),
                          key=lambda r: r["time_utc_ms"])
        blocks.append({
            "block": b, "stations": stations, "projection": proj, "advice": adv, "error": proj_error,
            "alert": last, "alert_state": states.get(last["key"]) if last else None, "acks": ack_rows,
            "observed": obs,
        })
    health = store.events(now_utc - dt.timedelta(hours=12), now_utc, kind="health")
    return {"now_utc": now_utc, "night": night, "display": d, "blocks": blocks, "health": health[-10:]}


def _svg_chart(item: dict, snap: dict) -> str:
    """Tonight's observed crop-height air and projected curve against T10/T90, as inline SVG."""
    b, p, obs, night, d = item["block"], item["projection"], item["observed"], snap["night"], snap["display"]
    w, h, left, right, top, bottom = 360, 210, 30, 8, 10, 24
    t0 = (night.sunset_utc - dt.timedelta(hours=1)).timestamp()
    t1 = (night.sunrise_utc + dt.timedelta(hours=1)).timestamp()
    conv = (lambda c: c * 9.0 / 5.0 + 32.0) if d.unit == "degF" else (lambda c: c)
    ys_c = [b.kill_10pct_c, b.kill_90pct_c, b.kill_10pct_c + b.margin_c]
    pts_obs: list[tuple[float, float]] = []
    if obs is not None:
        t, v = obs
        sel = t >= night.sunset_utc.timestamp()
        pts_obs = [(float(a), float(c)) for a, c in zip(t[sel], v[sel], strict=True)]
        ys_c += [c for _, c in pts_obs]
    pts_proj: list[tuple[float, float]] = []
    if p is not None and p.curve_time_utc:
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
    tz = d.tz
    start_hour = dt.datetime.fromtimestamp(t0, dt.UTC).astimezone(tz).replace(minute=0, second=0, microsecond=0)
    hour = start_hour + dt.timedelta(hours=1)
    while hour.timestamp() < t1:
        if hour.hour % 3 == 0:
            x = X(hour.timestamp())
            parts.append(f'<text x="{x:.1f}" y="{h - 6}" text-anchor="middle" class="ax">{hour:%H}:00</text>')
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
.r1,.r0{border-left-color:#2a2}
.big{font-size:1.6em;font-weight:700}.lvl{font-weight:700;text-transform:uppercase}
.bad{color:#a00;font-weight:700}.note{color:#444;font-size:.8em}
table{border-collapse:collapse;width:100%}td{padding:2px 4px;border-bottom:1px solid #eee;vertical-align:top}
svg.chart{width:100%;height:auto;background:#fff;border:1px solid #ddd}
.chart .obs{fill:none;stroke:#1f77b4;stroke-width:2}.chart .proj{fill:none;stroke:#7b2d8e;stroke-width:2;
stroke-dasharray:6 4}.chart .t10{stroke:#d00;stroke-width:1.5}.chart .t90{stroke:#800;stroke-width:1.5;
stroke-dasharray:5 3}.chart .act{stroke:#f88;stroke-dasharray:2 3}.chart .now{stroke:#888}
.chart .lbl{font-size:10px;fill:#a00}.chart .ax{font-size:10px;fill:#555}
button{font-size:1.2em;padding:.6em 1.4em;border-radius:8px;border:0;background:#d40;color:#fff}
"""


def render_page(snap: dict, refresh_s: int) -> str:
    d = snap["display"]
    cards = []
    worst = None
    for item in snap["blocks"]:
        b, p, adv, a = item["block"], item["projection"], item["advice"], item["alert"]
        rank = a["rank"] if a else 0
        if a and (worst is None or rank > worst[0]):
            worst = (rank, a["level"], b.id)
        crop_now = [s for s in item["stations"] if s["role"] == "crop" and s["air_temp_c"] is not None and s["healthy"]]
        coldest = min(crop_now, key=lambda s: s["air_temp_c"]) if crop_now else None
        rows = []
        for s in item["stations"]:
            state = "ok" if s["healthy"] else f'<span class="bad">{e("; ".join(s["problems"]) or "not healthy")}</span>'
            age = "" if s["age_min"] is None else f"{s['age_min']:.0f} min ago"
            rows.append(f"<tr><td>{e(s['station'])} ({s['height_m']:g} m)</td><td>{d.temp(s['air_temp_c'])}</td>"
                        f"<td>{age}</td><td>{state}</td></tr>")
        if p is not None:
            inv = ("" if p.inversion_c is None else
                   f"inversion {d.delta(p.inversion_c)} ({e(p.inversion_class or '')}); ")
            bits = [inv.rstrip("; ")] if inv else []
            bits += [f"{k} {d.temp(v)}" for k, v in (("dew point", p.dew_point_c), ("wet bulb", p.wet_bulb_c))
                     if v is not None]
            if p.wind_speed_m_s is not None:
                bits.append(f"wind {p.wind_speed_m_s:.1f} m/s")
            extra = "; ".join(bits)
            proj_txt = (f"projected minimum <b>{d.temp(p.predicted_min_c)}</b> ± {d.delta(p.band_c)} "
                        f"around {d.time(p.predicted_min_at_utc)}")
        else:
            extra, proj_txt = "", f'<span class="bad">no projection: {e(item["error"] or "")}</span>'
        if a:
            ack = item["acks"]
            st = item["alert_state"]
            if ack:
                of = "" if ack[-1]["alert_key"] == a["key"] else f" (the {e(ack[-1]['level'])} alert; not this one yet)"
                ack_txt = (f"acknowledged by {e(str(ack[-1].get('who') or 'someone'))} at "
                           f"{d.time(from_ms(ack[-1]['time_utc_ms']))}{of}")
            else:
                ack_txt = "not acknowledged" if rank >= LEVELS["standby"] else ""
            if st and st.get("state") == "acked" and not ack:
                ack_txt = "acknowledged"
            alert_txt = (f'<p><span class="lvl">{e(a["level"])}</span> since {d.time(from_ms(a["time_utc_ms"]))}'
                         f' <span class="note">{ack_txt}</span></p>')
        else:
            alert_txt = '<p><span class="lvl">no alert tonight</span></p>'
        advice = f"<p>{e(adv)}</p>" if adv else ""
        cards.append(
            f'<section class="card r{rank}" id="block-{e(b.id)}"><h2>{e(b.id)}{(" — " + e(b.name)) if b.name else ""}'
            f'</h2><div class="big now-temp">{d.temp(coldest["air_temp_c"]) if coldest else "no reading"}</div>'
            f'<div class="note">coldest crop-height air{(" at " + e(coldest["station"])) if coldest else ""}; '
            f"T10 {d.temp(b.kill_10pct_c)} · T90 {d.temp(b.kill_90pct_c)} ({e(b.crop)}, {e(b.stage)})</div>"
            f"{alert_txt}<p>{proj_txt}</p><p class='note'>{extra}</p>{advice}"
            f"{_svg_chart(item, snap)}<p class='note'>blue: crop-height air tonight; purple dashed: projection; "
            f"red: T10 and T90; pink dotted: act line (T10 + margin)</p>"
            f"<table class='sensors'>{''.join(rows)}</table></section>"
        )
    head = (f'<p class="sub">Highest alert: <b>{e(worst[1])}</b> (block {e(worst[2])})</p>' if worst
            else '<p class="sub">No alert tonight.</p>')
    health = "".join(f"<li>{d.time(from_ms(h['time_utc_ms']))} {e(h['subject'] or '')}: {e(h['detail'] or '')}</li>"
                     for h in snap["health"]) or "<li>none in the last 12 h</li>"
    cautions = " ".join(e(c) for c in CAUTIONS)
    now = snap["now_utc"]
    return f"""<!doctype html>
<html lang="en"><head><meta charset="utf-8"><meta name="viewport" content="width=device-width, initial-scale=1">
<meta http-equiv="refresh" content="{refresh_s}"><title>frostwatch status</title><style>{PAGE_CSS}</style></head>
<body><h1>{e(snap_site(snap))}</h1>
<p class="sub">As of <b id="as-of">{d.datetime(now)}</b>; this page refreshes every {refresh_s} s.
Sunset {d.time(snap["night"].sunset_utc)}, sunrise {d.time(snap["night"].sunrise_utc)}.</p>{head}
{''.join(cards)}
<h2>Sensor incidents</h2><ul class="note">{health}</ul>
<p class="note">{cautions}</p></body></html>
"""


def snap_site(snap: dict) -> str:
    return snap.get("site", "frostwatch")


def snapshot_json(snap: dict) -> dict:
    iso = lambda t: None if t is None else t.isoformat().replace("+00:00", "Z")  # noqa: E731
    out = {"time": iso(snap["now_utc"]), "blocks": []}
    for item in snap["blocks"]:
        p, a = item["projection"], item["alert"]
        out["blocks"].append({
            "block": item["block"].id,
            "stations": [{"station": s["station"], "air_temp_c": s["air_temp_c"], "at": iso(s["at_utc"]),
                          "healthy": s["healthy"], "problems": s["problems"]} for s in item["stations"]],
            "predicted_min_c": None if p is None else p.predicted_min_c,
            "predicted_min_at": None if p is None else iso(p.predicted_min_at_utc),
            "inversion_c": None if p is None else p.inversion_c,
            "advice": item["advice"],
            "alert_level": a["level"] if a else None, "alert_rank": a["rank"] if a else None,
            "acknowledged": bool(a and any(r["alert_key"] == a["key"] for r in item["acks"])),
            "acknowledged_by": item["acks"][-1].get("who") if item["acks"] else None,
        })
    return out


# ---- HTTP ------------------------------------------------------------------------------------


class StatusServer(ThreadingHTTPServer):
    daemon_threads = True
    allow_reuse_address = True
    request_deadline_s = REQUEST_DEADLINE_S
    max_connections = MAX_CONNECTIONS

    def __init__(self, addr, cfg: Config, store: Store, token: str | None, now_fn, refresh_s: int, evaluator):
        super().__init__(addr, _Handler)
        self.cfg, self.store, self.token, self.now_fn = cfg, store, token, now_fn
        self.refresh_s, self.evaluator = refresh_s, evaluator
        self._cache: tuple[float, str, dict] | None = None
        self._cache_lock = threading.Lock()
        self._slots = threading.BoundedSemaphore(self.max_connections)

    def process_request(self, request, client_address):
        """One thread per connection, at most `max_connections` at once; beyond that the
        connection is closed at once (a flood of slow clients cannot grow the thread count)."""
        if not self._slots.acquire(blocking=False):
            log.warning("status page: %d connections already open; closing one from %s", self.max_connections,
                        client_address[0])
            self.shutdown_request(request)
            return
        try:
            super().process_request(request, client_address)
        except BaseException:
            self._slots.release()
            raise

    def handle_error(self, request, client_address):
        """A client that went away or timed out is routine (a phone losing signal): one log line."""
        import sys

        exc = sys.exc_info()[1]
        if isinstance(exc, (ConnectionError, TimeoutError)):
            log.info("status page: %s from %s", type(exc).__name__, client_address[0])
            return
        log.exception("status page: error while serving %s", client_address[0])

    def process_request_thread(self, request, client_address):
        try:
            super().process_request_thread(request, client_address)
        finally:
            self._slots.release()

    def page(self) -> tuple[str, dict]:
        with self._cache_lock:
            if self._cache and time.monotonic() - self._cache[0] < CACHE_S:
                return self._cache[1], self._cache[2]
            snap = snapshot(self.cfg, self.store, self.now_fn(), self.evaluator)
            snap["site"] = self.cfg.site.name
            page, doc = render_page(snap, self.refresh_s), snapshot_json(snap)
            self._cache = (time.monotonic(), page, doc)
            return page, doc

    def forget_cache(self) -> None:
        with self._cache_lock:
            self._cache = None


class _DeadlineReader(io.RawIOBase):
    """The socket's input with one deadline for the whole request: each read may wait only for
    what is left of it (a per-read timeout alone lets a client drip a byte every few seconds
    forever). Past the deadline a read raises TimeoutError, which ends the request."""

    def __init__(self, sock, deadline: float):
        self.sock, self.deadline = sock, deadline

    def readable(self) -> bool:
        return True

    def readinto(self, b) -> int:
        left = self.deadline - time.monotonic()
        if left <= 0:
            raise TimeoutError("the request did not arrive within its deadline")
        self.sock.settimeout(left)
        return self.sock.recv_into(b)


class _Handler(BaseHTTPRequestHandler):
    server: StatusServer
    server_version = "frostwatch-status"

    def setup(self):
        super().setup()
        deadline = time.monotonic() + self.server.request_deadline_s
        self.rfile = io.BufferedReader(_DeadlineReader(self.connection, deadline))

    def _body_length(self, limit: int) -> int | None:
        """The request's Content-Length when it is a plain number from 0 to `limit`; else the
        request is answered at once (400 for a malformed or negative length, 413 for too
        large) and None is returned: the body is never read on the client's word."""
        text = (self.headers.get("Content-Length") or "0").strip()
        if not text.isdigit():
            self._send(400, "<h1>400</h1><p>Bad Content-Length.</p>")
            return None
        n = int(text)
        if n > limit:
            self._send(413, "<h1>413</h1><p>The request body is too large.</p>")
            return None
        return n

    def log_message(self, fmt, *args):  # to the daemon's log, not stderr
        log.info("%s %s", self.address_string(), fmt % args)

    def _send(self, code: int, body: str, ctype: str = "text/html; charset=utf-8", extra: dict | None = None):
        data = body.encode("utf-8")
        self.connection.settimeout(WRITE_TIMEOUT_S)  # a client that does not read is not waited for long
        self.close_connection = True
        self.send_response(code)
        self.send_header("Content-Type", ctype)
        self.send_header("Content-Length", str(len(data)))
        self.send_header("Cache-Control", "no-store")
        self.send_header("X-Content-Type-Options", "nosniff")
        self.send_header("Referrer-Policy", "no-referrer")
        self.send_header("Content-Security-Policy", "default-src 'none'; style-src 'unsafe-inline'; img-src 'self'; "
                                                    "form-action 'self'")
        for k, v in (extra or {}).items():
            self.send_header(k, v)
        self.end_headers()
        if self.command != "HEAD":
            self.wfile.write(data)

    def _authorised(self, query: dict) -> tuple[bool, bool]:
        """(allowed, set the cookie)."""
        tok = self.server.token
        if tok is None:
            return True, False
        given = (query.get("token") or [""])[0]
        if given and hmac.compare_digest(given.encode(), tok.encode()):
            return True, True
        jar = cookies.SimpleCookie()
        try:
            jar.load(self.headers.get("Cookie", ""))
        except cookies.CookieError:
            return False, False
        c = jar.get(COOKIE)
        return (c is not None and hmac.compare_digest(c.value.encode(), tok.encode())), False

    def _route(self):
        url = urllib.parse.urlsplit(self.path)
        return url.path, urllib.parse.parse_qs(url.query)

    def do_HEAD(self):
        self.do_GET()

    def do_GET(self):
        path, query = self._route()
        if path.startswith("/ack/"):
            return self._ack_form(path[len("/ack/"):])
        if path == "/healthz":
            return self._send(200, "ok\n", "text/plain; charset=utf-8")
        ok, set_cookie = self._authorised(query)
        if not ok:
            log.warning("status page: refused %s %s (no or wrong token)", self.address_string(), path)
            return self._send(403, "<h1>403</h1><p>This status page needs its token: open the link with "
                                   "?token=... that the farm's administrator gave you.</p>")
        extra = {}
        if set_cookie:
            extra["Set-Cookie"] = (f"{COOKIE}={self.server.token}; Path=/; HttpOnly; SameSite=Strict; "
                                   "Max-Age=31536000")
        try:
            page, doc = self.server.page()
        except Exception as exc:  # a broken page must say so, not hang the phone
            log.exception("status page failed")
            return self._send(500, f"<h1>frostwatch status page error</h1><p>{e(str(exc))}</p>")
        if path in ("/", "/index.html"):
            return self._send(200, page, extra=extra)
        if path == "/status.json":
            return self._send(200, json.dumps(doc, indent=1), "application/json", extra=extra)
        return self._send(404, "<h1>404</h1><p>Not here: the status page is at /</p>")

    def _ack_form(self, token: str) -> None:
        if not token or len(token) > 2000:
            return self._send(400, "<h1>400</h1><p>This acknowledgement link is incomplete.</p>")
        t = e(urllib.parse.quote(token, safe=""))
        body = (f'<!doctype html><html lang="en"><head><meta charset="utf-8"><meta name="viewport" '
                f'content="width=device-width, initial-scale=1"><title>Acknowledge</title><style>{PAGE_CSS}</style>'
                f'</head><body><h1>Acknowledge this alert?</h1><p>Pressing the button tells frostwatch that you are '
                f'on it: repeats and escalation of this alert stop.</p><form method="post" action="/ack/{t}">'
                f'<button type="submit" id="confirm">Yes, I am on it</button></form></body></html>')
        self._send(200, body)

    def _gateway_ack(self) -> None:
        """POST /gateway/ack: an SMS or push gateway's callback carrying a person's reply.

        The body (JSON, or a form) holds `token`, or a `text` (the reply as typed) in which the
        one-use token of the alert message is found; `from`/`who` names the sender for the log.
        The signed one-use token is the authority, as for a link; forged or reused ones are refused.
        """
        length = self._body_length(MAX_BODY_BYTES)
        if length is None:
            return None
        raw = self.rfile.read(length).decode("utf-8", "replace") if length else ""
        ctype = (self.headers.get("Content-Type") or "").split(";")[0].strip()
        fields: dict = {}
        try:
            if ctype == "application/json" or raw.lstrip().startswith("{"):
                doc = json.loads(raw or "{}")
                fields = doc if isinstance(doc, dict) else {}
            else:
                fields = {k: v[0] for k, v in urllib.parse.parse_qs(raw).items()}
        except ValueError:
            fields = {}
        token = fields.get("token")
        if not isinstance(token, str) or not token:
            found = GATEWAY_TOKEN_RE.findall(str(fields.get("text") or fields.get("body") or ""))
            token = max(found, key=len) if found else ""
        if not token:
            return self._send(400, json.dumps({"ok": False, "message": "no acknowledgement token in the callback"}),
                              "application/json")
        from frostwatch.alerts.acks import acknowledge_token

        who = str(fields.get("from") or fields.get("who") or "gateway")[:80]
        try:
            ok, message = acknowledge_token(self.server.store, self.server.cfg, token, self.server.now_fn(),
                                            via=f"gateway:{who}")
        except Exception as exc:
            log.exception("gateway acknowledgement failed")
            ok, message = False, f"the acknowledgement could not be recorded: {exc}"
        self.server.forget_cache()
        self._send(200 if ok else 403, json.dumps({"ok": ok, "message": message}), "application/json")

    def do_POST(self):
        path, _ = self._route()
        if path == "/gateway/ack":
            return self._gateway_ack()
        if not path.startswith("/ack/"):
            return self._send(405, "<h1>405</h1><p>This page is read-only.</p>")
        length = self._body_length(4096)
        if length is None:
            return None
        if length:
            self.rfile.read(length)
        token = urllib.parse.unquote(path[len("/ack/"):])
        try:
            from frostwatch.alerts.acks import acknowledge_token
        except ImportError:
            return self._send(503, "<h1>Not available</h1><p>Acknowledgement by link is not installed.</p>")
        try:
            ok, message = acknowledge_token(self.server.store, self.server.cfg, token, self.server.now_fn(), via="link")
        except Exception as exc:
            log.exception("acknowledgement failed")
            ok, message = False, f"the acknowledgement could not be recorded: {exc}"
        self.server.forget_cache()
        code = 200 if ok else 403
        title = "Acknowledged" if ok else "Not acknowledged"
        self._send(code, f'<!doctype html><html lang="en"><head><meta charset="utf-8"><meta name="viewport" '
                         f'content="width=device-width, initial-scale=1"><title>{title}</title><style>{PAGE_CSS}'
                         f'</style></head><body><h1 id="result">{title}</h1><p>{e(message)}</p>'
                         '<p><a href="/">status page</a></p></body></html>')


GATEWAY_TOKEN_RE = re.compile(r"[A-Za-z0-9_\-]+\.[A-Za-z0-9_\-]{16,}\.[A-Za-z0-9_\-]{16,}")


def _utc_now() -> dt.datetime:
    return dt.datetime.now(dt.UTC)


def make_server(
    cfg: Config,
    bind: str = "127.0.0.1",
    port: int = 8470,
    token: str | None = None,
    store: Store | None = None,
    now_fn: Callable[[], dt.datetime] | None = None,
    refresh_s: int | None = None,
    evaluator: Evaluator | None = None,
) -> StatusServer:
    """A bound, not yet serving, status page server. `port=0` picks a free port
    (`server.server_address[1]`). Opens its own store connection unless one is given."""
    if not is_loopback(bind) and not token:
        raise UsageError(
            f"status page: binding {bind} would show the farm to the whole network without a token; "
            "set [status_page] token_file (a file holding a long random string) or bind 127.0.0.1"
        )
    if refresh_s is None:
        refresh_s = status_page_settings(cfg).refresh_s
    st = store or Store.open(cfg.storage.path)
    try:
        return StatusServer((bind, port), cfg, st, token, now_fn or _utc_now, refresh_s, evaluator)
    except OSError as exc:
        if store is None:
            st.close()
        raise UsageError(f"status page: cannot listen on {bind}:{port}: {exc.strerror or exc}") from None


def serve(
    cfg: Config,
    bind: str = "127.0.0.1",
    port: int = 8470,
    token: str | None = None,
    stop: threading.Event | None = None,
    **kw,
) -> None:
    """Serve until `stop` is set (or forever); for the daemon's thread and `frostwatch status-page`."""
    server = make_server(cfg, bind, port, token, **kw)
    host, real_port = server.server_address[:2]
    log.warning("status page on http://%s:%s/%s", host, real_port, "?token=..." if token else "")
    print(f"frostwatch status page: http://{host}:{real_port}/" + ("?token=<your token>" if token else ""), flush=True)
    if stop is None:
        try:
            server.serve_forever()
        except KeyboardInterrupt:
            pass
        finally:
            server.server_close()
        return
    t = threading.Thread(target=server.serve_forever, name="status-page", daemon=True)
    t.start()
    stop.wait()
    server.shutdown()
    server.server_close()
