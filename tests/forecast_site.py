"""A small synthetic site shared by the forecast and backtest tests."""

from __future__ import annotations

from pathlib import Path

from frostwatch.config import load_config

SITE = """
[site]
name = "Test Flat"
latitude = 46.4
longitude = -120.3
elevation_m = 300
timezone = "America/Los_Angeles"

[[blocks]]
id = "b"
crop = "apple"
stage = "full bloom"
protection = "{protection}"
application_rate_mm_h = 3.5

[[stations]]
id = "b-low"
block = "b"
height_m = 1.5
interval_s = 300

[[stations]]
id = "b-low-2"
block = "b"
height_m = 1.5
interval_s = 300

[[stations]]
id = "b-tower"
block = "b"
height_m = 10.0
interval_s = 300

[storage]
path = "t.db"

[broker]
host = "127.0.0.1"
port = 1883
prefix = "frostwatch"
"""


def make_cfg(tmp_path: Path, protection: str = "none"):
    p = tmp_path / "site.toml"
    p.write_text(SITE.format(protection=protection), encoding="utf-8")
    return load_config(str(p))
