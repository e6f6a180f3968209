"""`frostwatch stage`: validate, rewrite the stage line in place (all else kept), log the change;
`--suggest` prints degree-hour suggestions and never changes anything."""

from __future__ import annotations

import datetime as dt
import json

import pytest

from frostwatch.cli import main
from frostwatch.commands.stage import rewrite_stage
from frostwatch.config import load_config
from frostwatch.errors import UsageError
from frostwatch.models import Reading
from frostwatch.physics import crops
from frostwatch.store.db import Store


def run(capsys, *argv):
    rc = main(["stage", *argv])
    out, err = capsys.readouterr()
    return rc, out, err


def test_stage_rewrites_only_that_line_and_logs_the_change(capsys, demo_config):
    before = demo_config.read_text(encoding="utf-8")
    rc, out, err = run(capsys, "--config", str(demo_config), "--block", "river", "--stage", "First-White", "--json")
    assert rc == 0, err
    doc = json.loads(out)
    assert doc["old_stage"] == "full bloom" and doc["new_stage"] == "first white" and doc["changed"]
    # WSU EB1128 via Penn State: sweet cherry first white T10 27 F, T90 24 F
    assert doc["kill_10pct_c"] == pytest.approx(-2.78, abs=0.01)
    after = demo_config.read_text(encoding="utf-8")
    diff = [(a, b) for a, b in zip(before.splitlines(), after.splitlines(), strict=True) if a != b]
    assert diff == [('stage = "full bloom"', 'stage = "first white"')]
    cfg = load_config(demo_config)
    assert cfg.block("river").stage == "first white"
    assert cfg.block("east").stage == "full bloom"  # the other full-bloom block is untouched
    with Store.open(cfg.storage.path) as store:
        ev = store.events(dt.datetime(2000, 1, 1, tzinfo=dt.UTC), dt.datetime(2100, 1, 1, tzinfo=dt.UTC), "stage_change")
    assert [(e["subject"], e["detail"]) for e in ev] == [("river", "full bloom -> first white")]


def test_stage_same_stage_changes_nothing(capsys, demo_config):
    before = demo_config.read_bytes()
    rc, out, _ = run(capsys, "--config", str(demo_config), "--block", "east", "--stage", "full bloom")
    assert rc == 0 and "already at" in out
    assert demo_config.read_bytes() == before


@pytest.mark.parametrize(("block", "stage", "listed"), [
    ("river", "petal fall", "first swelling, side green, green tip"),  # sweet cherry's stages, in order
    ("nope", "full bloom", "east, river, hill"),
])
def test_stage_unknown_exits_2_listing_known_and_leaves_the_file(capsys, demo_config, block, stage, listed):
    before = demo_config.read_bytes()
    rc, out, err = run(capsys, "--config", str(demo_config), "--block", block, "--stage", stage)
    assert rc == 2 and out == ""
    assert listed in err
    assert demo_config.read_bytes() == before


def test_stage_needs_block_and_stage(capsys, demo_config):
    rc, _, err = run(capsys, "--config", str(demo_config), "--block", "east")
    assert rc == 2 and "--suggest" in err


def test_rewrite_stage_keeps_comments_quotes_and_crlf():
    text = ('# farm\r\n[[blocks]]\r\nid = "a"\r\nstage = \'full bloom\'   # set 12 April\r\n\r\n'
            '[[blocks]]\r\nid = "b"\r\nstage = "full bloom"\r\n[[stations]]\r\nid = "s"\r\nstage = "x"\r\n')
    out = rewrite_stage(text, "b", "post bloom")
    assert out == text.replace('stage = "full bloom"', 'stage = "post bloom"')
    out = rewrite_stage(text, "a", "post bloom")
    assert "stage = 'post bloom'   # set 12 April\r\n" in out and out.count("full bloom") == 1
    with pytest.raises(UsageError, match="not found"):
        rewrite_stage(text, "zzz", "post bloom")
    with pytest.raises(UsageError, match="no `stage"):
        rewrite_stage('[[blocks]]\nid = "c"\ncrop = "apple"\n', "c", "post bloom")


def _add_biofix(path, block_id, date):
    text = path.read_text(encoding="utf-8")
    marker = f'id = "{block_id}"\n'
    path.write_text(text.replace(marker, marker + f'biofix_date = "{date}"\n', 1), encoding="utf-8")


def test_suggest_from_stored_readings_is_only_a_suggestion(capsys, demo_config):
    now = dt.datetime.now(dt.UTC).replace(minute=0, second=0, microsecond=0)
    _add_biofix(demo_config, "east", (now - dt.timedelta(days=20)).date().isoformat())
    cfg = load_config(demo_config)
    hours = 240
    readings = [Reading(now - dt.timedelta(hours=h), "east-low", "air_temperature", 15.0) for h in range(1, hours + 1)]
    with Store.open(cfg.storage.path) as store:
        store.add_readings(readings, "test")
    before = demo_config.read_bytes()
    rc, out, err = run(capsys, "--config", str(demo_config), "--suggest", "--json")
    assert rc == 0, err
    doc = json.loads(out)
    east = next(r for r in doc["suggestions"] if r["block"] == "east")
    gdh = crops.growing_degree_hours([15.0] * hours, 1.0)  # ASYMCUR, Anderson et al. 1986
    assert east["gdh_since_biofix"] == pytest.approx(gdh, abs=1)
    assert east["hours_with_readings"] == hours
    assert east["suggested_stage"] == crops.suggest_stage("apple", gdh)
    hill = next(r for r in doc["suggestions"] if r["block"] == "hill")
    assert hill["suggested_stage"] is None and "biofix_date" in hill["note"]
    assert "confirm" in doc["note"]
    assert demo_config.read_bytes() == before  # never applied
    rc, out, _ = run(capsys, "--config", str(demo_config), "--suggest")
    assert rc == 0 and "SUGGESTIONS" in out and "suggests" in out
    assert demo_config.read_bytes() == before


def test_bad_biofix_date_is_a_config_error(capsys, demo_config):
    _add_biofix(demo_config, "east", "15 March")
    rc, _, err = run(capsys, "--config", str(demo_config), "--suggest")
    assert rc == 2 and "blocks.east.biofix_date" in err and "YYYY-MM-DD" in err


def _odd_layout(demo_text: str) -> str:
    """The demo config laid out as a person might have left it: [site] last, the stations before
    the blocks, a block between two stations, odd spacing, tabs, quoted keys, comments everywhere."""
    head, rest = demo_text.split("[site]", 1)
    site, rest = rest.split("# One [[blocks]]", 1)
    blocks, rest = rest.split("# One [[stations]]", 1)
    stations, tail = rest.split("\n[storage]", 1)
    east, river, hill = blocks.split("[[blocks]]")[1:]
    river = river.replace('id = "river"', "'id'   =   'river'   # quoted key, literal string")
    river = river.replace('stage = "full bloom"', '"stage"\t=  "full bloom"     # set 12 April, after the walk')
    first_station, other_stations = stations.split("[[stations]]", 2)[1:]
    return (head + "[storage]" + tail.rstrip("\n") + "\n\n"
            + "# the sensors first\n[[stations]]" + first_station
            + "[[blocks]]   # the cherries, between two stations\n" + river.lstrip("\n")
            + "[[stations]]" + other_stations
            + "\n\n  [[blocks]]\n" + east.lstrip("\n") + "[[ blocks ]]" + hill
            + "\n#   the site comes last here\n[site]" + site)


def test_stage_keeps_comments_spacing_and_table_order_of_an_odd_config(capsys, demo_config):
    # tomlkit edits the one value: a config laid out by hand (sections out of the usual order, a
    # block between stations, quoted keys, tabs, trailing comments) comes back byte for byte but
    # for that value. The regular expressions before it did not find the quoted `"stage"` key.
    text = _odd_layout(demo_config.read_text(encoding="utf-8"))
    demo_config.write_text(text, encoding="utf-8")
    assert load_config(demo_config).block("river").stage == "full bloom"  # a config that loads
    rc, out, err = run(capsys, "--config", str(demo_config), "--block", "river", "--stage", "first white", "--json")
    assert rc == 0, err
    after = demo_config.read_text(encoding="utf-8")
    assert after == text.replace('"stage"\t=  "full bloom"', '"stage"\t=  "first white"')
    cfg = load_config(demo_config)
    assert cfg.block("river").stage == "first white" and cfg.block("east").stage == "full bloom"


def test_rewrite_stage_in_interleaved_tables_changes_the_right_one_of_two_equal_lines():
    # tomlkit writes an array of tables together, so this layout is edited line-wise: of the two
    # equal lines, the one that sets block b's stage (checked by reading the result) changes.
    text = ('[[blocks]]\nid = "a"\nstage = "full bloom"\n\n[[stations]]\nid = "s"\n\n'
            '[[blocks]]\nid = "b"\nstage = "full bloom"\n# end\n')
    out = rewrite_stage(text, "b", "petal fall")
    assert out == text[: text.rindex("full bloom")] + "petal fall" + text[text.rindex("full bloom") + 10:]
    out = rewrite_stage(text, "a", "petal fall")
    assert out == text.replace("full bloom", "petal fall", 1)
