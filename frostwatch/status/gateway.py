"""What an SMS or push gateway's reply callback says (POST /gateway/ack on the status page), pure.

    reply = reply_from_callback(body_text, "application/json")

The body is JSON or a form with `token`, or `code`, or `text`/`body` (the reply as typed, e.g.
"ok K7QM4X") in which the one-use token or the acknowledgement code is found; `from`/`who`
names the sender. Any body gives a `GatewayReply` (empty token and code when there is neither);
this never raises, whatever the gateway or anyone else posts. Whether the token or code is
good is frostwatch.alerts.acks' and .ackcodes' to say.
"""

from __future__ import annotations

import json
import re
import urllib.parse
from dataclasses import dataclass

from frostwatch.alerts.ackcodes import find_code

TOKEN_RE = re.compile(r"[A-Za-z0-9_\-]+\.[A-Za-z0-9_\-]{16,}\.[A-Za-z0-9_\-]{16,}")  # a signed one-use token
MAX_REPLY_CHARS = 500
MAX_WHO_CHARS = 80


@dataclass(frozen=True)
class GatewayReply:
    token: str  # the signed one-use token, or ""
    code: str  # the reply holding an acknowledgement code (at most 500 characters), or ""
    who: str  # the sender as the gateway names it, for the record (at most 80 characters)
    sender: str | None  # `from` when the gateway gives it as text: a code is accepted only from its contact


def _fields(raw: str, content_type: str) -> dict:
    try:
        if content_type == "application/json" or raw.lstrip().startswith("{"):
            doc = json.loads(raw or "{}")
            return doc if isinstance(doc, dict) else {}
        return {k: v[0] for k, v in urllib.parse.parse_qs(raw).items()}
    except (ValueError, RecursionError):  # not JSON, or nested deeper than the parser goes
        return {}


def _text(value: object) -> str:
    """A field as text: strings and numbers; anything else (lists, objects) is no text."""
    if isinstance(value, str):
        return value
    return str(value) if isinstance(value, (int, float)) else ""


def reply_from_callback(raw: str, content_type: str) -> GatewayReply:
    """The token or code a callback body carries, and who sent it (see the module's comment)."""
    fields = _fields(raw, content_type)
    token = fields.get("token")
    reply = (_text(fields.get("text")) or _text(fields.get("body")))[:MAX_REPLY_CHARS]
    if not isinstance(token, str) or not token:
        found = TOKEN_RE.findall(reply)
        token = max(found, key=len) if found else ""
    code = fields.get("code") if isinstance(fields.get("code"), str) else ""
    if not token and not code and find_code(reply):
        code = reply
    who = (_text(fields.get("from")) or _text(fields.get("who")) or "gateway")[:MAX_WHO_CHARS]
    sender = fields.get("from") if isinstance(fields.get("from"), str) else None
    return GatewayReply(token, code[:MAX_REPLY_CHARS], who, sender)
