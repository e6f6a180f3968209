"""`frostwatch report`: the night log for the farm manager."""

from __future__ import annotations

import datetime as dt
from pathlib import Path

from frostwatch.commands.common import (
    _load,
    _out_json,
)
from frostwatch.errors import UsageError


def cmd_report(args) -> int:
    from frostwatch.reports.night import write_night_report
    from frostwatch.reports.season import write_season_report
    from frostwatch.store import Store

    if (args.night is None) == (args.season is None):
        raise UsageError("report: give either --night YYYY-MM-DD or --season YEAR")
    night = year = None
    if args.night is not None:
        try:
            night = dt.date.fromisoformat(args.night)
        except ValueError:
            raise UsageError(f"--night {args.night!r}: expected a date YYYY-MM-DD (the local date of the evening)") from None
    else:
        if not (args.season.isdigit() and 1970 <= int(args.season) <= 9999):
            raise UsageError(f"--season {args.season!r}: expected a year such as 2027")
        year = int(args.season)
    cfg = _load(args)
    store = Store.open(cfg.storage.path)
    try:
        if night is not None:
            page = write_night_report(cfg, store, night, Path(args.out))
        else:
            page = write_season_report(cfg, store, year, Path(args.out))
    finally:
        store.close()
    if args.json:
        _out_json({"report": str(page)})
    else:
        print(f"{'night' if night else 'season'} report: {page}")
    return 0


def cmd_status_page(args) -> int:
    from frostwatch.reports.settings import status_page_settings
    from frostwatch.status.server import serve

    cfg = _load(args)
    sp = status_page_settings(cfg)
    bind = args.bind or sp.bind
    port = sp.port if args.port is None else args.port
    serve(cfg, bind, port, token=sp.token)
    return 0




def register(sub, common) -> None:
    s = sub.add_parser("report", parents=[common], help="write a night's log for the farm manager (HTML, PNG, CSV)")
    s.add_argument("--night", metavar="YYYY-MM-DD", help="one night's log: the local date of the evening")
    s.add_argument("--season", metavar="YEAR", help="the season summary of every stored night of YEAR")
    s.add_argument("--out", required=True, metavar="DIR")
    s.set_defaults(func=cmd_report)
    s = sub.add_parser("status-page", parents=[common],
                       help="serve the read-only status page for phones (127.0.0.1 unless a token is set)")
    s.add_argument("--bind", metavar="ADDRESS", help="address to listen on (default [status_page] bind or 127.0.0.1); "
                   "any address other than loopback needs [status_page] token_file")
    s.add_argument("--port", type=int, metavar="PORT", help="TCP port (default [status_page] port or 8470)")
    s.set_defaults(func=cmd_status_page)

