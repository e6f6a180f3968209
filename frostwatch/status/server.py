"""The local status page's server: one read-only page for whoever is up at night, on a phone.

It shows the daemon's stored decisions and nothing else (`frostwatch.status.snapshot` and
`render`; the same document as `frostwatch status --json` at `/status.json`): it never computes
advice. It runs as its own process (`frostwatch status-page`), beside the daemon, reading the
same store.

Standard library only (`http.server.ThreadingHTTPServer`): no framework on a Pi. It binds
127.0.0.1 by default; any other address needs a token (`[status_page] token_file` or `token`),
and then every request must carry `?token=...` (which sets a cookie) or that cookie, else 403.
Acknowledgement links (`/ack/<token>`) are exempt from the page token: the ack token is itself
signed and one-use (frostwatch.alerts.acks); GET shows a confirm button, POST acknowledges.

    server = make_server(cfg, "127.0.0.1", 0)        # tests: port 0 picks a free one
    serve(cfg, bind, port, token)                    # `frostwatch status-page`

Paths: `/` the page, `/status.json` the status document (DESIGN.md 1.4), `/ack/<token>`, `/healthz`, and
`POST /gateway/ack` for an SMS or push gateway's reply callback.
Raises `UsageError` when asked to bind beyond loopback without a token.
"""

from __future__ import annotations

import datetime as dt
import html
import io
import json
import logging
import threading
import time
import urllib.parse
from collections.abc import Callable
from http.server import BaseHTTPRequestHandler, ThreadingHTTPServer

from frostwatch.alerts.ackcodes import acknowledge_code
from frostwatch.alerts.acks import acknowledge_token
from frostwatch.config import Config
from frostwatch.errors import UsageError
from frostwatch.reports.settings import status_page_settings
from frostwatch.status import web
from frostwatch.status.gateway import reply_from_callback
from frostwatch.status.render import ack_form_page, ack_result_page, render_page
from frostwatch.status.snapshot import snapshot
from frostwatch.store import Store

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
CSP = "default-src 'none'; style-src 'unsafe-inline'; img-src 'self'; form-action 'self'"
e = html.escape


# ---- HTTP ------------------------------------------------------------------------------------


class StatusServer(ThreadingHTTPServer):
    daemon_threads = True
    allow_reuse_address = True
    request_deadline_s = REQUEST_DEADLINE_S
    max_connections = MAX_CONNECTIONS

    def __init__(self, addr, cfg: Config, store: Store, token: str | None, now_fn, refresh_s: int):
        super().__init__(addr, _Handler)
        self.cfg, self.store, self.token, self.now_fn = cfg, store, token, now_fn
        self.refresh_s = refresh_s
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
            snap = snapshot(self.cfg, self.store, self.now_fn())
            page, doc = render_page(snap, self.refresh_s), snap["doc"]
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
        self.connection.settimeout(WRITE_TIMEOUT_S)  # a client that does not read is not waited for long
        self.close_connection = True
        web.send(self, code, body, ctype, CSP, extra)

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
        ok, set_cookie = web.token_allowed(self.server.token, query, self.headers.get("Cookie", ""), COOKIE)
        if not ok:
            log.warning("status page: refused %s %s (no or wrong token)", self.address_string(), path)
            return self._send(403, "<h1>403</h1><p>This status page needs its token: open the link with "
                                   "?token=... that the farm's administrator gave you.</p>")
        extra = web.token_cookie(COOKIE, self.server.token) if set_cookie else {}
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
        self._send(200, ack_form_page(urllib.parse.quote(token, safe="")))

    def _gateway_ack(self) -> None:
        """POST /gateway/ack: an SMS or push gateway's callback carrying a person's reply.

        The body is read by frostwatch.status.gateway (`token`, `code`, or a `text` in which
        either is found; `from`/`who`). The signed one-use token or the one-use code is the
        authority; forged, unknown, reused and expired ones are refused, wrong codes count against
        the guessing limits (frostwatch.alerts.ackcodes), and a code sent to a contact is accepted
        only from that contact's phone when the gateway gives `from`.
        """
        length = self._body_length(MAX_BODY_BYTES)
        if length is None:
            return None
        raw = self.rfile.read(length).decode("utf-8", "replace") if length else ""
        reply = reply_from_callback(raw, (self.headers.get("Content-Type") or "").split(";")[0].strip())
        if not reply.token and not reply.code:
            return self._send(400, json.dumps({"ok": False, "message": "no acknowledgement code or token in the callback"}),
                              "application/json")
        try:
            if reply.token:
                ok, message = acknowledge_token(self.server.store, self.server.cfg, reply.token, self.server.now_fn(),
                                                via=f"gateway:{reply.who}")
            else:
                ok, message = acknowledge_code(self.server.store, self.server.cfg, reply.code, self.server.now_fn(),
                                               via="sms", source=f"gateway {self.client_address[0]}",
                                               sender=reply.sender)
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
            ok, message = acknowledge_token(self.server.store, self.server.cfg, token, self.server.now_fn(), via="link")
        except Exception as exc:
            log.exception("acknowledgement failed")
            ok, message = False, f"the acknowledgement could not be recorded: {exc}"
        self.server.forget_cache()
        self._send(200 if ok else 403, ack_result_page(ok, message))



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
) -> StatusServer:
    """A bound, not yet serving, status page server. `port=0` picks a free port
    (`server.server_address[1]`). Opens its own store connection unless one is given."""
    web.check_bind(bind, token, f"status page: binding {bind} would show the farm to the whole network without a "
                                "token; set [status_page] token_file (a file holding a long random string) or bind "
                                "127.0.0.1")
    if refresh_s is None:
        refresh_s = status_page_settings(cfg).refresh_s
    st = store or Store.open(cfg.storage.path)
    try:
        return StatusServer((bind, port), cfg, st, token, now_fn or _utc_now, refresh_s)
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
    web.serve_until(server, stop, "status-page")
