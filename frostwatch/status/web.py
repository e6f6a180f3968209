"""What the status page and the fleet page share as web pages: the rule for binding beyond
loopback, the page token (a `?token=` link that sets a cookie), the response and its safety
headers, and "how long ago" in words.

Standard library only: the fleet page imports it without the status page's store and advice.
Raises `UsageError` (from `check_bind`) when asked to bind beyond loopback without a token.
"""

from __future__ import annotations

import hmac
import ipaddress
import threading
from http import cookies
from http.server import BaseHTTPRequestHandler, HTTPServer

from frostwatch.errors import UsageError

TOKEN_COOKIE_MAX_AGE_S = 31536000  # a phone keeps the page's cookie for a year
SAFETY_HEADERS = {"Cache-Control": "no-store", "X-Content-Type-Options": "nosniff", "Referrer-Policy": "no-referrer"}


def is_loopback(bind: str) -> bool:
    if bind in ("localhost", "ip6-localhost"):
        return True
    try:
        return ipaddress.ip_address(bind).is_loopback
    except ValueError:
        return False


def check_bind(bind: str, token: str | None, refusal: str) -> None:
    """Raise UsageError(refusal) for an address beyond loopback without a token."""
    if not is_loopback(bind) and not token:
        raise UsageError(refusal)


def token_allowed(token: str | None, query: dict, cookie_header: str, cookie_name: str) -> tuple[bool, bool]:
    """(the request may see the page, the response should set the token cookie).

    No token configured: every request. Else the right `?token=` (then set the cookie) or the
    right cookie; compared in constant time.
    """
    if token is None:
        return True, False
    given = (query.get("token") or [""])[0]
    if given and hmac.compare_digest(given.encode(), token.encode()):
        return True, True
    jar = cookies.SimpleCookie()
    try:
        jar.load(cookie_header)
    except cookies.CookieError:
        return False, False
    c = jar.get(cookie_name)
    return (c is not None and hmac.compare_digest(c.value.encode(), token.encode())), False


def token_cookie(cookie_name: str, token: str) -> dict[str, str]:
    """The Set-Cookie header that keeps the token on the phone (HttpOnly, SameSite=Strict)."""
    return {"Set-Cookie": f"{cookie_name}={token}; Path=/; HttpOnly; SameSite=Strict; Max-Age={TOKEN_COOKIE_MAX_AGE_S}"}


def send(handler: BaseHTTPRequestHandler, code: int, body: str, ctype: str, csp: str,
         extra: dict | None = None) -> None:
    """One whole response with its length, the safety headers and a content security policy."""
    data = body.encode("utf-8")
    handler.send_response(code)
    headers = {"Content-Type": ctype, "Content-Length": str(len(data)), **SAFETY_HEADERS,
               "Content-Security-Policy": csp, **(extra or {})}
    for k, v in headers.items():
        handler.send_header(k, v)
    handler.end_headers()
    if handler.command != "HEAD":
        handler.wfile.write(data)


def serve_until(server: HTTPServer, stop: threading.Event | None, thread_name: str) -> None:
    """Serve until `stop` is set (in a thread of that name), or without one until Ctrl-C; then
    close the server."""
    if stop is None:
        try:
            server.serve_forever()
        except KeyboardInterrupt:
            pass
        finally:
            server.server_close()
        return
    t = threading.Thread(target=server.serve_forever, name=thread_name, daemon=True)
    t.start()
    stop.wait()
    server.shutdown()
    server.server_close()


def ago(seconds: float | None) -> str:
    """'45 s', '12 min', '3.5 h'; 'never' for None."""
    if seconds is None:
        return "never"
    s = max(0.0, seconds)
    if s < 120:
        return f"{s:.0f} s"
    if s < 7200:
        return f"{s / 60:.0f} min"
    return f"{s / 3600:.1f} h"
