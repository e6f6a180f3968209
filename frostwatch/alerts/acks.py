"""One-use acknowledgement links: unforgeable tokens for "I'm on it" from a phone.

A token names one alert and one recipient, carries a random nonce and (optionally) an expiry, and
is signed with HMAC-SHA256 under a per-install secret. The secret lives in the store's meta table
(`ack_secret`, 32 random bytes made on first use) unless `[alerts] ack_secret_file` names a file.
A token is spent the first time it is used: its nonce goes into `ack_tokens_used` in the same
transaction as the acknowledgement, so a second use (or a race of two) is refused. Forged,
expired and reused tokens are refused, logged and recorded as `ack` events in the store.

    token = ack_link_token(store, alert_key, recipient, issued_utc=now)   # put it in a link
    ok, message = acknowledge_token(store, cfg, token, now_utc, via="link")

The status page serves the link; this module only makes and checks tokens.
"""

from __future__ import annotations

import base64
import datetime as dt
import hashlib
import hmac
import json
import logging
import secrets
import sqlite3
from pathlib import Path

from frostwatch.secrets import read_secret, read_secret_file, secret_path
from frostwatch.store import Store, to_ms
from frostwatch.store import acks as stored_acks

log = logging.getLogger("frostwatch.alerts.acks")

TOKEN_VERSION = "a1"
DEFAULT_TTL_S = 36 * 3600  # a frost night and the morning after
_META_KEY = "ack_secret"


def _b64(b: bytes) -> str:
    return base64.urlsafe_b64encode(b).rstrip(b"=").decode("ascii")


def _unb64(s: str) -> bytes:
    return base64.urlsafe_b64decode(s + "=" * (-len(s) % 4))


def install_secret(store: Store, cfg=None) -> bytes:
    """The per-install signing secret: from `[alerts] ack_secret_file`, else the store (made once)."""
    path = None
    if cfg is not None:
        path = (getattr(cfg, "alerts", None) or {}).get("ack_secret_file")
    if path:
        base = Path(cfg.path).parent if getattr(cfg, "path", None) else None
        data = read_secret_file(path, "alerts.ack_secret_file", base, as_bytes=True)
        if len(data) < 16:
            raise ValueError(f"alerts.ack_secret_file: {secret_path(path, base)} holds fewer than 16 bytes; "
                             "expected a long random secret (e.g. `openssl rand -hex 32 > FILE`)")
        return data
    value = store.get_meta(_META_KEY)
    if value is None:
        value = stored_acks.keep_first_meta(store, _META_KEY, secrets.token_hex(32))
    return bytes.fromhex(value)


def _sign(secret: bytes, body: str) -> str:
    return _b64(hmac.new(secret, body.encode("ascii"), hashlib.sha256).digest())


def ack_link_token(
    store_or_secret: Store | bytes,
    alert_key: str,
    recipient: str,
    *,
    issued_utc: dt.datetime | None = None,
    ttl_s: int = DEFAULT_TTL_S,
    cfg=None,
) -> str:
    """A signed one-use token acknowledging `alert_key` on behalf of `recipient`.

    `store_or_secret` is the Store (the secret is read or made there) or the secret bytes. With
    `issued_utc` the token expires `ttl_s` seconds later; without it, it never expires (it is
    still one-use).
    """
    secret = store_or_secret if isinstance(store_or_secret, bytes) else install_secret(store_or_secret, cfg)
    payload = {"k": alert_key, "r": recipient, "n": secrets.token_hex(12)}
    if issued_utc is not None:
        payload["e"] = int(issued_utc.timestamp()) + int(ttl_s)
    body = TOKEN_VERSION + "." + _b64(json.dumps(payload, separators=(",", ":"), sort_keys=True).encode())
    return body + "." + _sign(secret, body)


def read_token(secret: bytes, token: str) -> dict:
    """The checked payload of a token; ValueError saying why it is refused."""
    if not isinstance(token, str) or len(token) > 2000:
        raise ValueError("not a token")
    parts = token.strip().split(".")
    if len(parts) != 3 or parts[0] != TOKEN_VERSION:
        raise ValueError("not a frostwatch acknowledgement token")
    body = parts[0] + "." + parts[1]
    if not hmac.compare_digest(_sign(secret, body), parts[2]):
        raise ValueError("the signature does not match (forged or altered token)")
    try:
        payload = json.loads(_unb64(parts[1]))
    except (ValueError, UnicodeDecodeError):
        raise ValueError("the token body is unreadable") from None
    if not isinstance(payload, dict) or not isinstance(payload.get("k"), str) or not isinstance(payload.get("n"), str):
        raise ValueError("the token body is incomplete")
    return payload


def _refuse(store: Store, now_utc: dt.datetime, via: str, why: str, token: str) -> tuple[bool, str]:
    shown = (token or "")[:24] + ("..." if token and len(token) > 24 else "")
    log.warning("acknowledgement refused (%s): %s [%s]", via, why, shown)
    try:
        store.add_event(now_utc, "ack", "refused", f"via {via}: {why}; token {shown}")
    except Exception:  # noqa: BLE001 - logging the refusal must not turn into a crash
        log.exception("could not record the refused acknowledgement")
    return False, f"not acknowledged: {why}"


def acknowledge_token(store: Store, cfg, token: str, now_utc: dt.datetime, via: str = "link") -> tuple[bool, str]:
    """Spend a token: acknowledge its alert once. Returns (ok, a message fit to show the person)."""
    from frostwatch.store import outbox as ob  # late: the store module imports nothing from here

    try:
        secret = install_secret(store, cfg)
    except (OSError, ValueError) as exc:
        return _refuse(store, now_utc, via, f"the acknowledgement secret cannot be read: {exc}", token)
    try:
        payload = read_token(secret, token)
    except ValueError as exc:
        return _refuse(store, now_utc, via, str(exc), token)
    expires = payload.get("e")
    if isinstance(expires, int) and now_utc.timestamp() > expires:
        return _refuse(store, now_utc, via, "the link has expired", token)
    key, who = payload["k"], str(payload.get("r") or "someone")
    try:
        with store.transaction() as c:
            stored_acks.spend_mark(c, payload["n"], key, who, via, to_ms(now_utc))
            known = ob.record_ack(c, key, who, via, now_utc)
            if not known:
                raise LookupError(key)
    except sqlite3.IntegrityError:
        return _refuse(store, now_utc, via, "this link has already been used", token)
    except LookupError:
        return _refuse(store, now_utc, via, f"no alert {key} in this store", token)
    log.warning("acknowledged %s by %s via %s", key, who, via)
    return True, f"acknowledged {key} for {who}; repeats and escalation of this alert stop"


MAX_MQTT_ACK_BYTES = 4096
MIN_CONTACT_SECRET_CHARS = 16
_NEEDS = ('an acknowledgement over MQTT needs the signed one-use token of the alert\'s link, the '
          'acknowledgement code of the message ({"code": "K7QM4X"} or the bare code), or '
          '{"key": "<alert key>", "who": "<contact>", "secret": "<that contact\'s ack secret>"}')


def contact_secret(cfg, contact) -> str | None:
    """A contact's acknowledgement secret ([[contacts]] ack_secret_file or ack_secret_credential),
    None when the contact has none. Raises OSError or ValueError when it cannot be used."""
    if not contact.ack_secret:
        return None
    base = Path(cfg.path).parent if getattr(cfg, "path", None) else None
    value = read_secret(contact.ack_secret, base, key="ack_secret")
    if value is None:
        return None
    if len(value) < MIN_CONTACT_SECRET_CHARS:
        raise ValueError(f"the ack secret of contact {contact.name!r} is shorter than {MIN_CONTACT_SECRET_CHARS} characters")
    return value


def acknowledge_mqtt(store: Store, cfg, outbox, payload: bytes, now_utc: dt.datetime) -> tuple[bool, str]:
    """An acknowledgement arriving on the MQTT ack topic (`[alerts] ack_topic`, default
    `{prefix}/ack`). Accepted forms, each authenticated and good once:

    - the signed one-use token of the alert's link (`ack_link_token`), bare or as {"token": "..."};
    - the message's one-use acknowledgement code (`frostwatch.alerts.ackcodes`), bare or as
      {"code": "K7QM4X"}, with the guessing limits of every code path;
    - {"key": "<alert key>", "who": "<contact name>", "secret": "<that contact's ack secret>"}
      (`[[contacts]] ack_secret_file` or `ack_secret_credential`); a second one for the same alert
      and person is a replay and is refused.

    A bare alert key (alert keys follow a pattern anyone can guess) is refused, like a forged,
    expired or spent token, a wrong secret or an unreadable payload: logged and recorded as an
    `ack` event. Returns (ok, message).
    """
    if len(payload) > MAX_MQTT_ACK_BYTES:
        return _refuse(store, now_utc, "mqtt", f"payload of {len(payload)} bytes is too large", "")
    try:
        text = payload.decode("utf-8").strip()
    except UnicodeDecodeError:
        return _refuse(store, now_utc, "mqtt", "payload is not UTF-8", "")
    if text.startswith(TOKEN_VERSION + "."):
        return acknowledge_token(store, cfg, text, now_utc, via="mqtt")
    from frostwatch.alerts import ackcodes

    if ackcodes.looks_like_code(text):
        return ackcodes.acknowledge_code(store, cfg, text, now_utc, via="mqtt", source="mqtt")
    try:
        doc = json.loads(text)
    except (ValueError, RecursionError):
        return _refuse(store, now_utc, "mqtt", "neither a token nor JSON; " + _NEEDS, text)
    if isinstance(doc, dict) and isinstance(doc.get("token"), str):
        return acknowledge_token(store, cfg, doc["token"], now_utc, via="mqtt")
    if isinstance(doc, dict) and isinstance(doc.get("code"), str):
        return ackcodes.acknowledge_code(store, cfg, doc["code"][:40], now_utc, via="mqtt", source="mqtt")
    if not isinstance(doc, dict) or not isinstance(doc.get("key"), str) or not doc["key"].strip():
        return _refuse(store, now_utc, "mqtt", _NEEDS, text)
    key = doc["key"].strip()[:300]
    who = doc.get("who")
    secret = doc.get("secret")
    if not isinstance(secret, str) or not secret:
        return _refuse(store, now_utc, "mqtt", f"alert {key} named without a token or a contact's secret; " + _NEEDS, key)
    if not isinstance(who, str) or not who.strip():
        return _refuse(store, now_utc, "mqtt", f"alert {key}: no contact named in \"who\"", key)
    who = who.strip()[:100]
    person = outbox.ac.contact(who)
    if person is None:
        return _refuse(store, now_utc, "mqtt", f"alert {key}: {who!r} is not a contact", key)
    try:
        expected = contact_secret(cfg, person)
    except (OSError, ValueError) as exc:
        return _refuse(store, now_utc, "mqtt", f"alert {key}: the ack secret of {who!r} cannot be used: {exc}", key)
    if expected is None:
        return _refuse(store, now_utc, "mqtt", f"alert {key}: contact {who!r} has no ack secret configured", key)
    if not hmac.compare_digest(secret.encode("utf-8"), expected.encode("utf-8")):
        return _refuse(store, now_utc, "mqtt", f"alert {key}: wrong secret for {who!r}", key)
    try:
        known = outbox.acknowledge(key, who, "mqtt", now_utc, once=f"contact:{who}:{key}")
    except sqlite3.IntegrityError:
        return _refuse(store, now_utc, "mqtt", f"alert {key} was already acknowledged by {who} this way (a replay)", key)
    if not known:
        return _refuse(store, now_utc, "mqtt", f"no alert {key} in this store", key)
    return True, f"acknowledged {key} for {who}"
