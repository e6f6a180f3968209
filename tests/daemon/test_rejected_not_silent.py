"""A sensor whose messages all arrive but are rejected is not a dead sensor, and the maintainer's
health alert says so, with the reason and the topic: before, it read "the sensor is silent", and
whoever went out at 3 a.m. found a sensor blinking away (a firmware set to a decimal comma, a
wrong unit). A decimal comma gets its own plain reason rather than the JSON parser's."""

from __future__ import annotations

import datetime as dt
import sqlite3

import pytest
from daemon_helpers import connect_publisher, publish_all, wait_until

from frostwatch.ingest.parse import parse_mqtt_message
from frostwatch.models import Rejection


def test_a_decimal_comma_is_named():
    """Pass: "3,4" is rejected as a decimal comma, with the number it probably meant. Fails on
    the JSON parser's "Extra data: line 1 column 2 (char 1)"."""
    now = dt.datetime(2027, 4, 15, 9, 0, tzinfo=dt.UTC)
    (r,) = parse_mqtt_message("frostwatch/east-low/air_temperature", b"3,4", "frostwatch", now, {"east-low"})
    assert isinstance(r, Rejection)
    assert r.reason == "payload '3,4' is not a number: write the decimal point as '.' (3.4)", r.reason


def _health_messages(db):
    con = sqlite3.connect(str(db), timeout=10)
    try:
        return con.execute("SELECT message FROM alerts WHERE key LIKE 'farm/%/health-%'").fetchall()
    except sqlite3.OperationalError:
        return []
    finally:
        con.close()


@pytest.mark.broker
def test_a_sensor_whose_messages_are_rejected_is_reported_with_the_reason(site, mosquitto, daemon_proc):
    """Pass: east-tower sends only "2,5"; its health alert names the rejection and the topic,
    while hill-low, which sends nothing, is reported silent with no such words. Fails when the
    alert only says the sensor is silent."""
    _cfg, db = site
    daemon_proc.start()
    assert wait_until(lambda: "connected to" in daemon_proc.log_text(), 20)
    pub = connect_publisher(mosquitto.port)
    publish_all(pub, [("frostwatch/east-tower/air_temperature", b"2,5")] * 3)
    pub.loop_stop()

    def tower():
        return [m for (m,) in _health_messages(db) if "east-tower" in m]

    def hill():
        return [m for (m,) in _health_messages(db) if "hill-low" in m]

    # both problems are raised by the daemon's health check; under load they may be stored a check apart
    assert wait_until(lambda: tower() and hill(), 60), daemon_proc.log_text()
    (msg,) = tower()
    assert ("its messages arrive but are rejected: payload '2,5' is not a number: write the decimal point as '.' "
            "(2.5) (mqtt:frostwatch/east-tower/air_temperature)") in msg, msg
    assert all("rejected" not in m for m in hill()), hill()
    # `frostwatch status` words the problem as the alert does, not as its key ("east-tower:silent")
    from daemon_helpers import run_cli

    def status_line():
        r = run_cli("status", "--config", str(_cfg))
        return next((x for x in r.stdout.splitlines() if x.startswith("  sensor health: east-tower")), "")

    assert wait_until(lambda: "rejected" in status_line(), 30, step_s=1.0), status_line()
    assert status_line().startswith("  sensor health: east-tower: no valid reading: its messages arrive but are "
                                    "rejected: payload '2,5' is not a number"), status_line()


def test_a_station_that_reported_then_was_refused_says_so(demo_config):
    """Pass: a station with valid readings until 10 min ago, whose messages since are refused, is
    reported as 'no valid reading for 10 min: its messages arrive but are rejected: ...' (the
    reason first, so a fleet view's shortened line keeps it); one whose last refusal is older than
    its last valid reading is plainly silent."""
    import numpy as np

    from frostwatch import health
    from frostwatch.config import load_config

    cfg = load_config(demo_config)
    st = cfg.station("east-low")
    now = 1_900_000_000.0
    t = now - 600.0 - 60.0 * np.arange(30)[::-1]
    s = {("east-low", "air_temperature"): (t, 3.0 + 0.01 * np.arange(30))}
    why = "payload '2,5' is not a number (mqtt:frostwatch/east-low/air_temperature)"
    (p,) = health.station_problems(st, s, now, 0, health.HealthRules(), None, True, (now - 30.0, why))
    assert p.detail == f"no valid reading for 10 min: its messages arrive but are rejected: {why}", p.detail
    (p,) = health.station_problems(st, s, now, 0, health.HealthRules(), None, True, (now - 3600.0, why))
    assert p.detail.startswith("silent for 10 min (usual interval 1 min"), p.detail
