"""SQL of acknowledgements: the install's signing secret, spent one-use marks, and the short codes.

The rules (what is a code, who may use it, the guessing limits) live in `frostwatch.alerts.acks`
and `frostwatch.alerts.ackcodes`; this module only reads and writes their tables (`meta`,
`ack_tokens_used`, `ack_codes`, `events`). Functions taking a connection `c` run inside the
caller's `store.transaction()`; the others take the `Store` and hold its lock themselves.
"""

from __future__ import annotations

import sqlite3

from frostwatch.store.db import Store


def keep_first_meta(store: Store, key: str, value: str) -> str:
    """Store `value` under `key` unless a value is there already (the first writer wins when two
    processes race); returns the stored value."""
    with store.transaction() as c:
        c.execute("INSERT OR IGNORE INTO meta(key, value) VALUES (?,?)", (key, value))
    return store.get_meta(key)


def spend_mark(c: sqlite3.Connection, mark: str, alert_key: str, who: str, via: str, now_ms: int) -> None:
    """Spend a one-use mark (a token's nonce, a contact's "once" mark) inside the caller's
    transaction; raises sqlite3.IntegrityError when it was spent before."""
    c.execute(
        "INSERT INTO ack_tokens_used(nonce, alert_key, recipient, via, used_utc_ms) VALUES (?,?,?,?,?)",
        (mark, alert_key, who, via, now_ms),
    )


def live_code(store: Store, alert_key: str, recipient: str, now_ms: int) -> str | None:
    """The code an alert already has for a recipient (the first drawn that has not expired, on
    whichever channel or repeat it was drawn), None when there is none."""
    with store.lock:
        row = store.conn.execute(
            "SELECT code FROM ack_codes WHERE alert_key=? AND recipient=? AND expires_utc_ms >= ? "
            "ORDER BY issued_utc_ms, code LIMIT 1",
            (alert_key, recipient, now_ms),
        ).fetchone()
    return row[0] if row else None


def add_recipient_code(store: Store, code: str, alert_key: str, channel: str, recipient: str, seq: int,
                       issued_ms: int, expires_ms: int) -> str:
    """Store `code` as the alert's code for a recipient unless a live one is there already (made
    meanwhile by another channel's worker), in one transaction; returns the code that holds.
    An expired code drawn again is replaced; raises sqlite3.IntegrityError when `code` is live
    for another alert or recipient."""
    with store.transaction() as c:
        row = c.execute(
            "SELECT code FROM ack_codes WHERE alert_key=? AND recipient=? AND expires_utc_ms >= ? "
            "ORDER BY issued_utc_ms, code LIMIT 1",
            (alert_key, recipient, issued_ms),
        ).fetchone()
        if row:
            return row[0]
        c.execute("DELETE FROM ack_codes WHERE code=? AND expires_utc_ms < ?", (code, issued_ms))
        # a delivery that had a code of its own before (an expired one) gives its row up
        c.execute("DELETE FROM ack_codes WHERE alert_key=? AND channel=? AND recipient=? AND seq=? "
                  "AND expires_utc_ms < ?", (alert_key, channel, recipient, seq, issued_ms))
        c.execute(
            "INSERT INTO ack_codes(code, alert_key, channel, recipient, seq, issued_utc_ms, expires_utc_ms) "
            "VALUES (?,?,?,?,?,?,?)",
            (code, alert_key, channel, recipient, seq, issued_ms, expires_ms),
        )
    return code


def count_ack_events(store: Store, subject: str, since_ms: int, detail_contains: str | None = None) -> int:
    """`ack` events of one subject since a time, optionally only those whose detail holds a text."""
    sql = "SELECT count(*) FROM events WHERE kind='ack' AND subject=? AND time_utc_ms >= ?"
    args: list = [subject, since_ms]
    if detail_contains is not None:
        sql += " AND detail LIKE ?"
        args.append(f"%{detail_contains}%")
    with store.lock:
        return store.conn.execute(sql, args).fetchone()[0]


def code_row(store: Store, code: str) -> tuple | None:
    """(alert_key, recipient, channel, expires_utc_ms, used_utc_ms) of a code, None when unknown."""
    with store.lock:
        return store.conn.execute(
            "SELECT alert_key, recipient, channel, expires_utc_ms, used_utc_ms FROM ack_codes WHERE code=?", (code,)
        ).fetchone()


def spend_code(c: sqlite3.Connection, code: str, now_ms: int, used_via: str) -> bool:
    """Mark a code used inside the caller's transaction; False when it was used already."""
    return c.execute(
        "UPDATE ack_codes SET used_utc_ms=?, used_via=? WHERE code=? AND used_utc_ms IS NULL", (now_ms, used_via, code)
    ).rowcount == 1
