"""Config validation: every problem at once, each as section.key, with did-you-mean."""

import json
import tomllib

import pytest

from frostwatch.config import config_from_dict, effective_settings, load_config
from frostwatch.errors import ConfigError

GOOD = {
    "site": {"name": "Test", "latitude": 46.0, "longitude": -120.0, "timezone": "America/Los_Angeles"},
    "blocks": [{"id": "a", "crop": "apple", "stage": "full bloom"}],
    "stations": [{"id": "a-low", "block": "a", "height_m": 1.5}, {"id": "a-tower", "block": "a", "height_m": 10}],
}


def problems_of(raw) -> list[str]:
    with pytest.raises(ConfigError) as exc:
        config_from_dict(raw)
    return exc.value.problems


def test_good_config_loads_with_table_critical_temperatures():
    cfg = config_from_dict(GOOD)
    b = cfg.blocks[0]
    # WSU EB0913 via Penn State: apple full bloom T10 28 degF, T90 25 degF
    assert b.kill_10pct_c == pytest.approx(-2.22, abs=0.01)
    assert b.kill_90pct_c == pytest.approx(-3.89, abs=0.01)
    assert [s.role for s in cfg.stations] == ["crop", "tower"]


def test_every_problem_is_listed_at_once():
    raw = {
        "site": {"name": "T", "latitude": 95, "longitude": -120.0, "timezone": "Pacific Time", "elevaton_m": 3},
        "blocks": [{"id": "a", "crop": "banana", "stage": "full bloom", "protection": "fans"}],
        "stations": [{"id": "a-low", "block": "b", "height_m": 1.5}],
        "storag": {},
    }
    probs = problems_of(raw)
    text = "\n".join(probs)
    assert "site.latitude: 95 is out of range" in text
    assert "site.timezone: 'Pacific Time' is not an IANA time zone name" in text
    assert "site.elevaton_m: unknown key (did you mean 'elevation_m'?)" in text
    assert "blocks.a.crop:" in text and "apple" in text  # lists the known crops
    assert "blocks.a.protection: 'fans'" in text
    assert "stations.a-low.block: 'b' is not a declared block" in text
    assert "storag: unknown section (did you mean 'storage'?)" in text
    assert len(probs) >= 7


def test_unknown_stage_lists_the_known_stages():
    raw = dict(GOOD, blocks=[{"id": "a", "crop": "apple", "stage": "fool bloom"}])
    (p,) = problems_of(raw)
    assert p.startswith("blocks.a.stage:") and "full bloom" in p


def test_stage_names_match_without_regard_to_case_spaces_hyphens():
    raw = dict(GOOD, blocks=[{"id": "a", "crop": "Sweet-Cherry", "stage": "FULL-bloom"}])
    assert config_from_dict(raw).blocks[0].crop == "sweet cherry"


def test_a_block_without_crop_height_station_is_a_problem():
    raw = dict(GOOD, stations=[{"id": "a-tower", "block": "a", "height_m": 10}])
    assert any("no crop-height station" in p for p in problems_of(raw))


def test_wrong_types_are_named_with_what_is_expected():
    raw = dict(GOOD, site=dict(GOOD["site"], latitude="forty-six"))
    assert problems_of(raw) == ["site.latitude: 'forty-six' is not valid; expected a number"]


def test_config_error_names_the_file(tmp_path):
    p = tmp_path / "site.toml"
    p.write_text("[site]\nname = 3\n")
    with pytest.raises(ConfigError, match=str(p)):
        load_config(p)
    p.write_text("not toml [")
    with pytest.raises(ConfigError, match="not valid TOML"):
        load_config(p)




def test_secrets_are_masked_in_effective_settings():
    raw = dict(GOOD, broker={"username": "fw", "password": "hunter2", "password_file": "/etc/fw/pw"})
    raw["broker"].pop("password")
    cfg = config_from_dict(raw)
    eff = effective_settings(cfg)
    assert eff["broker"]["password_file"] == "/etc/fw/pw"
    cfg2 = config_from_dict(dict(GOOD, alerts={"webhook_token": "abc"}))
    assert effective_settings(cfg2)["alerts"]["webhook_token"] == "***"


def test_init_writes_a_config_that_loads(tmp_path, capsys):
    from frostwatch.cli import main

    p = tmp_path / "farm.toml"
    assert main(["init", str(p)]) == 0
    cfg = load_config(p)
    assert cfg.site.name and len(cfg.blocks) == 3
    assert "#" in p.read_text()  # commented
    assert main(["init", str(p)]) == 2  # no silent overwrite
    tomllib.loads(p.read_text())


def test_storage_path_is_relative_to_the_config_file(tmp_path):
    p = tmp_path / "sub" / "site.toml"
    p.parent.mkdir()
    p.write_text(
        '[site]\nname="T"\nlatitude=46.0\nlongitude=-120.0\ntimezone="UTC"\n'
        '[[blocks]]\nid="a"\ncrop="pear"\nstage="full bloom"\n'
        '[[stations]]\nid="a-low"\nblock="a"\nheight_m=1.5\n'
        '[storage]\npath="data/fw.db"\n'
    )
    assert load_config(p).storage.path == (tmp_path / "sub" / "data" / "fw.db").resolve()


def test_problems_of_every_section_are_listed_together(tmp_path):
    """Loading checks the sections other modules own ([alerts], [[channels]], [daemon]) too."""
    p = tmp_path / "site.toml"
    p.write_text(
        '[site]\nname="x"\nlatitude=1\nlongitude=1\ntimezone="UTC"\n'
        '[[blocks]]\nid="a"\ncrop="apple"\nstage="full bloom"\n'
        '[[stations]]\nid="s"\nblock="a"\nheight_m=1\n'
        '[alerts]\nrepeat_interval_mn=3\n[daemon]\nbogus=1\n[[channels]]\nname="e"\ntype="emial"\n'
    )
    with pytest.raises(ConfigError) as exc:
        load_config(p)
    text = "\n".join(exc.value.problems)
    assert "alerts.repeat_interval_mn" in text and "channels[0].type" in text and "daemon.bogus" in text


def _with(blocks=None, stations=None):
    raw = {k: (list(v) if isinstance(v, list) else dict(v)) for k, v in GOOD.items()}
    if blocks is not None:
        raw["blocks"] = blocks
    if stations is not None:
        raw["stations"] = stations
    return raw


def test_reference_station_and_weather_role():
    # DESIGN.md 1.4 (second round): a station with no block and role "weather" is the site's
    # reference air; a block may name its own reference_station
    stations = GOOD["stations"] + [{"id": "met", "height_m": 2.0, "role": "weather"},
                                   {"id": "b-low", "block": "b", "height_m": 1.5}, {"id": "mast", "height_m": 10.0}]
    blocks = [{"id": "a", "crop": "apple", "stage": "full bloom", "protection": "overtree_sprinkler",
               "application_rate_mm_h": 3.5, "reference_station": "b-low"},
              {"id": "b", "crop": "pear", "stage": "full bloom"}]
    cfg = config_from_dict(_with(blocks, stations))
    assert cfg.block("a").reference_station == "b-low"
    probs = problems_of(_with([dict(blocks[0], reference_station="a-low"), blocks[1]], stations))
    assert any("blocks.a.reference_station: 'a-low' is in the block itself" in p for p in probs)
    probs = problems_of(_with([dict(blocks[0], reference_station="mett"), blocks[1]], stations))
    assert any("'mett' is not a declared station (did you mean 'met'?)" in p for p in probs)
    probs = problems_of(_with([dict(blocks[0], reference_station="mast"), blocks[1]], stations))
    assert any("has role 'tower'" in p for p in probs)
    probs = problems_of(_with(None, GOOD["stations"] + [{"id": "met", "block": "a", "height_m": 2.0, "role": "weather"}]))
    assert any("stations.met.role" in p and "leave `block` out" in p for p in probs)


def test_station_positions_and_heater_keys():
    stations = [dict(GOOD["stations"][0], x_m=10.0, y_m=-5.0), {"id": "mast", "height_m": 10.0, "x_m": 300, "y_m": 0}]
    cfg = config_from_dict(_with(None, stations))
    assert cfg.station("a-low").position_m == (10.0, -5.0) and cfg.station("mast").block is None
    probs = problems_of(_with(None, [dict(GOOD["stations"][0], x_m=10.0)]))
    assert any("give both x_m and y_m" in p for p in probs)
    blocks = [{"id": "a", "crop": "apple", "stage": "full bloom", "protection": "heaters", "heater_kw": 0,
               "heaters_per_ha": 90}]
    probs = problems_of(_with(blocks))
    assert any("blocks.a.heater_kw" in p for p in probs)
    ok = config_from_dict(_with([dict(blocks[0], heater_kw=40)]))
    assert ok.block("a").heater_kw == 40 and ok.block("a").heaters_per_ha == 90


def test_check_config_shows_the_channels_without_their_secrets_and_no_secret_that_is_not_set(demo_config):
    """Pass: the effective settings list the alert channels as configured, a gateway URL without
    its query string (the api_key), and a secret that is not set as null. Fails when the channels
    are missing (a grower checking the SMS gateway's address saw nothing of it) or an unset status
    page token shows as '***' (as if one were set)."""
    raw = dict(GOOD, channels=[{"name": "sms", "type": "webhook", "url": "http://127.0.0.1:9/send?api_key=SECRET123",
                                "address": "phone"}])
    eff = effective_settings(config_from_dict(raw))
    (sms,) = eff["channels"]
    assert sms["url"] == "http://127.0.0.1:9/send?<redacted>" and sms["address"] == "phone"
    assert "SECRET123" not in json.dumps(eff)
    assert eff["status_page"]["token"] is None
