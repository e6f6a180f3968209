"""`frostwatch run`: the daemon."""

from __future__ import annotations

from frostwatch.commands.common import (
    _iso,
    _load,
    _out_json,
    _parse_iso,
)
from frostwatch.errors import UsageError


def cmd_run(args) -> int:
    from frostwatch import daemon

    cfg = _load(args)
    return daemon.run(cfg)




def status_doc(cfg, now_utc) -> dict:
    """The status document of `frostwatch status --json` (frostwatch.status.document.status_document: every
    block's stored decision, the daemon's heartbeat) with the last reading of every station."""
    import datetime as dt

    from frostwatch.status.document import status_document
    from frostwatch.store import Store, from_ms, to_ms
    from frostwatch.store.latest import latest_readings_since

    if not cfg.storage.path.exists():
        raise UsageError(f"{cfg.storage.path}: no store yet; start the daemon (frostwatch run) or replay a log first")
    store = Store.open(cfg.storage.path)
    try:
        doc = status_document(cfg, store, now_utc)
        rows = latest_readings_since(store, now_utc - dt.timedelta(days=7))
        stations = {s.id: {"station": s.id, "block": s.block, "role": s.role, "last": {}, "last_at": None, "age_s": None} for s in cfg.stations}
        for st, q, ms, v in rows:
            d = stations.setdefault(st, {"station": st, "block": None, "role": "undeclared", "last": {}, "last_at": None, "age_s": None})
            d["last"][q] = {"value": v, "at": _iso(from_ms(ms))}
            if d["last_at"] is None or ms > to_ms(_parse_iso(d["last_at"], "time")):
                d["last_at"] = _iso(from_ms(ms))
                d["age_s"] = round((now_utc - from_ms(ms)).total_seconds(), 1)
        doc["stations"] = list(stations.values())
        return doc
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


def _shown(d, quantity: str, value: float) -> str:
    """A station's last value in the site's units (temperatures, wind, humidity); others as stored."""
    if quantity.endswith("temperature"):
        return d.temp(value)
    if quantity == "wind_speed":
        return d.wind(value)
    if quantity == "relative_humidity":
        return f"{value:.0f} %"
    return f"{value:g}"


def cmd_status(args) -> int:
    import datetime as dt

    cfg = _load(args)
    doc = status_doc(cfg, dt.datetime.now(dt.UTC))
    if args.json:
        _out_json(doc)
        return 0
    from frostwatch.advice.codec import parse_utc
    from frostwatch.display import Display

    d = Display(cfg.site.display_unit, cfg.site.tz)

    def local(iso: str | None) -> str:  # an instant of the document as the grower's clock shows it
        try:
            return d.datetime(parse_utc(iso)) if iso else "never"
        except ValueError:
            return str(iso)

    hb = doc["daemon"]
    if hb is None:
        print("daemon: NOT RUNNING: no heartbeat recorded (it has never run on this store); no block is monitored")
    else:
        ingest = hb.get("ingest") or {}
        # the counts are the stored heartbeat's (written every few minutes), so they say when
        counts = (f"{ingest.get('stored', 0)} readings stored and {ingest.get('rejected', 0)} rejected "
                  f"from {local(hb.get('started'))} to {local(hb.get('time'))}")
        if hb.get("stopped"):
            print(f"daemon: STOPPED at {local(hb.get('time'))}; no block is monitored; {counts}")
        elif not doc["daemon_alive"]:
            print(f"daemon: NOT RUNNING: last heartbeat {_age(hb.get('heartbeat_age_s'))} ({local(hb.get('time'))}); "
                  f"no block is monitored; {counts}")
        else:
            up = "connected" if hb.get("broker_connected") else f"NOT connected for {hb.get('broker_down_s', 0):.0f} s"
            print(f"daemon: running, heartbeat {_age(hb.get('heartbeat_age_s'))}; broker {up}; {counts}")
        for p in hb.get("problems", []):
            print(f"  problem: {p}")
        for p in hb.get("health_details") or hb.get("health_problems", []):
            print(f"  sensor health: {p}")
    age = "" if doc["data_age_s"] is None else f" ({_age(doc['data_age_s'])})"
    print(f"decisions as of {local(doc['data_as_of'])}{age}")
    print("blocks:")
    for b in doc["blocks"]:
        print(f"  {b['headline']}")
        print(f"             advice: {b['action']}")
        if b["monitored"]:
            print(f"             why: {b['reason']}")
    cautions = list(dict.fromkeys(c for b in doc["blocks"] for c in b.get("cautions", ())))
    if cautions:
        print("cautions: " + " ".join(cautions))
    print("stations:")
    for s in doc["stations"]:
        vals = ", ".join(f"{q.replace('_', ' ')} {_shown(d, q, v['value'])}" for q, v in sorted(s["last"].items()))
        print(f"  {s['station']:<16} {_age(s['age_s']):>12}   {vals or 'no reading in 7 days'}")
    return 0


def register(sub, common) -> None:
    s = sub.add_parser("run", parents=[common], help="the daemon: MQTT ingest, scheduled evaluations, alerts")
    s.set_defaults(func=cmd_run)
    s = sub.add_parser("status", parents=[common], help="each block's level, monitoring state and advice as the daemon last decided, "
                       "the daemon's heartbeat, the last reading per station")
    s.set_defaults(func=cmd_status)

