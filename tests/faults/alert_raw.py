"""A demo-farm config dict with the console and a local command channel (for the fault tests)."""

from __future__ import annotations

import tomllib
from importlib import resources
from pathlib import Path


def raw_config(db: Path, command_out: Path) -> dict:
    text = resources.files("frostwatch.sample_logs").joinpath("demo-farm.toml").read_text(encoding="utf-8")
    raw = tomllib.loads(text)
    raw["storage"]["path"] = str(db)
    raw["channels"] = [
        {"name": "console", "type": "console"},
        {"name": "siren", "type": "command", "argv": ["sh", "-c", f"cat >> '{command_out}'"], "address": "phone",
         "timeout_s": 5},
    ]
    raw["alerts"]["route"] = {"default": ["console", "siren"]}
    return raw
