"""Short acknowledgement codes: "Ack: reply K7QM4X", answered from a phone with one text message.

Each alert has one code per recipient, the same on every channel (the text message, the email,
the push) and in every repeat and escalation: six characters from an alphabet without look-alikes
(no 0/O, 1/I/L or U), at least one digit and one letter (so no word of a reply is mistaken for a
code), random (`secrets`), stored in `ack_codes` with the alert, the recipient and the channel it
was first sent on, and spent by its first use. It expires with the night (`DEFAULT_TTL_S`).
Channels without a recipient (a siren, the console) share the alert's broadcast code. A code
stays tied to one person, so a reply is logged as theirs and taken only from their phone. Stores
written before hold a code per delivery; each of them still acknowledges its alert.

    code = code_for_delivery(store, alert_key, channel, recipient, seq, now_utc)
    ok, message = acknowledge_code(store, cfg, "ok k7qm4x", now_utc, via="sms", source="gateway", sender="+15550100")

Every path that accepts one is authenticated by the code itself (about 6 x 10^8 codes, a handful
live at a time) and by limits on guessing: wrong codes are recorded as `ack` events, and after
`GUESSES_PER_SOURCE` wrong codes from one source in `SOURCE_WINDOW_S`, or `GUESSES_PER_HOUR` from
all sources in an hour, every code is refused until the window has passed (the one-use links, the
status page button and `frostwatch ack KEY` on the Pi still work). A code used twice, or used
after it expired, is refused and recorded. When the SMS gateway says which phone a reply came
from, a code sent to a contact is accepted only from that contact's phone.
"""

from __future__ import annotations

import datetime as dt
import logging
import re
import secrets
import sqlite3

from frostwatch.store import Store, to_ms
from frostwatch.store import acks as stored_acks

log = logging.getLogger("frostwatch.alerts.ackcodes")

ALPHABET = "23456789ABCDEFGHJKMNPQRSTVWXYZ"
DIGITS = "23456789"
CODE_CHARS = 6
DEFAULT_TTL_S = 36 * 3600  # a frost night and the morning after
GUESSES_PER_HOUR = 20  # wrong codes from all sources in the last hour before codes are refused
GUESSES_PER_SOURCE = 5  # wrong codes from one source ...
SOURCE_WINDOW_S = 900  # ... in this window
_CODE = re.compile(rf"(?<![A-Za-z0-9])([{ALPHABET}{ALPHABET.lower()}]{{{CODE_CHARS}}})(?![A-Za-z0-9])")
_GUESS = "refused-code"  # events subject of a wrong code (counted against the limits)


def new_code() -> str:
    """A random code: six characters of ALPHABET with at least one digit and one letter."""
    while True:
        code = "".join(secrets.choice(ALPHABET) for _ in range(CODE_CHARS))
        if any(c in DIGITS for c in code) and any(c not in DIGITS for c in code):
            return code


def find_code(text: str) -> str | None:
    """The code in a reply as typed ("ok k7qm4x", "K7QM-4X" is not one): a six-character word of
    the alphabet with a digit and a letter, upper-cased; None when there is none."""
    for m in _CODE.finditer(text or ""):
        word = m.group(1).upper()
        if any(c in DIGITS for c in word) and any(c not in DIGITS for c in word):
            return word
    return None


def looks_like_code(text: str) -> bool:
    """True when `text` is a bare code (the `frostwatch ack` argument, an MQTT payload)."""
    t = (text or "").strip()
    return len(t) == CODE_CHARS and find_code(t) == t.upper()


def code_for_delivery(store: Store, alert_key: str, channel: str, recipient: str, seq: int, now_utc: dt.datetime,
                      ttl_s: int = DEFAULT_TTL_S) -> str:
    """The code a delivery (alert, channel, recipient, seq) carries: the alert's code for that
    recipient, made on the first delivery to them and the same on every channel, every repeat,
    escalation and retry while it lives (the text message and the email of one alert show one
    code). Once it has expired, the next delivery draws a new one."""
    now_ms = to_ms(now_utc)
    known = stored_acks.live_code(store, alert_key, recipient, now_ms)
    if known:
        return known
    for _ in range(20):
        code = new_code()
        try:
            return stored_acks.add_recipient_code(store, code, alert_key, channel, recipient, seq, now_ms,
                                                  now_ms + ttl_s * 1000)
        except sqlite3.IntegrityError:
            # a live code of another alert or recipient was drawn: draw again
            known = stored_acks.live_code(store, alert_key, recipient, now_ms)
            if known:
                return known
    raise RuntimeError("could not draw an unused acknowledgement code")


def _count(store: Store, since_ms: int, source: str | None = None) -> int:
    return stored_acks.count_ack_events(store, _GUESS, since_ms,
                                        None if source is None else f"[source {source}]")


def _refuse(store: Store, now_utc: dt.datetime, via: str, source: str, why: str, code: str, guess: bool) -> tuple[bool, str]:
    log.warning("acknowledgement code refused (%s, %s): %s [%s]", via, source, why, code)
    try:
        store.add_event(now_utc, "ack", _GUESS if guess else "refused",
                        f"via {via} [source {source}]: {why}; code {code or '(none)'}")
    except Exception:  # noqa: BLE001 - recording the refusal must not turn into a crash
        log.exception("could not record the refused acknowledgement code")
    return False, f"not acknowledged: {why}"


def _digits(phone: str | None) -> str:
    return re.sub(r"\D", "", phone or "")[-10:]


def acknowledge_code(store: Store, cfg, text: str, now_utc: dt.datetime, via: str, source: str = "",
                     sender: str | None = None) -> tuple[bool, str]:
    """Acknowledge the alert whose code is in `text` (a reply as typed, or the bare code).

    `via` is how it came ("sms", "mqtt", "cli"); `source` who or where it came from for the limits
    (the gateway's client address, the MQTT topic); `sender` the phone number a gateway reports,
    checked against the code's recipient. Returns (ok, a message fit to show the person).
    """
    source = (source or via)[:80]
    now_ms = to_ms(now_utc)
    if _count(store, now_ms - SOURCE_WINDOW_S * 1000, source) >= GUESSES_PER_SOURCE or \
            _count(store, now_ms - 3_600_000) >= GUESSES_PER_HOUR:
        return _refuse(store, now_utc, via, source, "too many wrong codes lately: use the link in the message, the "
                       "status page, or `frostwatch ack` on the farm computer", "", guess=False)
    code = find_code(text)
    if code is None:
        return _refuse(store, now_utc, via, source, f"no acknowledgement code (6 characters, e.g. K7QM4X) in "
                       f"{(text or '')[:40]!r}", "", guess=False)
    row = stored_acks.code_row(store, code)
    if row is None:
        return _refuse(store, now_utc, via, source, f"{code} is not a code frostwatch sent", code, guess=True)
    key, recipient, channel, expires_ms, used_ms = row
    if used_ms is not None:
        return _refuse(store, now_utc, via, source, f"{code} has already been used", code, guess=False)
    if now_ms > expires_ms:
        return _refuse(store, now_utc, via, source, f"{code} has expired", code, guess=False)
    contact = None
    if recipient != "*":
        from frostwatch.alerts.config import load_alerts_config

        try:
            contact = load_alerts_config(cfg).contact(recipient) if cfg is not None else None
        except Exception:  # noqa: BLE001 - a config problem must not block an acknowledgement
            contact = None
    if sender and contact is not None and contact.address("phone") and _digits(sender) != _digits(contact.address("phone")):
        return _refuse(store, now_utc, via, source, f"{code} was sent to another phone", code, guess=True)
    who = recipient if recipient != "*" else (str(sender) if sender else "someone")
    from frostwatch.store import outbox as ob  # late: the store module imports nothing from here

    with store.transaction() as c:
        spent = stored_acks.spend_code(c, code, now_ms, f"{via}:{source}")
        known = spent and ob.record_ack(c, key, who, via, now_utc)
    if not spent:
        return _refuse(store, now_utc, via, source, f"{code} has already been used", code, guess=False)
    if not known:
        return _refuse(store, now_utc, via, source, f"no alert {key} in this store", code, guess=False)
    log.warning("acknowledged %s by %s via %s (code first sent on %s)", key, who, via, channel)
    return True, f"acknowledged {key} for {who}; repeats and escalation of this alert stop"
