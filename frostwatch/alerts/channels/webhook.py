"""An HTTP webhook (requests): SMS gateways, push services, a farm chat.

The body is rendered from `body_template`, where {key}, {seq}, {idempotency_key}, {level},
{rank}, {block}, {to}, {title}, {message}, {ack_url}, {code}, {short} and {long} are replaced
(JSON-escaped when the content type is JSON, so a template stays valid JSON whatever the message
holds). With `form = "short"` (the default: SMS gateways and push services) {title} and {message}
are the short form, one text message of at most 160 GSM-7 characters ending "Ack: reply CODE";
`form = "long"` sends the full message as email does. {short} and {long} are always both there. The
idempotency key goes in the `Idempotency-Key` header (IETF httpapi draft). Timeouts, connection
errors, 5xx, 408 and 429 are retried; any other 4xx is a configuration fault and is not.
`timeout_s` bounds the whole request, answer included (frostwatch/alerts/channels/deadline.py):
a server that drips its reply is cut off then. A reply cut short (mid-header or mid-body) is a
failure, never "sent". The URL's query string (a gateway token) is never logged or stored.
A secret header value (a gateway token) comes from `auth_header_file` or a systemd credential
`auth_header_credential`, sent as Authorization.
"""

from __future__ import annotations

from pathlib import Path

import requests
from urllib3.connectionpool import HTTPConnectionPool, HTTPSConnectionPool

from frostwatch.alerts.channels.deadline import Deadline
from frostwatch.alerts.channels.message import Permanent, Transient
from frostwatch.alerts.channels.template import DEFAULT_WEBHOOK_BODY, render
from frostwatch.secrets import read_secret


def _auth(o: dict, base_dir) -> str | None:
    """The Authorization header value from `auth_header_file` or `auth_header_credential`."""
    return read_secret(o, Path(base_dir) if base_dir is not None else None, key="auth_header")


def _session(deadline: Deadline) -> requests.Session:
    """A session whose every connection is watched by `deadline` (and never retried by urllib3)."""

    class Pool(HTTPConnectionPool):
        def _new_conn(self):
            return deadline.watch(super()._new_conn())

    class TlsPool(HTTPSConnectionPool):
        def _new_conn(self):
            return deadline.watch(super()._new_conn())

    adapter = requests.adapters.HTTPAdapter(max_retries=0)
    adapter.poolmanager.pool_classes_by_scheme = {"http": Pool, "https": TlsPool}
    s = requests.Session()
    s.trust_env = True
    s.mount("http://", adapter)
    s.mount("https://", adapter)
    return s


def _complete(r: requests.Response) -> bool:
    """A reply that ended properly: its length was given (and urllib3 checked the body against
    it), or it was chunked, or it has no body by definition, or its body ran to the close. A reply
    with none of these and no body was cut before its headers ended."""
    if r.status_code in (204, 304) or "content-length" in r.headers:
        return True
    if "chunked" in r.headers.get("transfer-encoding", "").lower():
        return True
    return bool(r.content)


def send(channel, msg, to, base_dir=None) -> str:
    o = channel.options
    url = o["url"]
    ctype = o.get("content_type", "application/json")
    title, message = msg.text_for(o.get("form", "short"))
    values = {"key": msg.alert_key, "seq": msg.seq, "idempotency_key": msg.idem_key, "level": msg.level,
              "rank": msg.rank, "block": msg.block, "to": to if to and to != "*" else "", "title": title,
              "message": message, "ack_url": msg.ack_url, "code": msg.code, "short": msg.short, "long": msg.body}
    body = render(o.get("body_template", DEFAULT_WEBHOOK_BODY), values, "json" in ctype)
    headers = {"Content-Type": ctype, "Idempotency-Key": msg.idem_key, "User-Agent": "frostwatch"}
    headers.update({k: str(v) for k, v in (o.get("headers") or {}).items()})
    try:
        auth = _auth(o, base_dir)
    except OSError as exc:
        raise Permanent(f"webhook {channel.name}: cannot read the auth header: {exc}") from None
    if auth:
        headers["Authorization"] = auth
    shown = url.split("?")[0]  # never log a token carried in the query string
    t = channel.timeout_s
    with Deadline(t) as deadline, _session(deadline) as session:
        try:
            r = session.request(o.get("method", "POST"), url, data=body.encode("utf-8"), headers=headers,
                                timeout=(min(3.05, t), t), allow_redirects=False)
        except requests.Timeout:
            raise Transient(f"webhook {shown}: no answer within {t:g} s") from None
        except requests.RequestException as exc:
            if deadline.expired:
                raise Transient(f"webhook {shown}: no complete answer within {t:g} s (the whole request's deadline)") from None
            raise Transient(f"webhook {shown}: {type(exc).__name__} (the reply was refused or cut short)") from None
        if not _complete(r):
            raise Transient(f"webhook {shown}: HTTP {r.status_code} reply cut short (no length and no body); not delivered")
    if r.status_code >= 500 or r.status_code in (408, 429):
        raise Transient(f"webhook {shown}: HTTP {r.status_code}")
    if r.status_code >= 400:
        raise Permanent(f"webhook {shown}: HTTP {r.status_code} (not retried: check the URL, token and template)")
    return f"HTTP {r.status_code}"
