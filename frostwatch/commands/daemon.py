"""`frostwatch run`: the daemon."""

from __future__ import annotations

from frostwatch.commands.common import (
    _iso,
    _load,
    _out_json,
    _parse_iso,
    _temp_out,
    _unit,
)
from frostwatch.errors import UsageError


def cmd_run(args) -> int:
    from frostwatch import daemon

    cfg = _load(args)
    return daemon.run(cfg)




def status_doc(cfg, now_utc) -> dict:
    """The live state from the store: last reading per station with its age, each block's latest
    projection, advice and alert level, and the daemon's heartbeat."""
    import datetime as dt
    import json

    from frostwatch.daemon import BLOCKS_META, HEARTBEAT_META
    from frostwatch.store import Store, from_ms, to_ms

    if not cfg.storage.path.exists():
        raise UsageError(f"{cfg.storage.path}: no store yet; start the daemon (frostwatch run) or replay a log first")
    store = Store.open(cfg.storage.path)
    try:
        since = now_utc - dt.timedelta(days=7)  # a time-first key: read a window, never the whole table
        with store.lock:
            rows = store.conn.execute(
                "SELECT station, quantity, max(time_utc_ms), value FROM readings WHERE time_utc_ms >= ? "
                "GROUP BY station, quantity",
                (to_ms(since),),
            ).fetchall()
        stations = {s.id: {"station": s.id, "block": s.block, "role": s.role, "last": {}, "last_at": None, "age_s": None} for s in cfg.stations}
        for st, q, ms, v in rows:
            d = stations.setdefault(st, {"station": st, "block": None, "role": "undeclared", "last": {}, "last_at": None, "age_s": None})
            d["last"][q] = {"value": v, "at": _iso(from_ms(ms))}
            if d["last_at"] is None or ms > to_ms(_parse_iso(d["last_at"], "time")):
                d["last_at"] = _iso(from_ms(ms))
                d["age_s"] = round((now_utc - from_ms(ms)).total_seconds(), 1)
        blocks_state = json.loads(store.get_meta(BLOCKS_META) or "{}")
        alerts = store.alerts(now_utc - dt.timedelta(days=2), now_utc + dt.timedelta(days=1))
        blocks = []
        for b in cfg.blocks:
            st = blocks_state.get(b.id, {})
            last_alert = next((a for a in reversed(alerts) if a["block"] == b.id), None)
            blocks.append({
                "block": b.id, "name": b.name, "evaluated_at": st.get("time"),
                "level": st.get("level") or (last_alert["level"] if last_alert else None),
                "rank": last_alert["rank"] if last_alert else None,
                "last_alert": None if last_alert is None else {
                    "time": _iso(from_ms(last_alert["time_utc_ms"])), "level": last_alert["level"], "message": last_alert["message"],
                },
                "station": st.get("station"), "air_temp_c": st.get("air_temp_c"), "wet_bulb_c": st.get("wet_bulb_c"),
                "predicted_min_c": st.get("predicted_min_c"), "predicted_min_at": st.get("predicted_min_at"),
                "risk": st.get("risk"), "action": st.get("action"), "start_by": st.get("start_by"),
                "cautions": st.get("cautions", []),
            })
        hb = json.loads(store.get_meta(HEARTBEAT_META) or "null")
        if hb and hb.get("time"):
            hb["age_s"] = round((now_utc - _parse_iso(hb["time"], "heartbeat time")).total_seconds(), 1)
        return {"time": _iso(now_utc), "store": str(store.path), "daemon": hb, "stations": list(stations.values()), "blocks": blocks}
    finally:
        store.close()


def _age(s) -> str:
    if s is None:
        return "never"
    s = float(s)
    if s < -60:
        # a reading stamped after now: a sensor's clock, or this machine's, is wrong
        ahead = -s
        when = f"{ahead / 60:.0f} min" if ahead < 7200 else f"{ahead / 3600:.1f} h" if ahead < 172800 else f"{ahead / 86400:.0f} days"
        return f"{when} AHEAD of this clock"
    s = max(0.0, s)
    if s < 120:
        return f"{s:.0f} s ago"
    if s < 7200:
        return f"{s / 60:.0f} min ago"
    return f"{s / 3600:.1f} h ago" if s < 172800 else f"{s / 86400:.0f} days ago"


def cmd_status(args) -> int:
    import datetime as dt

    cfg = _load(args)
    doc = status_doc(cfg, dt.datetime.now(dt.UTC))
    if args.json:
        _out_json(doc)
        return 0
    hb = doc["daemon"]
    if hb is None:
        print("daemon: no heartbeat recorded (it has never run on this store)")
    else:
        up = "connected" if hb.get("broker_connected") else f"NOT connected for {hb.get('broker_down_s', 0):.0f} s"
        # the daemon writes its heartbeat to the store every `stored_every_s` (SD-card wear)
        stale_after = max(120.0, 1.5 * float(hb.get("stored_every_s") or 60.0) + 60.0)
        stale = "  (the daemon was stopped then)" if hb.get("stopped") else (
            "" if (hb.get("age_s") or 0) < stale_after else "  (STALE: is the daemon running?)")
        print(f"daemon: heartbeat {_age(hb.get('age_s'))}{stale}; broker {up}; "
              f"{hb['ingest']['stored']} readings stored and {hb['ingest']['rejected']} rejected since start")
        for p in hb.get("problems", []):
            print(f"  problem: {p}")
        for p in hb.get("health_problems", []):
            print(f"  sensor health: {p}")
    print("stations:")
    for s in doc["stations"]:
        vals = ", ".join(f"{q} {v['value']:g}" for q, v in sorted(s["last"].items()))
        print(f"  {s['station']:<16} {_age(s['age_s']):>12}   {vals or 'no reading in 7 days'}")
    print("blocks:")
    for b in doc["blocks"]:
        pm = "" if b["predicted_min_c"] is None else f", predicted min {_temp_out(args, b['predicted_min_c'])} {_unit(args)} at {b['predicted_min_at']}"
        print(f"  {b['block']:<10} level {b['level'] or 'unknown'}{pm}")
        if b["action"]:
            print(f"             advice: {b['action']}")
    return 0


def register(sub, common) -> None:
    s = sub.add_parser("run", parents=[common], help="the daemon: MQTT ingest, scheduled evaluations, alerts")
    s.set_defaults(func=cmd_run)
    s = sub.add_parser("status", parents=[common], help="the live state: last reading per station, each block's projection and advice, the daemon's heartbeat")
    s.set_defaults(func=cmd_status)

