"""The `frostwatch` command line: parse arguments, call the library, print, map errors to exit codes.

Exit status: 0 success; 2 bad usage, bad config or bad input (one clear sentence on stderr);
1 any other failure (a traceback means a bug; a damaged store file is one sentence naming it and
what to do). Each command lives in `frostwatch.commands`.
"""

from __future__ import annotations

import argparse
import importlib
import sys

from frostwatch.commands import COMMAND_MODULES
from frostwatch.errors import FrostwatchError, UsageError


class _VersionAction(argparse.Action):
    """`--version`: the installed version, looked up only when asked for (start-up time)."""

    def __call__(self, parser, namespace, values, option_string=None):
        import frostwatch

        print(f"frostwatch {frostwatch.__version__}")
        parser.exit()


def build_parser() -> argparse.ArgumentParser:
    p = argparse.ArgumentParser(
        prog="frostwatch",
        description="Frost-protection advice for orchards and vineyards. It advises; the grower decides.",
    )
    p.add_argument("--version", action=_VersionAction, nargs=0, help="show program's version number and exit")
    common = argparse.ArgumentParser(add_help=False)
    common.add_argument("--config", metavar="PATH", help="the site's config file (TOML)")
    common.add_argument("--json", action="store_true", help="print one JSON document on stdout and nothing else there")
    common.add_argument("--fahrenheit", action="store_true", help="temperatures in and out in °F (JSON keys then end in _f)")
    sub = p.add_subparsers(dest="command", required=True, metavar="COMMAND")
    for name in COMMAND_MODULES:
        importlib.import_module(name).register(sub, common)
    return p


def _store_damage_errors() -> type[BaseException] | tuple:
    """sqlite3.DatabaseError once a command has used SQLite (none can have come from it before):
    `--help` and `calc` start without importing sqlite3."""
    sqlite3 = sys.modules.get("sqlite3")
    return sqlite3.DatabaseError if sqlite3 is not None else ()


def main(argv: list[str] | None = None) -> int:
    parser = build_parser()
    args = parser.parse_args(argv)
    try:
        return int(args.func(args) or 0)
    except UsageError as exc:
        print(f"frostwatch: {exc}", file=sys.stderr)
        return 2
    except FrostwatchError as exc:
        print(f"frostwatch: {exc}", file=sys.stderr)
        return 1
    except _store_damage_errors() as exc:
        from frostwatch.store.db import OPENED, damaged_message, is_damage

        if not is_damage(exc):
            raise
        print(f"frostwatch: {damaged_message(OPENED[-1] if OPENED else 'the store', exc)}", file=sys.stderr)
        return 1
    except BrokenPipeError:
        return 0
    except KeyboardInterrupt:
        return 130


if __name__ == "__main__":  # pragma: no cover
    raise SystemExit(main())
