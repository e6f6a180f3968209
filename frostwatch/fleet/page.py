"""The fleet page: every site and block on one phone screen, read-only, in the status page's style.

Standard library only (`http.server.ThreadingHTTPServer`), like the status page, whose look it
shares (`frostwatch.status.style`) with its token, headers and bind rule (`frostwatch.status.web`):
it imports those two small modules, never the status page's store and advice. Binds 127.0.0.1 by default; any other address needs a token, and then every request
must carry `?token=...` (which sets a cookie) or that cookie, else 403.

Paths: `/` the page (refreshes itself), `/fleet.json` the same as `frostwatch fleet --json`
(`?site=ID` for one site), `/healthz`.

Raises `UsageError` when asked to bind beyond loopback without a token, or when the port is taken.
"""

from __future__ import annotations

import datetime as dt
import html
import json
import logging
import threading
import urllib.parse
from collections.abc import Callable
from http.server import BaseHTTPRequestHandler, ThreadingHTTPServer

from frostwatch.advice.render import level_word
from frostwatch.display import Display
from frostwatch.errors import UsageError
from frostwatch.fleet.site import parse_utc
from frostwatch.fleet.view import CAUTION
from frostwatch.status import web
from frostwatch.status.style import PAGE_CSS

log = logging.getLogger("frostwatch.fleet")
COOKIE = "frostwatch_fleet_token"
FLEET_PORT = 8471
CSP = "default-src 'none'; style-src 'unsafe-inline'"
e = html.escape

FLEET_CSS = """
.site{border-left-width:12px}.blind{border-left-color:#555;background:#eee}
.blind h2::after{content:" - NOT REACHABLE";color:#a00}
.blk{border-top:1px solid #ddd;padding:.3em 0}.blk:first-of-type{border-top:0}
.unmon{color:#a00;font-weight:700}.stale{color:#555}
.banner{background:#a00;color:#fff;padding:.4em .6em;border-radius:6px;font-weight:700}
"""


def _when(text: str | None, d: Display, now: dt.datetime) -> str:
    if not text:
        return "never"
    t = parse_utc(text)
    return d.time(t) if abs((now - t).total_seconds()) < 20 * 3600 else d.datetime(t)


def _ago(text: str | None, now: dt.datetime) -> str:
    if not text:
        return ""
    return f"{web.ago((now - parse_utc(text)).total_seconds())} ago"


def render_block(b: dict, d: Display, now: dt.datetime, reachable: bool) -> str:
    lvl = f'<span class="lvl">{e(level_word(b["level"]))}</span>'
    why = b.get("reason") or "no fresh crop-height reading"
    mon = "" if b["monitored"] else f'<div class="unmon">NOT MONITORED: {e(why)}</div>'
    proj = ""
    if b.get("predicted_min_c") is not None:
        band = f" ± {d.delta(b['band_c'])}" if b.get("band_c") is not None else ""
        at = f" around {_when(b.get('predicted_min_at'), d, now)}" if b.get("predicted_min_at") else ""
        proj = f"projected minimum <b>{d.temp(b['predicted_min_c'])}</b>{band}{at}"
    cross = (f"; crosses T10 at <b>{_when(b['t10_crossing_at'], d, now)}</b>" if b.get("t10_crossing_at")
             else "; no T10 crossing projected" if proj else "")
    ack = ""
    if b.get("acknowledged") is True:
        ack = '<span class="note">acknowledged</span>'
    elif b.get("acknowledged") is False:
        ack = '<span class="bad">NOT acknowledged</span>'
    asof = f'as of {_when(b.get("as_of"), d, now)}' + ("" if reachable else " (last known)")
    action = f'<div>{e(b["action"])}</div>' if b.get("action") else ""
    return (f'<div class="blk r{b["rank"]}" id="blk-{e(b["block"])}"><b>{e(b["block"])}</b> {lvl} {ack}{mon}'
            f'<div class="note">{proj}{cross}</div>{action}<div class="note stale">{asof}</div></div>')


def render_page(doc: dict, d: Display, refresh_s: int, now: dt.datetime) -> str:
    cards = []
    for s in doc["sites"]:
        reachable = s["reachable"]
        # the site's colour is its order rank: a block not monitored counts as "go-look" (4)
        rank = s.get("order_rank", max((b["rank"] for b in s["blocks"]), default=0))
        cls = f"card site r{rank}" + ("" if reachable else " blind")
        title = e(s.get("name") or s["site"]) + (f' <span class="note">({e(s["site"])})</span>' if s.get("name") else "")
        if reachable:
            contact = f'<p class="note">last contact {_when(s["last_contact"], d, now)} ({_ago(s["last_contact"], now)})</p>'
        else:
            since = (f'NO CONTACT SINCE {_when(s["last_contact"], d, now)}' if s["last_contact"]
                     else "NEVER HEARD FROM")
            contact = (f'<p class="bad">{since}: {e(s.get("why_unreachable") or "")}. '
                       "The states below are the last known.</p>")
        probs = "".join(f"<li>{e(p)}</li>" for p in s.get("problems") or [])
        probs = f'<ul class="note">{probs}</ul>' if probs else ""
        blocks = "".join(render_block(b, d, now, reachable) for b in s["blocks"]) or '<p class="bad">no block state received</p>'
        cards.append(f'<section class="{cls}" id="site-{e(s["site"])}"><h2>{title}</h2>{contact}{probs}{blocks}</section>')
    n_blind = sum(1 for s in doc["sites"] if not s["reachable"])
    banner = ""
    if not doc.get("broker_connected", True):
        banner = (f'<p class="banner">This view has lost the central broker {doc.get("broker", "")} since '
                  f'{_when(doc.get("broker_lost_since"), d, now)}: everything below is old.</p>')
    head = (f'<p class="sub">{len(doc["sites"])} sites; <b class="{"bad" if n_blind else ""}">{n_blind} not reachable</b>; '
            f'most urgent first. As of <b id="as-of">{d.datetime(now)}</b>; refreshes every {refresh_s} s.</p>')
    rej = doc.get("rejected") or {}
    rejected = (f'<p class="note">{rej["count"]} messages could not be read; latest: '
                f'{e(rej["latest"][-1]["topic"])}: {e(rej["latest"][-1]["reason"])}</p>' if rej.get("count") else "")
    empty = "" if cards else '<p class="bad">No site has been heard from on this broker yet.</p>'
    return f"""<!doctype html>
<html lang="en"><head><meta charset="utf-8"><meta name="viewport" content="width=device-width, initial-scale=1">
<meta http-equiv="refresh" content="{refresh_s}"><title>frostwatch fleet</title><style>{PAGE_CSS}{FLEET_CSS}</style></head>
<body><h1>frostwatch fleet</h1>{banner}
<p class="bad" id="caution">{e(CAUTION)}</p>{head}{empty}
{''.join(cards)}{rejected}
<p class="note">frostwatch advises; the grower decides. Projections come from each site's own sensors and may be
off; check with calibrated thermometers at bud height, and follow local agronomic advice and codes.</p></body></html>
"""


class FleetServer(ThreadingHTTPServer):
    daemon_threads = True
    allow_reuse_address = True

    def __init__(self, addr, snapshot: Callable[[str | None], dict], token: str | None, display: Display, refresh_s: int):
        super().__init__(addr, _Handler)
        self.snapshot, self.token, self.display, self.refresh_s = snapshot, token, display, refresh_s


class _Handler(BaseHTTPRequestHandler):
    server: FleetServer
    server_version = "frostwatch-fleet"

    def log_message(self, fmt, *args):
        log.debug("%s %s", self.address_string(), fmt % args)

    def _send(self, code: int, body: str, ctype: str = "text/html; charset=utf-8", extra: dict | None = None):
        web.send(self, code, body, ctype, CSP, extra)

    def do_HEAD(self):
        self.do_GET()

    def do_POST(self):
        self._send(405, "<h1>405</h1><p>The fleet page is read-only.</p>")

    def do_GET(self):
        url = urllib.parse.urlsplit(self.path)
        query = urllib.parse.parse_qs(url.query)
        if url.path == "/healthz":
            return self._send(200, "ok\n", "text/plain; charset=utf-8")
        ok, set_cookie = web.token_allowed(self.server.token, query, self.headers.get("Cookie", ""), COOKIE)
        if not ok:
            return self._send(403, "<h1>403</h1><p>This fleet page needs its token: open the link with ?token=... "
                                   "that its administrator gave you.</p>")
        extra = web.token_cookie(COOKIE, self.server.token) if set_cookie else {}
        only = (query.get("site") or [None])[0]
        try:
            doc = self.server.snapshot(only)
            if url.path in ("/", "/index.html"):
                now = dt.datetime.now(dt.UTC)
                return self._send(200, render_page(doc, self.server.display, self.server.refresh_s, now), extra=extra)
            if url.path == "/fleet.json":
                return self._send(200, json.dumps(doc, indent=1), "application/json", extra=extra)
        except Exception as exc:  # a broken page must say so, not hang the phone
            log.exception("fleet page failed")
            return self._send(500, f"<h1>fleet page error</h1><p>{e(str(exc))}</p>")
        return self._send(404, "<h1>404</h1><p>Not here: the fleet page is at /</p>")


def make_server(snapshot: Callable[[str | None], dict], bind: str = "127.0.0.1", port: int = FLEET_PORT,
                token: str | None = None, display: Display | None = None, refresh_s: int = 30) -> FleetServer:
    """A bound, not yet serving, fleet page server (`port=0` picks a free one)."""
    web.check_bind(bind, token, f"fleet page: binding {bind} would show every farm to the whole network without a "
                                "token; give --token-file (a file holding a long random string) or bind 127.0.0.1")
    try:
        return FleetServer((bind, port), snapshot, token, display or Display(), refresh_s)
    except OSError as exc:
        raise UsageError(f"fleet page: cannot listen on {bind}:{port}: {exc.strerror or exc}") from None


def serve(server: FleetServer, stop: threading.Event | None = None) -> None:
    host, port = server.server_address[:2]
    print(f"frostwatch fleet page: http://{host}:{port}/" + ("?token=<your token>" if server.token else ""), flush=True)
    web.serve_until(server, stop, "fleet-page")
