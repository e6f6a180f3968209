"""The readers' side of the stored decision (frostwatch.status.document): the daemon's liveness from its
heartbeat, monitoring as a reader sees it now, and the JSON of one block; the decision's stored
form round-trips exactly."""

from __future__ import annotations

import dataclasses
import datetime as dt
import json

import pytest

from frostwatch.advice import plan_advice
from frostwatch.advice.plan import Step
from frostwatch.config import load_config
from frostwatch.decision import (
    Decision,
    Monitoring,
    MonitorReason,
    decision_from_doc,
    decision_to_doc,
    summarise_projection,
)
from frostwatch.display import Display
from frostwatch.models import Projection
from frostwatch.status.document import (
    Liveness,
    decision_json,
    effective_monitoring,
    liveness,
    status_document,
)
from frostwatch.store import Store
from frostwatch.store import decisions as stored

UTC = dt.UTC
NOW = dt.datetime(2027, 4, 15, 9, 0, tzinfo=UTC)


def _decision(cfg, monitored=True, as_of=NOW, fresh_until=NOW + dt.timedelta(minutes=10)) -> Decision:
    b = cfg.block("east")
    p = Projection(time_utc=as_of, block="east", station="east-low", air_temp_c=-1.0, dew_point_c=-5.0, wet_bulb_c=None,
                   predicted_min_c=-3.0, predicted_min_at_utc=as_of + dt.timedelta(hours=4), band_c=0.8,
                   crossings_utc={"t10_margin": as_of - dt.timedelta(minutes=20)}, inversion_c=3.0,
                   projected_inversion_c=3.0, inversion_class="moderate", wind_speed_m_s=0.5, regime="radiation",
                   method="test", sunrise_utc=as_of + dt.timedelta(hours=5),
                   curve_time_utc=tuple(as_of + dt.timedelta(minutes=5 * k) for k in range(30)),
                   curve_air_temp_c=tuple(-1.0 - 0.05 * k for k in range(30)))
    plan = plan_advice(p, b, as_of)
    mon = Monitoring(monitored, MonitorReason.OK if monitored else MonitorReason.SILENT, ("east-low",),
                     None if monitored else as_of - dt.timedelta(hours=1), as_of - dt.timedelta(minutes=1), fresh_until)
    level = "protect" if monitored else "go-look"
    return Decision(block="east", as_of_utc=as_of, night=dt.date(2027, 4, 14), level=level, rank=4, frost_level="protect",
                    step=Step.START_NOW if monitored else Step.CHECK_SENSORS, monitoring=mon,
                    projection=summarise_projection(p), plan=plan, alert_key="east/2027-04-14/003-act",
                    inputs_utc={"east-low/air_temperature": as_of - dt.timedelta(minutes=1)})


def test_the_stored_decision_round_trips_exactly(demo_config):
    cfg = load_config(demo_config)
    for dcs in (_decision(cfg), _decision(cfg, monitored=False)):
        back = decision_from_doc(json.loads(json.dumps(decision_to_doc(dcs))))
        assert back == dcs
    assert len(_decision(cfg).projection.curve_time_utc) == 6  # thinned to half-hour points (and the last)


def test_a_newer_decision_version_is_refused_not_misread(demo_config):
    doc = decision_to_doc(_decision(load_config(demo_config)))
    with pytest.raises(ValueError, match="version"):
        decision_from_doc({**doc, "version": 99})


@pytest.mark.parametrize(("age_s", "every_s", "alive"), [(30, 300, True), (614, 300, True), (616, 300, False),
                                                         (18, 2, True), (20, 2, False)])
def test_the_daemon_is_alive_while_its_heartbeat_is_within_two_store_intervals(age_s, every_s, alive):
    beat = {"time": (NOW - dt.timedelta(seconds=age_s)).isoformat(), "stored_every_s": every_s, "heartbeat_s": 2}
    assert liveness(beat, NOW).alive is alive


def test_a_stopped_or_absent_daemon_is_not_alive():
    assert liveness(None, NOW) == Liveness(False, None, False, None, None)
    beat = {"time": NOW.isoformat(), "stored_every_s": 300, "stopped": True}
    live = liveness(beat, NOW)
    assert not live.alive and live.stopped and live.last_beat_utc == NOW


def test_a_reader_sees_not_monitored_when_the_daemon_stopped_the_decision_is_old_or_the_sensor_went_stale(demo_config):
    cfg = load_config(demo_config)
    dcs = _decision(cfg)
    up = Liveness(True, NOW, False, 1.0)
    assert effective_monitoring(dcs, up, NOW, 300).monitored
    down = Liveness(False, NOW - dt.timedelta(minutes=7), False, 420.0)
    m = effective_monitoring(dcs, down, NOW, 300)
    assert (m.monitored, m.reason, m.since_utc) == (False, MonitorReason.DAEMON_STOPPED, NOW - dt.timedelta(minutes=7))
    later = NOW + dt.timedelta(minutes=6)
    assert effective_monitoring(dcs, up, later, 300).reason is MonitorReason.NO_EVALUATION
    stale = effective_monitoring(dcs, up, NOW + dt.timedelta(minutes=11), 3600)
    assert (stale.monitored, stale.reason, stale.since_utc) == (False, MonitorReason.SILENT, NOW - dt.timedelta(minutes=1))
    assert effective_monitoring(None, up, NOW, 300).reason is MonitorReason.NO_EVALUATION


def test_block_json_carries_the_contract_keys_and_never_green_words_when_not_monitored(demo_config):
    cfg = load_config(demo_config)
    d = Display("degC", cfg.site.tz)
    up = Liveness(True, NOW, False, 1.0)
    j = decision_json(_decision(cfg), "east", NOW, up, d, 300)
    assert (j["level"], j["rank"], j["monitored"], j["as_of"]) == ("protect", 4, True, "2027-04-15T09:00:00Z")
    assert j["action"].startswith("start the wind machines now") and j["headline"].startswith("east: PROTECT")
    assert j["projection"]["band_low_c"] == pytest.approx(-3.8) and j["ready_by"] is not None
    down = Liveness(False, NOW - dt.timedelta(minutes=30), False, 1800.0)
    j = decision_json(_decision(cfg), "east", NOW, down, d, 300)
    assert (j["level"], j["rank"], j["monitored"], j["frost_level"]) == ("go-look", 4, False, "protect")
    assert j["headline"].startswith("east: GO LOOK: NOT MONITORED since 01:30") and "daemon is not running" in j["reason"]
    for text in (j["headline"], j["action"], j["reason"]):
        assert "n/a" not in text and "no alert" not in text and "start" not in text
    none = decision_json(None, "east", NOW, up, d, 300)
    assert (none["level"], none["monitored"], none["evaluated_at"]) == ("go-look", False, None)


def test_status_document_reads_the_newest_decision_at_or_before_now(demo_config):
    cfg = load_config(demo_config)
    with Store.open(cfg.storage.path) as store:
        first, second = _decision(cfg), _decision(cfg, as_of=NOW + dt.timedelta(minutes=2))
        second = dataclasses.replace(second, level="all-hands", rank=5, frost_level="all-hands")
        stored.save_decisions(store, [first, second])
        store.set_meta("daemon.heartbeat", json.dumps({"time": NOW.isoformat(), "stored_every_s": 300}))
        doc = status_document(cfg, store, NOW + dt.timedelta(minutes=1))
        east = next(b for b in doc["blocks"] if b["block"] == "east")
        assert east["as_of"] == "2027-04-15T09:00:00Z" and east["level"] == "protect"
        doc = status_document(cfg, store, NOW + dt.timedelta(minutes=3))
        east = next(b for b in doc["blocks"] if b["block"] == "east")
        assert east["level"] == "all-hands" and doc["daemon_alive"] is True
        others = [b for b in doc["blocks"] if b["block"] != "east"]
        assert all(b["level"] == "go-look" and "no evaluation" in b["reason"] for b in others)


def test_decisions_are_stored_compressed_and_a_plain_json_row_still_reads(demo_config):
    cfg = load_config(demo_config)
    dcs = _decision(cfg)
    with Store.open(cfg.storage.path) as store:
        stored.save_decisions(store, [dcs])
        with store.lock:
            (doc,) = store.conn.execute("SELECT doc FROM decisions").fetchone()
        assert isinstance(doc, bytes) and len(doc) < len(json.dumps(decision_to_doc(dcs))) / 2
        later = dataclasses.replace(dcs, as_of_utc=NOW + dt.timedelta(minutes=2))
        row = list(stored.row_of(later))
        row[-1] = json.dumps(decision_to_doc(later))  # as a store written before compression holds it
        with store.transaction() as c:
            c.execute("INSERT INTO decisions(block, time_utc_ms, level, rank, frost_level, monitored, step, "
                      "predicted_min_c, predicted_min_at_utc_ms, crossing_utc_ms, ready_by_utc_ms, version, doc) "
                      "VALUES (?,?,?,?,?,?,?,?,?,?,?,?,?)", row)
        assert [d.as_of_utc for d in stored.between(store, NOW, NOW + dt.timedelta(minutes=5))] == \
            [NOW, NOW + dt.timedelta(minutes=2)]
        assert stored.latest(store)["east"] == later


def test_every_status_that_shows_advice_carries_its_cautions(demo_config):
    """Pass: each block of `status --json` (the same JSON as the status/blocks/BLOCK topic and
    /status.json) carries the cautions of its advice, the wind-machine block's own among them, and
    `frostwatch status` prints them under the blocks. Fails when the status text shows "start the
    wind machines now" with no "frostwatch advises; the grower decides" anywhere (the README says
    every piece of advice it prints or sends says so)."""
    import subprocess
    import sys

    cfg = load_config(demo_config)
    d = Display("degC", cfg.site.tz)
    j = decision_json(_decision(cfg), "east", NOW, Liveness(True, NOW, False, 1.0), d, 300)
    assert j["cautions"][0] == "frostwatch advises; the grower decides."
    assert "Keep clear of wind machines when starting them." in j["cautions"]
    assert decision_json(None, "east", NOW, Liveness(True, NOW, False, 1.0), d, 300)["cautions"][0].startswith(
        "frostwatch advises")
    with Store.open(cfg.storage.path) as store:
        stored.save_decisions(store, [_decision(cfg)])
    r = subprocess.run([sys.executable, "-m", "frostwatch", "status", "--config", str(demo_config)],
                       capture_output=True, text=True, timeout=120)
    assert r.returncode == 0, r.stderr
    line = next((x for x in r.stdout.splitlines() if x.startswith("cautions: ")), "")
    assert line.startswith("cautions: frostwatch advises; the grower decides. Check with your own calibrated"), r.stdout
