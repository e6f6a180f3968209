"""`frostwatch init` and `frostwatch check-config`."""

from __future__ import annotations

import json
import shlex
from pathlib import Path

from frostwatch.commands.common import (
    _load,
    _out_json,
    _self_command,
)
from frostwatch.errors import UsageError


def cmd_init(args) -> int:
    from frostwatch.example_config import example_config_text

    path = Path(args.path)
    if path.exists() and not args.force:
        raise UsageError(f"{path}: already exists; choose another path or pass --force to overwrite")
    text = example_config_text()
    path.parent.mkdir(parents=True, exist_ok=True)
    path.write_text(text, encoding="utf-8")
    print(f"wrote an example config for an invented farm to {path}; edit it, then run "
          f"`{_self_command()} check-config --config {shlex.quote(str(path))}`")
    return 0




def cmd_check_config(args) -> int:
    from frostwatch.alerts.config import load_alerts_config
    from frostwatch.config import effective_settings

    cfg = _load(args)
    eff = effective_settings(cfg)
    deprecations = list(load_alerts_config(cfg).deprecations)
    if args.json:
        _out_json({**eff, "deprecations": deprecations})
        return 0
    print(f"{args.config}: ok ({len(cfg.blocks)} blocks, {len(cfg.stations)} stations)")
    for text in deprecations:
        print(f"  deprecated: {text}")
    for b in cfg.blocks:
        print(f"  block {b.id}: {b.crop}, {b.stage}: T10 {b.kill_10pct_c:.1f} °C, T90 {b.kill_90pct_c:.1f} °C "
              f"({b.critical_source}); protection {b.protection}, margin {b.margin_c:g} °C, mobilisation {b.mobilisation_min:g} min")
    print("effective settings, [daemon], [status_page] and [fleet] included (secrets masked):")
    print(json.dumps(eff, indent=2, default=str))
    return 0




def register(sub, common) -> None:
    s = sub.add_parser("init", help="write a commented example config for an invented farm")
    s.add_argument("path", metavar="PATH")
    s.add_argument("--force", action="store_true", help="overwrite an existing file")
    s.set_defaults(func=cmd_init)

    s = sub.add_parser("check-config", parents=[common], help="check a config and show the effective settings (secrets masked)")
    s.set_defaults(func=cmd_check_config)

