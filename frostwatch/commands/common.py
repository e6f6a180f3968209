"""Helpers shared by the command modules: JSON output, unit handling, config loading."""

from __future__ import annotations

import datetime as dt
import json
import sys

from frostwatch.errors import UsageError


def _self_command(argv0: str | None = None, which=None) -> str:
    """How to run this same frostwatch again, for the "try next" lines: the bare name only when PATH
    finds this very program; else the path it was started by (after the README's install that is
    .venv/bin/frostwatch, not on PATH), or `python -m frostwatch`."""
    import shlex
    import shutil
    from pathlib import Path

    argv0 = sys.argv[0] if argv0 is None else argv0
    which = shutil.which if which is None else which
    me = Path(argv0)
    if me.name in ("__main__.py", "-c", ""):
        return f"{shlex.quote(sys.executable)} -m frostwatch"
    if "/" not in argv0:  # started by its name, so PATH finds it
        return me.name
    found = which(me.name)
    if found and Path(found).resolve() == me.resolve():
        return me.name
    return shlex.quote(str(me.absolute()))


def _out_json(doc: object) -> None:
    sys.stdout.write(json.dumps(doc, indent=2, default=str) + "\n")


def _fahrenheit(args) -> bool:
    return bool(getattr(args, "fahrenheit", False))


def _temp_in(args, value: float) -> float:
    """A temperature given on the command line, in degC."""
    from frostwatch.units import f_to_c

    return f_to_c(value) if _fahrenheit(args) else value


def _temp_out(args, value_c: float | None) -> float | None:
    from frostwatch.units import c_to_f

    if value_c is None:
        return None
    return round(c_to_f(value_c), 2) if _fahrenheit(args) else round(value_c, 2)


def _key(args, base: str) -> str:
    return f"{base}_f" if _fahrenheit(args) else f"{base}_c"


def _unit(args) -> str:
    return "°F" if _fahrenheit(args) else "°C"


def _parse_iso(text: str, what: str) -> dt.datetime:
    from frostwatch.ingest.parse import BadValue, parse_time_utc

    try:
        return parse_time_utc(text)
    except BadValue as exc:
        raise UsageError(f"{what}: {exc}") from None


def _load(args):
    from frostwatch.config import load_config

    if not args.config:
        raise UsageError("--config PATH is required (write an example with `frostwatch init PATH`)")
    return load_config(args.config)


def _iso(t):
    return None if t is None else t.isoformat().replace("+00:00", "Z")


def _progress(label: str, unit: str = "night"):
    """A progress line on a terminal (nothing when stderr is not one): done/total, time spent and
    about how long is left."""
    if not sys.stderr.isatty():
        return None
    import time

    t0 = time.monotonic()

    def show(k: int, n: int) -> None:
        spent = time.monotonic() - t0
        left = f", about {_duration(spent / k * (n - k))} left" if 0 < k < n and spent > 2 else ""
        sys.stderr.write(f"\r{label}: {unit} {k:,}/{n:,} ({_duration(spent)}{left})\x1b[K")
        if k == n:
            sys.stderr.write("\n")
        sys.stderr.flush()

    return show


def _duration(s: float) -> str:
    return f"{s:.0f} s" if s < 90 else f"{s // 60:.0f} min {s % 60:.0f} s"
