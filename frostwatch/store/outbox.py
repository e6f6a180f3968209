"""SQL of the alert outbox (migration 2): alerts, their deliveries, escalation state and acks.

Every function takes a `Store` (or, where it must join a caller's transaction, its connection).
A delivery row is written before its attempt starts and is leased while in flight, so a crash
leaves it to be reclaimed and sent again with the same idempotency key (at least once).
"""

from __future__ import annotations

import datetime as dt
import sqlite3
from collections.abc import Iterable

from frostwatch.models import Alert
from frostwatch.store.db import Store, to_ms


def add_alert_with_deliveries(
    store: Store,
    alert: Alert,
    deliveries: Iterable[dict],
    firing: bool,
    next_repeat_ms: int | None,
) -> bool:
    """Write an alert, its first deliveries and its escalation state in one transaction.

    False (and nothing written) if the alert key is already stored. `deliveries` are dicts with
    channel, recipient, seq, kind, local, body, short_body, next_try_ms (body and short_body: a
    repeat's own words; None sends the alert's).
    """
    with store.transaction() as c:
        cur = c.execute(
            "INSERT OR IGNORE INTO alerts(key, time_utc_ms, block, level, rank, advice, message, resolves, short) "
            "VALUES (?,?,?,?,?,?,?,?,?)",
            (alert.key, to_ms(alert.time_utc), alert.block, alert.level, alert.rank, alert.advice,
             alert.message, alert.resolves, alert.short or None),
        )
        if cur.rowcount != 1:
            return False
        now_ms = to_ms(alert.time_utc)
        c.execute(
            "INSERT OR REPLACE INTO alert_state(alert_key, state, started_utc_ms, next_repeat_utc_ms, step, notices) "
            "VALUES (?,?,?,?,0,1)",
            (alert.key, "firing" if firing else "info", now_ms, next_repeat_ms if firing else None),
        )
        insert_deliveries(c, alert.key, deliveries, now_ms)
    return True


def add_replayed_alert(store: Store, alert: Alert, channel: str) -> bool:
    """`replay`: the alert and its one delivery, on the console (replay prints every alert), recorded
    as sent at the alert's time, so the night report shows the real state. False (nothing written)
    when the alert key is already stored."""
    with store.transaction() as c:
        cur = c.execute(
            "INSERT OR IGNORE INTO alerts(key, time_utc_ms, block, level, rank, advice, message, resolves, short) "
            "VALUES (?,?,?,?,?,?,?,?,?)",
            (alert.key, to_ms(alert.time_utc), alert.block, alert.level, alert.rank, alert.advice,
             alert.message, alert.resolves, alert.short or None),
        )
        if cur.rowcount != 1:
            return False
        ms = to_ms(alert.time_utc)
        c.execute(
            "INSERT OR IGNORE INTO deliveries(alert_key, channel, recipient, attempt, status, next_try_utc_ms, detail, "
            "updated_utc_ms, seq, idem_key, local, kind) VALUES (?,?,?,1,'sent',NULL,?,?,0,?,1,?)",
            (alert.key, channel, "*", "printed by replay", ms, f"{alert.key}:0", "resolved" if alert.resolves else "alert"),
        )
    return True


def insert_deliveries(c: sqlite3.Connection, key: str, deliveries: Iterable[dict], now_ms: int) -> int:
    n = 0
    for d in deliveries:
        cur = c.execute(
            "INSERT OR IGNORE INTO deliveries(alert_key, channel, recipient, attempt, status, next_try_utc_ms, "
            "detail, updated_utc_ms, seq, idem_key, local, kind, body, short_body) "
            "VALUES (?,?,?,0,'pending',?,?,?,?,?,?,?,?,?)",
            (key, d["channel"], d["recipient"], d.get("next_try_ms", now_ms), "", now_ms, d["seq"],
             f"{key}:{d['seq']}", 1 if d.get("local") else 0, d.get("kind", "alert"), d.get("body"),
             d.get("short_body")),
        )
        n += cur.rowcount
    return n


def set_state(c: sqlite3.Connection, keys: Iterable[str], state: str, only_from: tuple[str, ...] = ("firing",)) -> int:
    n = 0
    for k in keys:
        cur = c.execute(
            f"UPDATE alert_state SET state=?, next_repeat_utc_ms=NULL WHERE alert_key=? "
            f"AND state IN ({','.join('?' * len(only_from))})",
            (state, k, *only_from),
        )
        n += cur.rowcount
    return n


def firing_keys(store: Store, block: str, night_prefix: str | None = None) -> list[str]:
    sql = ("SELECT a.key FROM alert_state s JOIN alerts a ON a.key = s.alert_key "
           "WHERE s.state='firing' AND a.block=?")
    args: list = [block]
    if night_prefix:
        sql += " AND a.key LIKE ?"
        args.append(night_prefix + "%")
    with store.lock:
        return [r[0] for r in store.conn.execute(sql, args).fetchall()]


def record_ack(c: sqlite3.Connection, key: str, who: str, via: str, now_utc: dt.datetime) -> bool:
    """Inside the caller's transaction: log the ack and stop the alert's repeats. False if unknown key."""
    if c.execute("SELECT 1 FROM alerts WHERE key=?", (key,)).fetchone() is None:
        return False
    ms = to_ms(now_utc)
    c.execute("INSERT INTO acks(alert_key, who, via, time_utc_ms) VALUES (?,?,?,?)", (key, who, via, ms))
    c.execute(
        "UPDATE alert_state SET state=CASE WHEN state='firing' THEN 'acked' ELSE state END, "
        "next_repeat_utc_ms=NULL, acked_by=coalesce(acked_by, ?), acked_utc_ms=coalesce(acked_utc_ms, ?) "
        "WHERE alert_key=?",
        (who, ms, key),
    )
    # repeats already queued but not yet attempted are dropped: the person has answered
    c.execute(
        "UPDATE deliveries SET status='cancelled', detail='acknowledged before sending', updated_utc_ms=? "
        "WHERE alert_key=? AND status='pending' AND seq > 0",
        (ms, key),
    )
    return True


def due_repeats(store: Store, now_ms: int) -> list[dict]:
    with store.lock:
        return store.query(
            "SELECT s.*, a.block, a.level, a.rank, a.message, a.short FROM alert_state s JOIN alerts a ON a.key = s.alert_key "
            "WHERE s.state='firing' AND s.next_repeat_utc_ms IS NOT NULL AND s.next_repeat_utc_ms <= ? "
            "ORDER BY s.next_repeat_utc_ms",
            [now_ms],
        )


def count_notices(store: Store, block: str, since_ms: int) -> int:
    """Notifications (distinct alert key and seq) for a block since a time, cancelled ones left out:
    what the budget counts."""
    with store.lock:
        (n,) = store.conn.execute(
            "SELECT count(DISTINCT d.idem_key) FROM deliveries d JOIN alerts a ON a.key = d.alert_key "
            "WHERE a.block=? AND d.updated_utc_ms >= ? AND d.kind != 'notice' AND d.status != 'cancelled'",
            (block, since_ms),
        ).fetchone()
    return n


def oldest_notice_ms(store: Store, block: str, since_ms: int) -> int | None:
    """When the oldest notification counted by `count_notices` was made (None when there is none)."""
    with store.lock:
        (ms,) = store.conn.execute(
            "SELECT min(d.updated_utc_ms) FROM deliveries d JOIN alerts a ON a.key = d.alert_key "
            "WHERE a.block=? AND d.updated_utc_ms >= ? AND d.kind != 'notice' AND d.status != 'cancelled'",
            (block, since_ms),
        ).fetchone()
    return None if ms is None else int(ms)


def cancel_waiting_updates(store: Store, keys: Iterable[str], now_ms: int) -> int:
    """Cancel the not yet attempted deliveries of earlier updates among `keys` (a newer update
    replaces them); returns how many."""
    keys = list(keys)
    if not keys:
        return 0
    with store.transaction() as c:
        return c.execute(
            f"UPDATE deliveries SET status='cancelled', detail='replaced by a newer update', updated_utc_ms=? "
            f"WHERE kind='update' AND status='pending' AND attempt=0 AND next_try_utc_ms > ? "
            f"AND alert_key IN ({','.join('?' * len(keys))})",
            (now_ms, now_ms, *keys),
        ).rowcount


def claim_due(store: Store, channel: str, now_ms: int, lease_ms: int, owner: str, limit: int) -> list[dict]:
    """Lease up to `limit` due deliveries of one channel (pending and due, or a lease that expired)."""
    with store.transaction() as c:
        rows = c.execute(
            "SELECT id FROM deliveries WHERE channel=? AND ("
            "(status IN ('pending','retry') AND coalesce(next_try_utc_ms, 0) <= ?) OR "
            "(status='inflight' AND (lease_until_utc_ms < ? OR lease_owner != ?))) "
            "ORDER BY next_try_utc_ms, id LIMIT ?",
            (channel, now_ms, now_ms, owner, limit),
        ).fetchall()
        ids = [r[0] for r in rows]
        for i in ids:
            c.execute(
                "UPDATE deliveries SET status='inflight', attempt=attempt+1, lease_until_utc_ms=?, lease_owner=?, "
                "updated_utc_ms=? WHERE id=?",
                (now_ms + lease_ms, owner, now_ms, i),
            )
    if not ids:
        return []
    with store.lock:
        return store.query(
            f"SELECT d.*, a.block, a.level, a.rank, a.message, a.advice, a.short, a.time_utc_ms AS alert_time_utc_ms "
            f"FROM deliveries d JOIN alerts a ON a.key = d.alert_key WHERE d.id IN ({','.join('?' * len(ids))}) "
            f"ORDER BY d.id",
            ids,
        )


def channels_with_due(store: Store, now_ms: int, owner: str) -> list[str]:
    with store.lock:
        return [r[0] for r in store.conn.execute(
            "SELECT DISTINCT channel FROM deliveries WHERE "
            "(status IN ('pending','retry') AND coalesce(next_try_utc_ms, 0) <= ?) OR "
            "(status='inflight' AND (lease_until_utc_ms < ? OR lease_owner != ?))",
            (now_ms, now_ms, owner),
        ).fetchall()]


def finish_delivery(store: Store, delivery_id: int, status: str, now_ms: int, detail: str,
                    next_try_ms: int | None = None) -> None:
    with store.transaction() as c:
        c.execute(
            "UPDATE deliveries SET status=?, next_try_utc_ms=?, detail=?, updated_utc_ms=?, lease_until_utc_ms=NULL "
            "WHERE id=?",
            (status, next_try_ms, detail[:500], now_ms, delivery_id),
        )


def deliveries_for(store: Store, keys: Iterable[str]) -> list[dict]:
    keys = list(keys)
    if not keys:
        return []
    with store.lock:
        return store.query(
            f"SELECT * FROM deliveries WHERE alert_key IN ({','.join('?' * len(keys))}) ORDER BY id", keys
        )


def acks_for(store: Store, keys: Iterable[str]) -> list[dict]:
    keys = list(keys)
    if not keys:
        return []
    with store.lock:
        return store.query(
            f"SELECT * FROM acks WHERE alert_key IN ({','.join('?' * len(keys))}) ORDER BY time_utc_ms, id", keys
        )


def state_of(store: Store, key: str) -> dict | None:
    with store.lock:
        rows = store.query("SELECT * FROM alert_state WHERE alert_key=?", [key])
    return rows[0] if rows else None


def recent_remote_outcomes(store: Store, since_ms: int) -> list[tuple[str, str]]:
    """(channel, status) of remote deliveries finished since a time, newest first."""
    with store.lock:
        return store.conn.execute(
            "SELECT channel, status FROM deliveries WHERE local=0 AND updated_utc_ms >= ? "
            "AND status IN ('sent','retry','failed') ORDER BY updated_utc_ms DESC",
            (since_ms,),
        ).fetchall()


def set_step(c: sqlite3.Connection, key: str, step: int) -> None:
    """Inside the caller's transaction: how far down its roster an alert has escalated."""
    c.execute("UPDATE alert_state SET step=? WHERE alert_key=?", (step, key))


def alert_keys_of_block(store: Store, block: str) -> list[str]:
    """Every stored alert key of a block (all nights)."""
    with store.lock:
        return [r[0] for r in store.conn.execute("SELECT key FROM alerts WHERE block=?", (block,)).fetchall()]


def count_alerts_with_prefix(store: Store, key_prefix: str) -> int:
    """How many alerts have a key starting with `key_prefix` (a health condition and its
    recoveries: `KEY`, `KEY~1`, `KEY~2`, ...)."""
    with store.lock:
        (n,) = store.conn.execute("SELECT count(*) FROM alerts WHERE key LIKE ?", (key_prefix + "%",)).fetchone()
    return n


def alert_exists(c: sqlite3.Connection, key: str) -> bool:
    return c.execute("SELECT 1 FROM alerts WHERE key=?", (key,)).fetchone() is not None


def firing_keys_up_to_rank(c: sqlite3.Connection, key: str) -> list[str]:
    """Inside the caller's transaction: the firing alerts of the block of alert `key` whose rank is
    at most its rank (an acknowledgement answers them too)."""
    block, rank = c.execute("SELECT block, rank FROM alerts WHERE key=?", (key,)).fetchone()
    return [k for (k,) in c.execute(
        "SELECT a.key FROM alerts a JOIN alert_state s ON s.alert_key=a.key "
        "WHERE a.block=? AND a.rank<=? AND s.state='firing'", (block, rank)).fetchall()]


def postpone_repeat(store: Store, key: str, next_repeat_ms: int) -> None:
    """A repeat held back by the budget: try again at `next_repeat_ms`."""
    with store.transaction() as c:
        c.execute("UPDATE alert_state SET next_repeat_utc_ms=? WHERE alert_key=?", (next_repeat_ms, key))


def add_repeat(store: Store, key: str, deliveries: Iterable[dict], now_ms: int, step: int,
               next_repeat_ms: int) -> None:
    """A repeat or escalation: its deliveries, one notice more, the step reached and the next
    repeat, in one transaction."""
    with store.transaction() as c:
        insert_deliveries(c, key, deliveries, now_ms)
        c.execute("UPDATE alert_state SET notices=notices+1, step=?, next_repeat_utc_ms=? WHERE alert_key=?",
                  (step, next_repeat_ms, key))


def unsent_urgent_remote(store: Store) -> list[tuple]:
    """(alert_key, seq, level, block, recipients joined by commas, body, short_body) of each notice
    of rank >= 3 not yet delivered on a remote channel: what goes out on the local channels when
    remote alerting is degraded (a repeat in its own words)."""
    with store.lock:
        return store.conn.execute(
            "SELECT d.alert_key, d.seq, a.level, a.block, group_concat(DISTINCT d.recipient), max(d.body), "
            "max(d.short_body) FROM deliveries d "
            "JOIN alerts a ON a.key=d.alert_key WHERE d.local=0 AND d.status IN ('retry','inflight','pending') "
            "AND d.kind != 'notice' AND a.rank >= 3 GROUP BY d.alert_key, d.seq").fetchall()


def latest_alert_time_ms(store: Store) -> int | None:
    """When the newest stored alert was raised (None when there is none)."""
    with store.lock:
        (ms,) = store.conn.execute("SELECT max(time_utc_ms) FROM alerts").fetchone()
    return ms
