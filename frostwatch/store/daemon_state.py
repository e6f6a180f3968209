"""SQL the daemon writes once per evaluation: the projections and the blocks' decisions in one
transaction (one fsync per evaluation; SD-card wear, bench/storage.py), and the daemon's events of
one moment in one transaction."""

from __future__ import annotations

import datetime as dt
from collections.abc import Iterable

from frostwatch.decision import Decision
from frostwatch.models import Projection
from frostwatch.store import decisions as stored_decisions
from frostwatch.store.db import Store, to_ms

_PROJECTION_SQL = (
    "INSERT OR REPLACE INTO projections(time_utc_ms, block, predicted_min_c, predicted_min_at_utc_ms, "
    "t10_crossing_utc_ms, band_c, regime, method, detail_json) VALUES (?,?,?,?,?,?,?,?,?)"
)


def save_evaluation(store: Store, projections: Iterable[Projection], meta: dict[str, str],
                    decisions: Iterable[Decision] = ()) -> None:
    """Projections, decisions and meta values (key -> text) in one transaction."""
    rows = [Store._projection_row(p) for p in projections]
    with store.transaction() as c:
        if rows:
            c.executemany(_PROJECTION_SQL, rows)
        stored_decisions.save(c, decisions)
        for k, v in meta.items():
            c.execute("INSERT OR REPLACE INTO meta(key, value) VALUES (?,?)", (k, v))


def add_events(store: Store, events: Iterable[tuple[dt.datetime, str, str, str]]) -> int:
    """(time, kind, subject, detail) events in one transaction; returns how many."""
    rows = [(to_ms(t), kind, subject, detail) for t, kind, subject, detail in events]
    if rows:
        with store.transaction() as c:
            c.executemany("INSERT INTO events(time_utc_ms, kind, subject, detail) VALUES (?,?,?,?)", rows)
    return len(rows)


RULE_STATE_META = "rules.state."  # + block id -> that block's alert-rule state (JSON)


def save_rule_states(store: Store, states: dict[str, str]) -> None:
    """Blocks' alert-rule states (block -> JSON text) in one transaction."""
    if states:
        with store.transaction() as c:
            c.executemany("INSERT OR REPLACE INTO meta(key, value) VALUES (?,?)",
                          [(RULE_STATE_META + b, v) for b, v in states.items()])


def rule_states(store: Store) -> dict[str, str]:
    """Every block's stored alert-rule state (block -> JSON text)."""
    with store.lock:
        rows = store.conn.execute("SELECT key, value FROM meta WHERE substr(key, 1, ?) = ?",
                                  (len(RULE_STATE_META), RULE_STATE_META)).fetchall()
    return {k[len(RULE_STATE_META):]: v for k, v in rows}


HEALTH_META = "health.open"  # the daemon's open health problems (JSON, frostwatch.health.problems_to_json)


def save_health_problems(store: Store, text: str) -> None:
    """The open health problems (JSON text), replacing the ones stored before."""
    store.set_meta(HEALTH_META, text)


def health_problems(store: Store) -> str | None:
    """The open health problems as last stored (JSON text), None when none were stored."""
    return store.get_meta(HEALTH_META)


def last_alert_sequence(store: Store, block: str, night_key: str) -> int:
    """The highest sequence number among the stored alert keys `BLOCK/NIGHT/NNN-level` (0 if none)."""
    prefix = f"{block}/{night_key}/"
    with store.lock:
        rows = store.conn.execute("SELECT substr(key, ?, 3) FROM alerts WHERE substr(key, 1, ?) = ?",
                                  (len(prefix) + 1, len(prefix), prefix)).fetchall()
    return max((int(s) for (s,) in rows if s.isdigit()), default=0)
