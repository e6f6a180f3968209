"""The status every reader shows, from the daemon's stored decisions (never a fresh computation).

    doc = status_document(cfg, store, now_utc)     # `frostwatch status --json` and GET /status.json
    decision_json(decision, now_utc, liveness, display, cfg)   # one block, as published or shown

A block is monitored only while its stored decision says its crop-height sensor was fresh, that
reading has not gone stale since, the decision itself is recent, and the daemon's heartbeat is
current. Otherwise its level is "go-look" with the reason and since when, whatever the last
frost level was (that stays in `frost_level`). Raises `StoreError` when the store cannot be read.
"""

from __future__ import annotations

import dataclasses
import datetime as dt
import json
from dataclasses import dataclass

from frostwatch.advice import render
from frostwatch.advice.codec import iso_utc, parse_utc
from frostwatch.advice.message import monitoring_reason, not_monitored_headline
from frostwatch.advice.plan import BASE_CAUTIONS, Step
from frostwatch.advice.render import Notice, risk_reason
from frostwatch.alerts.levels import UNMONITORED, level_name, rank_of, step_for_level
from frostwatch.config import Config
from frostwatch.decision import Decision, Monitoring, MonitorReason
from frostwatch.display import Display
from frostwatch.night import night_at
from frostwatch.store import Store
from frostwatch.store import decisions as stored

HEARTBEAT_META = "daemon.heartbeat"  # written by the daemon (frostwatch.daemon)
HEARTBEAT_SLACK_S = 15.0  # a heartbeat is current within two store intervals and this much


@dataclass(frozen=True)
class Liveness:
    """Is the daemon running, judged from the heartbeat it stores."""

    alive: bool
    last_beat_utc: dt.datetime | None
    stopped: bool  # it stopped cleanly (SIGTERM) and said so
    age_s: float | None
    doc: dict | None = None


def liveness(heartbeat: dict | None, now_utc: dt.datetime) -> Liveness:
    """The daemon is alive while its stored heartbeat is no older than twice the interval at which
    it stores one, plus HEARTBEAT_SLACK_S, and it has not said it stopped."""
    if not heartbeat or not heartbeat.get("time"):
        return Liveness(False, None, False, None, heartbeat)
    try:
        t = parse_utc(heartbeat["time"])
    except ValueError:
        return Liveness(False, None, False, None, heartbeat)
    every = max(float(heartbeat.get("stored_every_s") or 60.0), float(heartbeat.get("heartbeat_s") or 0.0))
    age = (now_utc - t).total_seconds()
    stopped = bool(heartbeat.get("stopped"))
    alive = not stopped and age <= 2.0 * every + HEARTBEAT_SLACK_S
    return Liveness(alive, t, stopped, round(age, 1), heartbeat)


def read_liveness(store: Store, now_utc: dt.datetime) -> Liveness:
    raw = store.get_meta(HEARTBEAT_META)
    try:
        hb = json.loads(raw) if raw else None
    except ValueError:
        hb = None
    return liveness(hb if isinstance(hb, dict) else None, now_utc)


def evaluation_limit_s(cfg: Config, now_utc: dt.datetime) -> float:
    """How old the newest decision may be: two of the daemon's evaluation intervals and a minute
    (the night interval inside the watch window, the day interval outside it)."""
    from frostwatch.daemon_settings import daemon_settings

    s = daemon_settings(cfg)
    night = night_at(cfg.site.latitude, cfg.site.longitude, cfg.site.tz, now_utc)
    interval_min = s.night_interval_min if night.contains(now_utc) else s.day_interval_min
    return 2.0 * interval_min * 60.0 + 60.0


def effective_monitoring(decision: Decision | None, live: Liveness, now_utc: dt.datetime, limit_s: float) -> Monitoring:
    """Monitoring as a reader sees it now: the stored state, unless the daemon stopped, the
    decision is stale, or its newest reading has gone stale since."""
    if decision is None:
        if not live.alive:
            return Monitoring(False, MonitorReason.DAEMON_STOPPED, since_utc=live.last_beat_utc)
        return Monitoring(False, MonitorReason.NO_EVALUATION)
    m = decision.monitoring
    if not live.alive:
        since = live.last_beat_utc or decision.as_of_utc
        return dataclasses.replace(m, monitored=False, reason=MonitorReason.DAEMON_STOPPED, since_utc=since)
    if (now_utc - decision.as_of_utc).total_seconds() > limit_s:
        return dataclasses.replace(m, monitored=False, reason=MonitorReason.NO_EVALUATION, since_utc=decision.as_of_utc)
    if not m.monitored:
        return m
    if m.fresh_until_utc is not None and now_utc > m.fresh_until_utc:
        return dataclasses.replace(m, monitored=False, reason=MonitorReason.SILENT, since_utc=m.last_reading_utc)
    return m


def _proj_json(d: Decision) -> dict:
    p, plan = d.projection, d.plan
    return {
        "station": p.station, "air_temp_c": p.air_temp_c, "dew_point_c": p.dew_point_c, "wet_bulb_c": p.wet_bulb_c,
        "predicted_min_c": p.predicted_min_c, "predicted_min_at": iso_utc(p.predicted_min_at_utc),
        "band_c": p.band_c, "band_low_c": p.band_low_c, "band_high_c": p.band_high_c,
        "trigger": plan.trigger.value, "trigger_line_c": plan.line_c, "crossing_at": iso_utc(plan.crossing_utc),
        "t10_crossing_at": iso_utc(p.crossings_utc.get("t10")), "inversion_c": p.inversion_c,
        "wind_speed_m_s": p.wind_speed_m_s, "regime": p.regime,
    }


def decision_json(decision: Decision | None, block_id: str, now_utc: dt.datetime, live: Liveness, display: Display,
                  limit_s: float, name: str = "") -> dict:
    """One block's status as `status --json` shows it (and the fleet view will publish).

    Keys of the contract (DESIGN.md 1.4): block, level, rank, monitored, as_of, reason; and more:
    frost_level/frost_rank (the last frost level, kept while not monitored), since (not monitored
    since), headline, action, step, projection (with band and crossing), ready_by, inputs, and
    cautions (the sentences that travel with the advice: every screen that shows advice shows them).
    """
    m = effective_monitoring(decision, live, now_utc, limit_s)
    base = {"block": block_id, "name": name}
    if decision is None:
        reason = monitoring_reason(m, display, now_utc, daemon_stopped_utc=live.last_beat_utc)
        return {**base, "level": UNMONITORED, "rank": rank_of(UNMONITORED), "monitored": False,
                "as_of": iso_utc(now_utc), "reason": reason, "since": iso_utc(m.since_utc), "evaluated_at": None,
                "frost_level": None, "frost_rank": None, "step": Step.CHECK_SENSORS.value,
                "headline": f"{not_monitored_headline(block_id, m.since_utc, display)}: {reason}",
                "action": "go and check the block and its sensors: frostwatch cannot see it",
                "projection": None, "ready_by": None, "inputs": {}, "alert_key": None,
                "cautions": [render.CAUTION_TEXT[c] for c in BASE_CAUTIONS]}
    plan = decision.plan
    if m.monitored:
        level, step = level_name(decision.level), decision.step  # a decision stored before 0.2: the new name
        # the headline and action of `advice.message.compose(..., Notice.STATE)`, without the
        # whole message's other lines (the published document shows these two)
        headline = render.headline(block_id, level, step, plan, display, Notice.STATE)
        action = render.action(step, plan, display)
        reason = risk_reason(plan, display)
    else:
        level, step = UNMONITORED, step_for_level(UNMONITORED, plan)
        reason = monitoring_reason(m, display, now_utc, daemon_stopped_utc=live.last_beat_utc,
                                   evaluated_utc=decision.as_of_utc)
        headline = f"{not_monitored_headline(block_id, m.since_utc, display)}: {reason}"
        action = "go and check the block and its sensors: frostwatch cannot see it"
    return {
        **base, "level": level, "rank": rank_of(level), "monitored": m.monitored,
        "as_of": iso_utc(decision.as_of_utc), "reason": reason,
        "since": None if m.monitored else iso_utc(m.since_utc), "evaluated_at": iso_utc(decision.as_of_utc),
        "frost_level": level_name(decision.frost_level), "frost_rank": rank_of(decision.frost_level),
        "step": step.value,
        "headline": headline, "action": action, "projection": _proj_json(decision),
        "ready_by": iso_utc(plan.ready_by_utc), "alert_key": decision.alert_key,
        "inputs": {k: {"at": iso_utc(t), "age_s": _age_s(now_utc, t)} for k, t in sorted(decision.inputs_utc.items())},
        "cautions": render.cautions(plan, display),
    }


_AGES: tuple = (None, {})  # (the instant, {reading time: its age then [s]}): the last instant asked


def _age_s(now_utc: dt.datetime, t: dt.datetime) -> float:
    """round((now - t).total_seconds(), 1), kept for the instant: every block's inputs of an
    evaluation are read at the same few times. (One tuple, read once and replaced whole: a
    status page's thread and the daemon's never mix two instants' ages.)"""
    global _AGES
    held = _AGES
    if held[0] != now_utc:
        held = _AGES = (now_utc, {})
    ages = held[1]
    age = ages.get(t)
    if age is None:
        age = ages[t] = round((now_utc - t).total_seconds(), 1)
    return age


def _daemon_json(live: Liveness) -> dict | None:
    hb = live.doc
    if hb is None:
        return None
    return {**hb, "alive": live.alive, "last_heartbeat": iso_utc(live.last_beat_utc), "heartbeat_age_s": live.age_s,
            "age_s": live.age_s, "stopped_at": iso_utc(live.last_beat_utc) if live.stopped else None}


def status_document(cfg: Config, store: Store, now_utc: dt.datetime) -> dict:
    """The status of every block from the stored decisions (DESIGN.md 1.4, second round), plus
    the daemon's heartbeat and the store's path."""
    live = read_liveness(store, now_utc)
    latest = stored.latest(store, [b.id for b in cfg.blocks], until_utc=now_utc)
    limit = evaluation_limit_s(cfg, now_utc)
    d = Display(cfg.site.display_unit, cfg.site.tz)
    blocks = [decision_json(latest.get(b.id), b.id, now_utc, live, d, limit, b.name) for b in cfg.blocks]
    newest = max((x.as_of_utc for x in latest.values()), default=None)
    return {
        "site": cfg.site.name, "as_of": iso_utc(now_utc), "daemon_alive": live.alive,
        "data_as_of": iso_utc(newest), "data_age_s": None if newest is None else round((now_utc - newest).total_seconds(), 1),
        "daemon": _daemon_json(live), "store": str(store.path), "blocks": blocks,
    }


def decisions_for_page(cfg: Config, store: Store, now_utc: dt.datetime) -> dict[str, Decision]:
    """The newest stored decision of each block (the page draws its curves from them)."""
    return stored.latest(store, [b.id for b in cfg.blocks], until_utc=now_utc)
