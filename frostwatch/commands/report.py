"""`frostwatch report`: the night log for the farm manager."""

from __future__ import annotations

import datetime as dt
from pathlib import Path

from frostwatch.commands.common import (  # noqa: F401
    _fahrenheit,
    _iso,
    _key,
    _load,
    _out_json,
    _parse_iso,
    _progress,
    _temp_in,
    _temp_out,
    _unit,
)
from frostwatch.errors import UsageError  # noqa: F401


def cmd_report(args) -> int:
    from frostwatch.reports.night import write_night_report
    from frostwatch.store import Store

    cfg = _load(args)
    try:
        night = dt.date.fromisoformat(args.night)
    except ValueError:
        raise UsageError(f"--night {args.night!r}: expected a date YYYY-MM-DD (the local date of the evening)") from None
    store = Store.open(cfg.storage.path)
    try:
        page = write_night_report(cfg, store, night, Path(args.out))
    finally:
        store.close()
    print(f"night report: {page}")
    return 0




def register(sub, common) -> None:
    s = sub.add_parser("report", parents=[common], help="write a night's log for the farm manager (HTML, PNG, CSV)")
    s.add_argument("--night", required=True, metavar="YYYY-MM-DD", help="the local date of the evening")
    s.add_argument("--out", required=True, metavar="DIR")
    s.set_defaults(func=cmd_report)

