"""`frostwatch fleet`: every site's state from a central broker, read-only (frostwatch.fleet).

    frostwatch fleet --broker HOST:PORT [--json]          one picture, then exit
    frostwatch fleet --broker HOST:PORT --serve [--bind A --port N --token-file F]   the page
"""

from __future__ import annotations

import datetime as dt
import os
import sys

from frostwatch.commands.common import _out_json
from frostwatch.errors import UsageError


def _local_zone() -> str:
    """This machine's IANA zone name (from TZ or /etc/localtime), else UTC."""
    tz = os.environ.get("TZ", "").lstrip(":")
    if tz and "/" in tz:
        return tz
    real = os.path.realpath("/etc/localtime")
    return real.split("zoneinfo/", 1)[1] if "zoneinfo/" in real else "UTC"


def _display(args):
    from zoneinfo import ZoneInfo, ZoneInfoNotFoundError

    from frostwatch.display import Display

    name = args.tz or _local_zone()
    try:
        tz = ZoneInfo(name)
    except (ZoneInfoNotFoundError, ValueError):
        raise UsageError(f"--tz: {name!r} is not an IANA time zone name; expected e.g. America/Los_Angeles") from None
    return Display("degF" if args.fahrenheit else "degC", tz)


def _token(args) -> str | None:
    if not args.token_file:
        return None
    from frostwatch.secrets import read_secret_file, secret_path

    text = read_secret_file(args.token_file, "--token-file")
    if len(text) < 16:
        p = secret_path(args.token_file)
        raise UsageError(f"--token-file: {p} holds fewer than 16 characters; expected a long random token "
                         "(e.g. `openssl rand -hex 16 > FILE`)")
    return text


def _fahrenheit_doc(doc: dict) -> dict:
    """JSON keys end in _f with --fahrenheit (temperatures converted; band as a difference)."""
    from frostwatch.units import c_to_f, delta_c_to_f

    for s in doc["sites"]:
        for b in s["blocks"]:
            for k in ("predicted_min_c", "band_c"):
                if k in b:
                    v = b.pop(k)
                    scale = delta_c_to_f if k == "band_c" else c_to_f
                    b[k[:-2] + "_f"] = None if v is None else round(scale(v), 1)
    return doc


REJECTED_SHOWN = 5  # the latest unreadable messages the text lists, each with its topic and reason


def _print_text(doc: dict, d) -> None:
    from frostwatch.advice.render import level_word
    from frostwatch.fleet.page import _ago, _when

    now = dt.datetime.now(dt.UTC)
    blind = [s for s in doc["sites"] if not s["reachable"]]
    print(f"frostwatch fleet: {len(doc['sites'])} sites on {doc['broker']}, {len(blind)} NOT REACHABLE "
          f"(as of {d.datetime(now)})")
    print(doc["caution"])
    if not doc["sites"]:
        print("No site has been heard from on this broker yet.")
    for s in doc["sites"]:
        name = f"{s['name']} ({s['site']})" if s.get("name") else s["site"]
        if s["reachable"]:
            print(f"\n{name}: last contact {_when(s['last_contact'], d, now)} ({_ago(s['last_contact'], now)})")
        else:
            since = f"NO CONTACT SINCE {_when(s['last_contact'], d, now)}" if s["last_contact"] else "NEVER HEARD FROM"
            print(f"\n{name}: NOT REACHABLE, {since}: {s['why_unreachable']}; blocks below are the last known")
        for p in s["problems"]:
            print(f"  problem: {p}")
        for b in s["blocks"]:
            mon = "monitored" if b["monitored"] else f"NOT MONITORED ({b.get('reason') or 'no fresh reading'})"
            proj = ""
            if b.get("predicted_min_c") is not None:
                proj = f"; min {d.temp(b['predicted_min_c'])}"
                if b.get("band_c") is not None:
                    proj += f" ± {d.delta(b['band_c'])}"
                if b.get("predicted_min_at"):
                    proj += f" at {_when(b['predicted_min_at'], d, now)}"
                proj += f", T10 at {_when(b['t10_crossing_at'], d, now)}" if b.get("t10_crossing_at") else ", no T10 crossing"
            ack = {True: "; acknowledged", False: "; NOT acknowledged"}.get(b.get("acknowledged"), "")
            print(f"  {b['block']:<12} {level_word(b['level'])} (rank {b['rank']}); {mon}{proj}{ack}; "
                  f"as of {_when(b['as_of'], d, now)}")
            if b.get("action"):
                print(f"               {b['action']}")
    rej = doc.get("rejected") or {}
    if rej.get("count"):
        print(f"\n{rej['count']} messages on the fleet topics could not be read (each costs only itself); latest:")
        for r in rej["latest"][-REJECTED_SHOWN:]:
            print(f"  {r['topic']}: {r['reason']}")


def cmd_fleet(args) -> int:
    from frostwatch.fleet.listen import BrokerAddress, FleetListener, parse_broker

    host, port = parse_broker(args.broker)
    if args.wait <= 0:
        raise UsageError(f"--wait: {args.wait:g}; expected seconds > 0")
    d = _display(args)
    addr = BrokerAddress(host, port, args.prefix, args.ca_file, args.cert_file, args.key_file, args.username,
                         args.password_file, tls=args.tls)
    if args.username is None and args.password_file:
        raise UsageError("--password-file needs --username")
    listener = FleetListener(addr)
    if not args.serve:
        try:
            settled = listener.gather(args.wait)
            doc = listener.snapshot()
        finally:
            listener.stop()
        doc["settled"] = settled
        if not settled:
            print(f"frostwatch fleet: the broker was still sending retained states after --wait {args.wait:g} s; "
                  "sites may be missing: raise --wait", file=sys.stderr)
        if args.fahrenheit:
            doc = _fahrenheit_doc(doc)
        if args.json:
            _out_json(doc)
        else:
            _print_text(doc, d)
        return 0
    from frostwatch.fleet import page

    server = page.make_server(lambda only: (_fahrenheit_doc if args.fahrenheit else (lambda x: x))(
        listener.snapshot(only_site=only)), args.bind, args.port, _token(args), d, args.refresh_s)
    listener.start()
    try:
        page.serve(server)
    finally:
        listener.stop()
    return 0


def register(sub, common) -> None:
    s = sub.add_parser(
        "fleet", parents=[common],
        help="every site's state from a central broker, highest rank first (read-only; for oversight)",
        description="Reads the states that sites publish (and bridge) to a central broker under PREFIX/SITE/... "
                    "and shows every site and block. For oversight only: the alert to the person on duty "
                    "comes from each site. --config is not used.",
    )
    s.add_argument("--broker", required=True, metavar="HOST:PORT", help="the central broker")
    s.add_argument("--prefix", default="frostwatch", help="the sites' [broker] prefix (default frostwatch)")
    s.add_argument("--tls", action="store_true", help="TLS with the system's CA certificates")
    s.add_argument("--ca-file", metavar="FILE", help="TLS with this CA certificate (PEM)")
    s.add_argument("--cert-file", metavar="FILE", help="a client certificate (PEM), with --key-file")
    s.add_argument("--key-file", metavar="FILE", help="the client certificate's key (PEM)")
    s.add_argument("--username", metavar="NAME", help="the broker user name")
    s.add_argument("--password-file", metavar="FILE", help="a file (mode 600) holding the broker password")
    s.add_argument("--wait", type=float, default=10.0, metavar="S",
                   help="seconds to wait for the broker and its retained states (default 10)")
    s.add_argument("--tz", metavar="ZONE", help="time zone for times shown to people (default: this machine's)")
    s.add_argument("--serve", action="store_true", help="serve the fleet page instead of printing once")
    s.add_argument("--bind", default="127.0.0.1", help="--serve: address to listen on (other than loopback needs --token-file)")
    s.add_argument("--port", type=int, default=8471, help="--serve: port (default 8471)")
    s.add_argument("--token-file", metavar="FILE", help="--serve: a file holding the page's token (16+ characters)")
    s.add_argument("--refresh-s", type=int, default=30, metavar="S", help="--serve: the page refreshes this often (default 30)")
    s.set_defaults(func=cmd_fleet)
