"""`frostwatch run`: the daemon."""

from __future__ import annotations

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


def cmd_run(args) -> int:
    from frostwatch import daemon

    cfg = _load(args)
    return daemon.run(cfg)




def register(sub, common) -> None:
    s = sub.add_parser("run", parents=[common], help="the daemon: MQTT ingest, scheduled evaluations, alerts")
    s.set_defaults(func=cmd_run)

