"""What a changed config applies live (the blocks' keys) and what waits for a restart."""

import os

from frostwatch.config import load_config
from frostwatch.reload import apply_config_change, fingerprint

BASE = """
[site]
name = "T"
latitude = 46.0
longitude = -120.0
timezone = "America/Los_Angeles"

[[blocks]]
id = "a"
crop = "apple"
stage = "full bloom"
margin_c = 2.0

[[stations]]
id = "a-low"
block = "a"
height_m = 1.5
"""


def test_block_keys_apply_live_other_sections_wait(tmp_path):
    p = tmp_path / "c.toml"
    p.write_text(BASE)
    cfg = load_config(p)
    fp = fingerprint(p)
    p.write_text(BASE.replace('stage = "full bloom"', 'stage = "tight cluster"').replace("margin_c = 2.0", "margin_c = 1.5"))
    os.utime(p, ns=(fp[2] + 10**9, fp[2] + 10**9))
    assert fingerprint(p) != fp
    r = apply_config_change(cfg)
    assert r.changed and r.error is None and not r.waiting
    assert r.cfg.block("a").stage == "tight cluster" and r.cfg.block("a").kill_10pct_c < cfg.block("a").kill_10pct_c
    assert "stage 'full bloom' -> 'tight cluster'" in r.applied[0] and "margin_c 2.0 -> 1.5" in r.applied[0]
    # a station added: the blocks still apply, the stations wait for a restart
    p.write_text(BASE + '\n[[stations]]\nid = "mast"\nheight_m = 10\n')
    r = apply_config_change(cfg)
    assert r.cfg.stations == cfg.stations and "[stations]" in r.waiting


def test_a_file_that_does_not_load_is_refused_whole(tmp_path):
    p = tmp_path / "c.toml"
    p.write_text(BASE)
    cfg = load_config(p)
    p.write_text(BASE.replace('stage = "full bloom"', 'stage = "no such stage"'))
    r = apply_config_change(cfg)
    assert r.cfg is cfg and not r.changed and "stage" in r.error
    p.write_text(BASE.replace('id = "a"\n', 'id = "b"\n').replace('block = "a"', 'block = "b"'))
    r = apply_config_change(cfg)
    assert r.cfg is cfg and any("blocks added, removed" in w for w in r.waiting)
