"""`frostwatch ack` (answer an alert: repeats and escalation stop) and `frostwatch alerts` (a night's
alerts with their deliveries and acknowledgements)."""

from __future__ import annotations

import datetime as dt
import logging

from frostwatch.commands.common import _iso, _load, _out_json
from frostwatch.errors import UsageError


def register(sub, common) -> None:
    s = sub.add_parser("ack", parents=[common], help="acknowledge an alert: its repeats and escalation stop")
    s.add_argument("key", metavar="CODE|KEY",
                   help="the acknowledgement code of the message (6 characters, e.g. K7QM4X), or the alert key "
                        "(shown by `frostwatch alerts`)")
    s.add_argument("--who", default=None, metavar="NAME", help="who answers (default: $USER)")
    s.set_defaults(func=cmd_ack)
    s = sub.add_parser("alerts", parents=[common], help="list a night's alerts with deliveries and acknowledgements")
    s.add_argument("--night", metavar="YYYY-MM-DD", help="the local date of the evening (default: the latest night)")
    s.set_defaults(func=cmd_alerts)


def _now() -> dt.datetime:
    return dt.datetime.now(dt.UTC)  # the command owns its clock, like the daemon


def cmd_ack(args) -> int:
    import getpass

    from frostwatch.alerts import ackcodes
    from frostwatch.alerts.outbox import Outbox
    from frostwatch.store import Store

    cfg = _load(args)
    who = args.who or getpass.getuser()
    # the outcome is printed once below (and recorded in the store); the daemon's log lines of the
    # same outcome would otherwise reach stderr too, with the alert's internal key
    logging.getLogger("frostwatch").addHandler(logging.NullHandler())
    if ackcodes.looks_like_code(args.key):
        with Store.open(cfg.storage.path) as store:
            ok, message = ackcodes.acknowledge_code(store, cfg, args.key, _now(), via="cli", source="cli")
        if not ok:
            raise UsageError(f"{args.key}: {message}")
        if getattr(args, "json", False):
            _out_json({"code": args.key.upper(), "acknowledged": True, "message": message})
        else:
            print(message)
        return 0
    with Store.open(cfg.storage.path) as store:
        box = Outbox(store, cfg)
        if not box.acknowledge(args.key, who, "cli", _now()):
            raise UsageError(f"{args.key}: no such alert in {cfg.storage.path}; list them with "
                             f"`frostwatch alerts --config {args.config}`")
        from frostwatch.store import outbox as ob

        st = ob.state_of(store, args.key) or {}
    if getattr(args, "json", False):
        _out_json({"key": args.key, "acknowledged_by": who, "state": st.get("state")})
    else:
        print(f"acknowledged {args.key} for {who}; its repeats and escalation stop (state: {st.get('state')})")
    return 0


def _night_window(cfg, night: dt.date) -> tuple[dt.datetime, dt.datetime]:
    tz = cfg.site.tz
    start = dt.datetime.combine(night, dt.time(12, 0), tzinfo=tz).astimezone(dt.UTC)
    return start, start + dt.timedelta(days=1)


def night_alerts(store, cfg, night: dt.date) -> list[dict]:
    from frostwatch.store import from_ms
    from frostwatch.store import outbox as ob

    start, end = _night_window(cfg, night)
    rows = store.alerts(start, end)
    keys = [r["key"] for r in rows]
    deliveries: dict[str, list] = {}
    for d in ob.deliveries_for(store, keys):
        deliveries.setdefault(d["alert_key"], []).append({
            "channel": d["channel"], "recipient": d["recipient"], "seq": d["seq"], "kind": d["kind"],
            "status": d["status"], "attempts": d["attempt"], "idempotency_key": d["idem_key"],
            "updated_at": _iso(from_ms(d["updated_utc_ms"])) if d["updated_utc_ms"] else None, "detail": d["detail"],
        })
    acks: dict[str, list] = {}
    for a in ob.acks_for(store, keys):
        acks.setdefault(a["alert_key"], []).append({"who": a["who"], "via": a["via"],
                                                    "time": _iso(from_ms(a["time_utc_ms"]))})
    out = []
    for r in rows:
        st = ob.state_of(store, r["key"]) or {}
        out.append({
            "time": _iso(from_ms(r["time_utc_ms"])), "key": r["key"], "block": r["block"], "level": r["level"],
            "rank": r["rank"], "advice": r["advice"], "message": r["message"], "resolves": r["resolves"],
            "state": st.get("state", "recorded"), "deliveries": deliveries.get(r["key"], []),
            "acks": acks.get(r["key"], []),
        })
    return out


def cmd_alerts(args) -> int:
    from frostwatch.advice.render import level_word
    from frostwatch.display import Display
    from frostwatch.night import evening_date
    from frostwatch.store import Store, from_ms
    from frostwatch.store import outbox as stored_outbox

    cfg = _load(args)
    with Store.open(cfg.storage.path) as store:
        if args.night:
            try:
                night = dt.date.fromisoformat(args.night)
            except ValueError:
                raise UsageError(f"--night: {args.night!r} is not a date, expected YYYY-MM-DD") from None
        else:
            ms = stored_outbox.latest_alert_time_ms(store)
            night = evening_date(from_ms(ms), cfg.site.tz) if ms is not None else evening_date(_now(), cfg.site.tz)
        items = night_alerts(store, cfg, night)
    if getattr(args, "json", False):
        _out_json({"night": night.isoformat(), "alerts": items})
        return 0
    d = Display(cfg.site.display_unit, cfg.site.tz)
    print(f"{cfg.site.name}: alerts of the night of {night.isoformat()}")
    if not items:
        print("  none")
    for a in items:
        t = dt.datetime.fromisoformat(a["time"].replace("Z", "+00:00"))
        print(f"\n{d.time(t)}  [{level_word(a['level'])}] {a['message'].splitlines()[0] if a['message'] else ''}")
        print(f"    key {a['key']}  state {a['state']}")
        for x in a["deliveries"]:
            print(f"    -> {x['channel']}:{x['recipient']} #{x['seq']} {x['kind']}: {x['status']} after "
                  f"{x['attempts']} attempt(s){' (' + x['detail'] + ')' if x['detail'] else ''}")
        for k in a["acks"]:
            kt = dt.datetime.fromisoformat(k["time"].replace("Z", "+00:00"))
            print(f"    acknowledged by {k['who']} via {k['via']} at {d.time(kt)}")
    return 0
