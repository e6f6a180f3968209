"""A site's state for the fleet view (frostwatch.fleet.site, .settings): the site id, topics,
versioned payloads small enough for a cellular link, and what is worth sending."""

import copy
import datetime as dt
import json

import pytest

from frostwatch.config import config_from_dict, site_id_from_name
from frostwatch.errors import ConfigError
from frostwatch.fleet import site as fs
from frostwatch.fleet.settings import fleet_settings

GOOD = {
    "site": {"name": "Cedar Bench Orchard", "latitude": 46.0, "longitude": -120.0, "timezone": "America/Los_Angeles"},
    "blocks": [{"id": "east", "crop": "apple", "stage": "full bloom"}],
    "stations": [{"id": "east-low", "block": "east", "height_m": 1.5}],
}


def raw_with(**site) -> dict:
    raw = copy.deepcopy(GOOD)
    raw["site"].update(site)
    return raw


def problems(raw) -> str:
    with pytest.raises(ConfigError) as exc:
        fleet_settings(config_from_dict(raw))
    return "\n".join(exc.value.problems)


@pytest.mark.parametrize("name, slug", [
    ("Cedar Bench Orchard", "cedar-bench-orchard"),
    ("  Río Seco — Block 7 ", "rio-seco-block-7"),
    ("Ridge/North #2", "ridge-north-2"),
    ("x" * 80, "x" * 64),
])
def test_site_id_defaults_to_a_slug_of_the_name(name, slug):
    assert site_id_from_name(name) == slug
    assert config_from_dict(raw_with(name=name)).site.id == slug


def test_site_id_from_the_config_wins():
    assert config_from_dict(raw_with(id="ridge_north")).site.id == "ridge_north"


@pytest.mark.parametrize("bad", ["ridge/north", "ridge+", "#", "", "-lead", "with space", "x" * 65])
def test_a_site_id_that_is_not_one_topic_level_is_refused(bad):
    with pytest.raises(ConfigError) as exc:
        config_from_dict(raw_with(id=bad))
    assert any(p.startswith("site.id:") and "one MQTT topic level" in p for p in exc.value.problems)


def test_a_name_without_latin_letters_needs_an_id():
    with pytest.raises(ConfigError) as exc:
        config_from_dict(raw_with(name="果园"))
    assert any("site.id: cannot make one from site.name" in p for p in exc.value.problems)
    assert config_from_dict(raw_with(name="果园", id="orchard-1")).site.id == "orchard-1"


def test_a_site_id_that_is_a_station_id_is_refused():
    with pytest.raises(ConfigError) as exc:
        config_from_dict(raw_with(id="east-low"))
    assert any("site.id: 'east-low' is also a station id" in p for p in exc.value.problems)


def test_a_site_id_that_is_the_status_or_ack_level_is_refused():
    assert "site.id: 'status' is also the first level of the daemon's status topic" in problems(raw_with(id="status"))
    raw = raw_with(id="acks")
    raw["alerts"] = {"ack_topic": "frostwatch/acks/in"}
    assert "site.id: 'acks' is also the first level of [alerts] ack_topic" in problems(raw)


def test_fleet_section_is_validated_with_every_problem_at_once():
    raw = copy.deepcopy(GOOD)
    raw["fleet"] = {"publish": "yes", "heartbeat_s": 1, "refresh_min": 0, "heartbeet_s": 60, "will_delay_s": 1.5}
    text = problems(raw)
    assert "fleet.publish: 'yes' is not valid; expected true or false" in text
    assert "fleet.heartbeat_s: 1 is not valid" in text
    assert "fleet.refresh_min: 0 is not valid" in text
    assert "fleet.heartbeet_s: unknown key (did you mean 'heartbeat_s'?)" in text
    assert "fleet.will_delay_s: 1.5 is not valid" in text
    raw["fleet"] = {"publish": False, "heartbeat_s": 30, "min_change_c": 0.2}
    s = fleet_settings(config_from_dict(raw))
    assert (s.publish, s.heartbeat_s, s.min_change_c, s.refresh_min) == (False, 30, 0.2, 60.0)


def test_the_demo_config_and_its_fleet_section_load(demo_config):
    from frostwatch.config import load_config

    cfg = load_config(demo_config)
    assert cfg.site.id == "cedar-bench-orchard"
    assert fleet_settings(cfg).publish is True


BLOCK = {"block": "east", "level": "ready", "rank": 3, "monitored": True,
         "as_of": "2027-04-15T09:12:00.123456Z", "predicted_min_c": -1.234, "band_c": 0.81,
         "predicted_min_at": "2027-04-15T12:40:00Z", "t10_crossing_at": dt.datetime(2027, 4, 15, 11, 10, tzinfo=dt.UTC),
         "action": "get ready: the wind machines may be needed by 04:10", "acknowledged": False}


def test_state_messages_are_retained_topics_per_block_with_versioned_json():
    msgs = fs.state_messages("frostwatch/", "cedar-bench", [BLOCK, {**BLOCK, "block": "river", "rank": 0,
                                                                    "level": "rest", "acknowledged": None}])
    assert [t for t, _ in msgs] == ["frostwatch/cedar-bench/state/east", "frostwatch/cedar-bench/state/river"]
    doc = json.loads(msgs[0][1])
    assert doc == {"v": 1, "site": "cedar-bench", "block": "east", "level": "ready", "rank": 3, "monitored": True,
                   "as_of": "2027-04-15T09:12:00Z", "predicted_min_c": -1.2, "band_c": 0.8,
                   "predicted_min_at": "2027-04-15T12:40:00Z", "t10_crossing_at": "2027-04-15T11:10:00Z",
                   "action": "get ready: the wind machines may be needed by 04:10", "acknowledged": False}
    assert b" " not in msgs[0][1].replace(b"get ready: the wind machines may be needed by 04:10", b"")


def test_a_state_payload_is_small_for_a_cellular_link():
    long = {**BLOCK, "action": "x" * 1000, "reason": "y" * 1000}
    (_, payload), = fs.state_messages("frostwatch", "cedar-bench-orchard", [long])
    assert len(payload) < 3 * fs.ACTION_MAX_CHARS + 400
    (_, payload), = fs.state_messages("frostwatch", "cedar-bench-orchard", [BLOCK])
    assert len(payload) < 400


def test_heartbeat_info_will_and_online_topics():
    now = dt.datetime(2027, 4, 15, 9, 12, 30, 500000, tzinfo=dt.UTC)
    topic, payload = fs.heartbeat_message("frostwatch", "ridge", fs.heartbeat_doc(now, 60, "2027-04-15T09:12:00Z",
                                                                                   "2027-04-15T09:10:00Z"))
    assert topic == "frostwatch/ridge/heartbeat"
    assert json.loads(payload) == {"v": 1, "time": "2027-04-15T09:12:30Z", "every_s": 60,
                                   "evaluated_at": "2027-04-15T09:12:00Z", "changed_at": "2027-04-15T09:10:00Z"}
    assert len(payload) < 130  # sent every minute over the uplink
    topic, payload = fs.info_message("frostwatch", fs.info_doc("ridge", "Ridge", 5, ["p" * 500] * 10, now))
    info = json.loads(payload)
    assert topic == "frostwatch/ridge/info" and info["name"] == "Ridge" and info["blocks"] == 5
    assert len(info["problems"]) == fs.PROBLEM_MAX and all(len(p) == fs.PROBLEM_MAX_CHARS for p in info["problems"])
    assert fs.will_message("frostwatch", "ridge") == ("frostwatch/ridge/online", b"offline")
    assert fs.online_message("frostwatch", "ridge") == ("frostwatch/ridge/online", b"online")


def doc(**kw):
    return fs.state_doc("s", {**BLOCK, **kw})


@pytest.mark.parametrize("change, significant", [
    ({}, False),
    ({"as_of": "2027-04-15T09:14:00Z"}, False),
    ({"predicted_min_c": -1.5}, False),
    ({"predicted_min_c": -1.8}, True),
    ({"predicted_min_c": None}, True),
    ({"band_c": 1.4}, True),
    ({"t10_crossing_at": "2027-04-15T11:20:00Z"}, False),
    ({"t10_crossing_at": "2027-04-15T10:50:00Z"}, True),
    ({"t10_crossing_at": None}, True),
    ({"level": "protect", "rank": 4}, True),
    ({"monitored": False}, True),
    ({"acknowledged": True}, True),
    ({"action": "start the wind machines now"}, True),
    # the same advice with new times and temperatures: the projection's own deadbands judge those
    ({"action": "get ready: the wind machines may be needed by 03:55"}, False),
    ({"action": None}, True),
])
def test_only_a_significant_change_is_sent(change, significant):
    assert fs.significant_change(doc(), doc(**change), 0.5, 900) is significant


def test_state_filter_sends_changes_and_refreshes_the_rest():
    f = fs.StateFilter(min_change_c=0.5, min_change_s=900, refresh_s=3600)
    east, river = doc(), doc(block="river")
    assert f.select([east, river], 0.0) == [east, river]
    f.mark_sent([east, river], 0.0)
    drift = doc(predicted_min_c=-1.4, as_of="2027-04-15T09:14:00Z")
    assert f.select([drift, river], 120.0) == []
    act = doc(level="protect", rank=4, as_of="2027-04-15T09:16:00Z")
    assert f.select([act, river], 240.0) == [act]
    f.mark_sent([act], 240.0)
    assert f.select([act, river], 3600.0) == [river]  # river not sent for an hour: refreshed
    f.forget()
    assert len(f.select([act, river], 3601.0)) == 2


def test_block_state_from_the_daemons_block_document():
    """The daemon's block document is the block of `status --json` (the stored decision)."""
    d = {"as_of": "2027-04-15T09:12:00Z", "block": "east", "level": "protect", "rank": 4, "monitored": True,
         "reason": "projected minimum -2.0 °C reaches T10 + margin -0.2 °C", "action": "start the wind machines now",
         "projection": {"station": "east-low", "air_temp_c": 0.4, "predicted_min_c": -2.0, "band_c": 0.9,
                        "predicted_min_at": "2027-04-15T12:40:00Z", "t10_crossing_at": None}}
    s = fs.block_state_from_status_doc(d, rank=4, acknowledged=True)
    assert (s["level"], s["rank"], s["monitored"], s["acknowledged"], s["as_of"]) == ("protect", 4, True, True, d["as_of"])
    assert s["predicted_min_c"] == -2.0 and s["reason"] is None
    blind = fs.block_state_from_status_doc({**d, "level": "go-look", "monitored": False,
                                            "reason": "no reading from its crop-height sensor (east-low)"},
                                           rank=4, acknowledged=None)
    assert blind["monitored"] is False and "no reading" in blind["reason"] and blind["level"] == "go-look"
