"""The fleet view's model (frostwatch.fleet.view), pure: messages in, the ordered picture out.
Never green when blind: a site is reachable only on a fresh heartbeat, with no will and no
bridge-down notice; bad messages are refused with a reason and the rest flows on."""

import datetime as dt
import json

import pytest

from frostwatch.fleet import site as fs
from frostwatch.fleet.view import BLIND_RANK, CAUTION, FleetModel

T0 = dt.datetime(2027, 4, 15, 9, 0, tzinfo=dt.UTC)


def at(seconds: float) -> dt.datetime:
    return T0 + dt.timedelta(seconds=seconds)


def state(site: str, block: str, level: str, rank: int, as_of: dt.datetime, monitored: bool = True, **kw) -> tuple:
    b = {"block": block, "level": level, "rank": rank, "monitored": monitored, "as_of": as_of, **kw}
    return fs.state_messages("frostwatch", site, [b])[0]


def heartbeat(site: str, time: dt.datetime, every_s: int = 60, evaluated: dt.datetime | None = None,
              changed: dt.datetime | None = None) -> tuple:
    return fs.heartbeat_message("frostwatch", site, fs.heartbeat_doc(time, every_s, fs.iso_utc(evaluated),
                                                               fs.iso_utc(changed)))


def live(m: FleetModel, msg: tuple, when: dt.datetime, retained: bool = False):
    return m.on_message(msg[0], msg[1], when, retained)


def site_of(doc: dict, site: str) -> dict:
    return next(s for s in doc["sites"] if s["site"] == site)


def test_a_site_with_a_fresh_heartbeat_is_reachable_and_its_blocks_are_listed():
    m = FleetModel()
    assert live(m, state("ridge", "east", "ready", 3, at(0), predicted_min_c=-1.2, band_c=0.8), at(1)) is None
    assert live(m, heartbeat("ridge", at(2), evaluated=at(0), changed=at(0)), at(2)) is None
    doc = m.snapshot(at(30))
    s = site_of(doc, "ridge")
    assert s["reachable"] is True and s["why_unreachable"] is None and s["last_contact"] == "2027-04-15T09:00:02Z"
    (b,) = s["blocks"]
    assert {k: b[k] for k in ("block", "level", "rank", "monitored", "as_of")} == {
        "block": "east", "level": "ready", "rank": 3, "monitored": True, "as_of": "2027-04-15T09:00:00Z"}
    assert b["predicted_min_c"] == -1.2 and doc["caution"] == CAUTION


def test_a_site_whose_heartbeat_stops_becomes_unreachable_after_two_and_a_half_heartbeats():
    m = FleetModel()
    live(m, state("ridge", "east", "rest", 0, at(0)), at(0))
    live(m, heartbeat("ridge", at(0), every_s=60), at(0))
    assert site_of(m.snapshot(at(179)), "ridge")["reachable"] is True
    s = site_of(m.snapshot(at(181)), "ridge")
    assert s["reachable"] is False and "no heartbeat for 3 min" in s["why_unreachable"]
    assert s["last_contact"] == "2027-04-15T09:00:00Z"  # "no contact since 09:00"
    live(m, heartbeat("ridge", at(200)), at(200))
    assert site_of(m.snapshot(at(201)), "ridge")["reachable"] is True


def test_the_will_and_the_bridge_notice_make_a_site_unreachable_at_once():
    m = FleetModel()
    live(m, state("ridge", "east", "protect", 4, at(0)), at(0))
    live(m, heartbeat("ridge", at(0)), at(0))
    live(m, ("frostwatch/ridge/online", b"offline"), at(5))
    s = site_of(m.snapshot(at(6)), "ridge")
    assert s["reachable"] is False and "last will" in s["why_unreachable"]
    live(m, ("frostwatch/ridge/online", b"online"), at(10))
    live(m, heartbeat("ridge", at(11)), at(11))
    assert site_of(m.snapshot(at(12)), "ridge")["reachable"] is True
    live(m, ("frostwatch/ridge/bridge", b"0"), at(20))
    s = site_of(m.snapshot(at(21)), "ridge")
    assert s["reachable"] is False and "link" in s["why_unreachable"]
    live(m, ("frostwatch/ridge/bridge", b"1"), at(30))
    assert site_of(m.snapshot(at(31)), "ridge")["reachable"] is True


def test_never_green_when_blind_a_site_with_states_but_no_heartbeat_is_unreachable():
    m = FleetModel()
    live(m, state("quiet", "east", "rest", 0, at(0)), at(0), retained=True)
    s = site_of(m.snapshot(at(1)), "quiet")
    assert s["reachable"] is False and s["why_unreachable"] == "no heartbeat received from this site"


def test_a_retained_heartbeat_counts_from_its_own_time_never_from_its_arrival():
    m = FleetModel()
    # the view starts at 09:30 and gets the retained heartbeat of 09:00
    live(m, heartbeat("old", at(0)), at(1800), retained=True)
    live(m, state("old", "east", "rest", 0, at(0)), at(1800), retained=True)
    s = site_of(m.snapshot(at(1801)), "old")
    assert s["reachable"] is False and s["last_contact"] == "2027-04-15T09:00:00Z"
    # a site clock 20 min ahead cannot keep a dead site green: its stamp is capped at arrival
    live(m, heartbeat("ahead", at(3000)), at(1800), retained=True)
    live(m, state("ahead", "east", "rest", 0, at(1800)), at(1800), retained=True)
    s = site_of(m.snapshot(at(1800 + 200)), "ahead")
    assert s["reachable"] is False and any("clock is 20 min ahead" in p for p in s["problems"])


def test_sites_and_blocks_come_highest_rank_first_and_blind_counts_as_act():
    m = FleetModel()
    now = at(10)
    for site, blocks in {"calm": [("a", "rest", 0, True)], "busy": [("a", "ready", 3, True),
                                                                        ("b", "all-hands", 5, True)],
                         "blindblock": [("a", "rest", 0, False), ("b", "wait", 2, True)]}.items():
        for block, lvl, rank, mon in blocks:
            live(m, state(site, block, lvl, rank, at(0), monitored=mon), at(0))
        live(m, heartbeat(site, at(5)), at(5))
    live(m, state("gone", "a", "rest", 0, at(0)), at(0))  # no heartbeat: unreachable
    doc = m.snapshot(now)
    assert [s["site"] for s in doc["sites"]] == ["busy", "gone", "blindblock", "calm"]
    assert [b["block"] for b in site_of(doc, "busy")["blocks"]] == ["b", "a"]
    assert [b["block"] for b in site_of(doc, "blindblock")["blocks"]] == ["a", "b"]
    assert site_of(doc, "blindblock")["order_rank"] == BLIND_RANK
    assert site_of(doc, "blindblock")["blocks"][0]["rank"] == 0  # the rank shown is the site's own


def test_a_state_is_current_as_of_the_latest_evaluation_when_no_newer_change_is_missing():
    m = FleetModel()
    live(m, state("ridge", "east", "ready", 3, at(0)), at(0))
    live(m, heartbeat("ridge", at(600), evaluated=at(600), changed=at(0)), at(600))
    assert site_of(m.snapshot(at(601)), "ridge")["blocks"][0]["as_of"] == "2027-04-15T09:10:00Z"
    # the site says it sent a change at 09:08 that has not arrived: the state is only as of 09:00
    live(m, heartbeat("ridge", at(660), evaluated=at(660), changed=at(480)), at(660))
    b = site_of(m.snapshot(at(661)), "ridge")["blocks"][0]
    assert b["as_of"] == "2027-04-15T09:00:00Z" and b["state_sent_at"] == "2027-04-15T09:00:00Z"


@pytest.mark.parametrize("topic, payload, why", [
    ("frostwatch/ridge/state/east", b"{not json", "is not JSON"),
    ("frostwatch/ridge/state/east", b"[1, 2]", "is not a JSON object"),
    ("frostwatch/ridge/state/east", json.dumps({"v": 2, "block": "east"}).encode(), "version 2"),
    ("frostwatch/ridge/state/east", json.dumps({"block": "east"}).encode(), "no version number"),
    ("frostwatch/ridge/state/east", json.dumps({"v": 1, "block": "west", "level": "x", "rank": 1,
                                                "monitored": True, "as_of": "2027-04-15T09:00:00Z"}).encode(),
     "not its topic's"),
    ("frostwatch/ridge/state/east", json.dumps({"v": 1, "block": "east", "level": "x", "rank": True,
                                                "monitored": True, "as_of": "2027-04-15T09:00:00Z"}).encode(),
     ".rank"),
    ("frostwatch/ridge/state/east", json.dumps({"v": 1, "block": "east", "level": "x", "rank": 1,
                                                "monitored": "yes", "as_of": "2027-04-15T09:00:00Z"}).encode(),
     ".monitored"),
    ("frostwatch/ridge/state/east", json.dumps({"v": 1, "block": "east", "level": "x", "rank": 1,
                                                "monitored": True, "as_of": "2027-04-15T09:00:00"}).encode(),
     "no UTC offset"),
    ("frostwatch/ridge/state/east", json.dumps({"v": 1, "block": "east", "level": "x", "rank": 1, "monitored": True,
                                                "as_of": "2027-04-15T09:00:00Z", "predicted_min_c": 1e999}).encode(),
     "predicted_min_c"),
    ("frostwatch/ridge/heartbeat", json.dumps({"v": 1, "time": "2027-04-15T09:00:00Z", "every_s": 0}).encode(),
     "every_s"),
    ("frostwatch/ridge/online", b"maybe", "expected online or offline"),
    ("frostwatch/ridge/bridge", b"2", "expected 1 or 0"),
    ("frostwatch/ridge/other", b"x", "not a fleet topic"),
    ("frostwatch/bad site/heartbeat", b"x", "not a site id"),
    ("elsewhere/ridge/heartbeat", b"x", "is not frostwatch/SITE"),
    ("frostwatch/ridge/state/east", b"\xff\xfe", "is not JSON"),
])
def test_a_bad_message_is_refused_with_its_reason_and_the_rest_flows_on(topic, payload, why):
    m = FleetModel()
    live(m, state("ridge", "east", "ready", 3, at(0)), at(0))
    live(m, heartbeat("ridge", at(0)), at(0))
    reason = m.on_message(topic, payload, at(1), False)
    assert reason is not None and why in reason
    doc = m.snapshot(at(2))
    assert doc["rejected"]["count"] == 1 and why in doc["rejected"]["latest"][0]["reason"]
    s = site_of(doc, "ridge")  # what was accepted before is still there
    assert s["reachable"] is True and s["blocks"][0]["level"] == "ready"


def test_the_sites_own_status_topics_and_flag_only_sites_are_passed_over():
    m = FleetModel()
    assert m.on_message("frostwatch/status/online", b"online", at(0), True) is None
    assert m.on_message("frostwatch/status/heartbeat", b"1796257433.2", at(0), False) is None
    assert m.on_message("frostwatch/newsite/bridge", b"1", at(0), True) is None
    assert m.snapshot(at(1))["sites"] == [] and m.rejected_count == 0


def test_a_cleared_retained_state_removes_the_block_and_info_names_the_site():
    m = FleetModel()
    live(m, state("ridge", "east", "ready", 3, at(0)), at(0))
    live(m, state("ridge", "west", "ready", 3, at(0)), at(0))
    live(m, heartbeat("ridge", at(0)), at(0))
    live(m, fs.info_message("frostwatch", fs.info_doc("ridge", "Ridge Ranch", 3, ["east-low: silent"], at(0))), at(0))
    assert m.on_message("frostwatch/ridge/state/west", b"", at(1), False) is None
    s = site_of(m.snapshot(at(2)), "ridge")
    assert [b["block"] for b in s["blocks"]] == ["east"] and s["name"] == "Ridge Ranch"
    assert s["problems"] == ["east-low: silent", "2 of its 3 blocks have sent no state yet"]


def test_a_state_nested_deeper_than_the_json_parser_goes_is_a_rejection():
    # json.loads raises RecursionError (not ValueError) on 4,000 nested brackets: the message is
    # refused and counted like any other that is not JSON, and the next good one is taken.
    m = FleetModel()
    reason = m.on_message("frostwatch/site-a/state/east", b"[" * 4000 + b"]" * 4000, at(0), True)
    assert reason is not None and "not JSON" in reason and m.rejected_count == 1


def test_a_removed_site_cleared_with_empty_retained_messages_leaves_the_view_without_a_rejection():
    # README "Many farms, one view": clear a removed site's topics with empty retained messages. A
    # view already running takes them live: the site goes, nothing is counted as unreadable, and
    # another site is untouched (before, the site stayed, soon "NOT REACHABLE" at the top for good,
    # and the empty online and bridge messages were refused as bad).
    m = FleetModel()
    for site in ("sold-ranch", "ridge"):
        live(m, state(site, "top", "rest", 0, at(0)), at(0))
        live(m, heartbeat(site, at(0)), at(0))
        live(m, fs.info_message("frostwatch", fs.info_doc(site, site.title(), 1, [], at(0))), at(0))
        live(m, fs.online_message("frostwatch", site), at(0))
        assert m.on_message(f"frostwatch/{site}/bridge", b"1", at(0), False) is None
    for kind in ("state/top", "heartbeat", "info", "online", "bridge"):
        assert m.on_message(f"frostwatch/sold-ranch/{kind}", b"", at(5), False) is None
    live(m, heartbeat("ridge", at(200)), at(200))
    doc = m.snapshot(at(201))
    assert [s["site"] for s in doc["sites"]] == ["ridge"] and doc["rejected"]["count"] == 0
    assert "sold-ranch" not in m.sites


def test_a_site_cleared_only_in_part_is_never_shown_reachable_without_its_heartbeat():
    m = FleetModel()
    live(m, state("ridge", "east", "ready", 3, at(0)), at(0))
    live(m, heartbeat("ridge", at(0)), at(0))
    assert m.on_message("frostwatch/ridge/heartbeat", b"", at(5), False) is None
    s = site_of(m.snapshot(at(6)), "ridge")
    assert s["reachable"] is False and s["order_rank"] == BLIND_RANK and [b["block"] for b in s["blocks"]] == ["east"]


def test_a_sites_unreadable_messages_are_its_problems_naming_the_topic():
    # A site whose state the view cannot read (a newer version, say) is told by topic and reason
    # on that site, not "sent no state yet"; a site none of whose messages can be read is shown,
    # unreachable (never green when blind), instead of missing from the view.
    m = FleetModel()
    live(m, state("ridge", "east", "ready", 3, at(0)), at(0))
    live(m, heartbeat("ridge", at(0)), at(0))
    live(m, fs.info_message("frostwatch", fs.info_doc("ridge", "Ridge", 2, [], at(0))), at(0))
    v2 = json.dumps({"v": 2, "site": "ridge", "block": "west", "level": "protect", "rank": 4}).encode()
    assert "upgrade the fleet view" in m.on_message("frostwatch/ridge/state/west", v2, at(1), True)
    assert m.on_message("frostwatch/newer/heartbeat", json.dumps({"v": 2}).encode(), at(1), True) is not None
    doc = m.snapshot(at(2))
    ridge = site_of(doc, "ridge")
    assert ridge["reachable"] is True
    assert ridge["problems"] == ["frostwatch/ridge/state/west could not be read: state of ridge/west is version 2; "
                                 "this frostwatch reads up to 1: upgrade the fleet view"]
    newer = site_of(doc, "newer")
    assert newer["reachable"] is False and newer["order_rank"] == BLIND_RANK
    assert newer["why_unreachable"] == "its heartbeat could not be read (see its problems)"
    assert newer["problems"][0].startswith("frostwatch/newer/heartbeat could not be read: heartbeat of newer is version 2")
    # a readable state on the same topic replaces the problem
    live(m, state("ridge", "west", "protect", 4, at(3)), at(3))
    assert site_of(m.snapshot(at(4)), "ridge")["problems"] == []


def test_a_live_heartbeat_stamped_long_ago_is_an_old_copy_never_fresh_contact():
    # A site's bridge that reconnects forwards the site broker's retained heartbeat to a running
    # view as a live message: from a hung daemon it is minutes old. Counted from its arrival (as
    # before) the site showed reachable for 3 minutes more; counted from its own time it is not,
    # and the reason says why. A heartbeat a few seconds in transit is still fresh contact.
    m = FleetModel()
    live(m, state("stuck", "east", "rest", 0, at(0)), at(0))
    live(m, heartbeat("stuck", at(0)), at(600))  # stamped 10 min before it arrived
    s = site_of(m.snapshot(at(601)), "stuck")
    assert s["reachable"] is False and s["order_rank"] == BLIND_RANK and s["last_contact"] == "2027-04-15T09:00:00Z"
    assert s["why_unreachable"] == ("no heartbeat for 10 min (expected every 60 s); the latest came 10 min after "
                                    "the time it carries (an old copy, or the site's clock is behind)")
    live(m, heartbeat("stuck", at(650)), at(655))  # a fresh one, 5 s in transit
    s = site_of(m.snapshot(at(656)), "stuck")
    assert s["reachable"] is True and s["last_contact"] == "2027-04-15T09:10:55Z"


def test_every_block_carries_every_key_the_readme_lists_reason_null_when_monitored():
    # README: --json blocks hold block, level, rank, monitored, as_of, predicted_min_c, band_c,
    # predicted_min_at, t10_crossing_at, action, acknowledged, reason; the site sends `reason` only
    # for a block not monitored, so a script reading b["reason"] failed on every monitored block.
    m = FleetModel()
    live(m, state("ridge", "east", "ready", 3, at(0)), at(0))
    live(m, state("ridge", "west", "go-look", 4, at(0), monitored=False, reason="east-low silent"), at(0))
    live(m, heartbeat("ridge", at(0)), at(0))
    keys = {"block", "level", "rank", "monitored", "as_of", "predicted_min_c", "band_c", "predicted_min_at",
            "t10_crossing_at", "action", "acknowledged", "reason"}
    blocks = {b["block"]: b for b in site_of(m.snapshot(at(1)), "ridge")["blocks"]}
    assert keys <= set(blocks["east"]) and keys <= set(blocks["west"])
    assert blocks["east"]["reason"] is None and blocks["west"]["reason"] == "east-low silent"
