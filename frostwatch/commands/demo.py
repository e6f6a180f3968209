"""`frostwatch demo`: the bundled invented farm's three nights replayed, with no config, broker
or network: the config and logs are copied into a working folder and `replay` runs over them.
"""

from __future__ import annotations

import argparse
import contextlib
import io
import json
import shlex
from pathlib import Path

from frostwatch.commands.common import _fahrenheit, _out_json, _self_command
from frostwatch.commands.logs import cmd_replay

DEMO_NIGHTS = ("2027-04-14-radiation-frost.csv", "2027-04-15-windy-advective.csv", "2027-04-16-cloudy-safe.csv")


def cmd_demo(args) -> int:
    import shutil
    import tempfile
    from importlib import resources

    from frostwatch.config import load_config

    src = resources.files("frostwatch.sample_logs")
    work = Path(args.out) if args.out else Path(tempfile.mkdtemp(prefix="frostwatch-demo-"))
    work.mkdir(parents=True, exist_ok=True)
    cfg_path = work / "demo-farm.toml"
    text = src.joinpath("demo-farm.toml").read_text(encoding="utf-8")
    if _fahrenheit(args):
        text = text.replace('display_unit = "degC"', 'display_unit = "degF"')
    cfg_path.write_text(text, encoding="utf-8")
    db = work / "frostwatch.db"
    if db.exists():
        db.unlink()
    logs = []
    for name in DEMO_NIGHTS:
        dst = work / name
        with src.joinpath(name).open("rb") as f, dst.open("wb") as g:
            shutil.copyfileobj(f, g)
        logs.append(str(dst))
    cfg = load_config(cfg_path)
    me = _self_command()
    try_next = " ".join([me, "backtest", *map(shlex.quote, logs), "--config", shlex.quote(str(cfg_path))])
    ns = argparse.Namespace(config=str(cfg_path), logs=logs, strict=False, json=args.json, fahrenheit=False,
                            no_report=False, report_dir=str(work / "reports"))
    if args.json:  # replay's own document, with what the demo adds: one JSON document on stdout
        buf = io.StringIO()
        with contextlib.redirect_stdout(buf):
            rc = cmd_replay(ns)
        _out_json({"demo": {"site": cfg.site.name, "work_dir": str(work), "config": str(cfg_path), "logs": logs,
                            "try_next": try_next}, **json.loads(buf.getvalue())})
        return rc
    print(f"frostwatch demo: {cfg.site.name} (an invented farm), three invented nights in April 2027")
    print(f"working folder: {work}\n")
    rc = cmd_replay(ns)
    print(f"\nTry next: {try_next}")
    return rc


def register(sub, common) -> None:
    s = sub.add_parser("demo", parents=[common], help="replay the bundled invented farm's nights (no config, broker or network)")
    s.add_argument("--out", metavar="DIR", help="working folder (default: a new temporary folder)")
    s.set_defaults(func=cmd_demo)
