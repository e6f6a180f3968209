"""Broker faults against the real daemon and a real Mosquitto (reliability.md 9, tests 5 and 6).

The broker's keepalive is 2 s here so that a silent link is noticed in seconds; the daemon's
broker_down_alert_s is 2 s. Every wait is bounded; the broker is stopped by its own pid.
"""

from __future__ import annotations

import datetime as dt
import os
import signal
import threading
import time

import pytest
from fault_helpers import (
    DaemonProc,
    connect_publisher,
    health_events,
    publish,
    query,
    reading,
    wait_until,
    write_config,
)

pytestmark = pytest.mark.broker

KEEPALIVE_S = 2


def _site(tmp_path, port):
    return write_config(tmp_path, port, daemon="broker_down_alert_s = 2\n", broker=f"keepalive_s = {KEEPALIVE_S}")


def _console_deliveries(db, subject_like: str) -> list[tuple]:
    return query(db, "SELECT d.channel, d.status, a.message FROM deliveries d JOIN alerts a ON a.key = d.alert_key "
                     "WHERE a.message LIKE ? ORDER BY d.id", (subject_like,))


class Sensor:
    """A sensor that cannot buffer: it reports east-low every 0.2 s while its broker connection is
    up and loses the reading otherwise (so a broker outage leaves a real gap)."""

    def __init__(self, port: int):
        self.c = connect_publisher(port, "fault-sensor")
        self.c.reconnect_delay_set(1, 1)
        self.lost = 0
        self.sent = 0
        self._stop = threading.Event()
        self.th = threading.Thread(target=self._run, daemon=True)
        self.th.start()

    def _run(self):
        k = 0
        while not self._stop.wait(0.2) and k < 2000:
            k += 1
            t = dt.datetime.now(dt.UTC).replace(microsecond=(k % 5) * 200_000)
            if self.c.is_connected():
                self.c.publish(*reading("east-low", t, 4.0), qos=1)
                self.sent += 1
            else:
                self.lost += 1

    def stop(self):
        self._stop.set()
        self.th.join(5)
        time.sleep(0.5)
        self.c.loop_stop()


def test_broker_crash_gap_is_reported_never_silent(tmp_path, mosquitto):
    """Pass: after SIGKILL of mosquitto, a "broker" health event is recorded and delivered on the
    console channel (not MQTT) within 2 x keepalive + 10 s; after the broker is back the daemon
    reconnects, records a "recovered" event, and the gap in the stored readings lies inside the
    recorded outage (down event .. recovery event), so no reading is missing without a record."""
    cfg = _site(tmp_path, mosquitto.port)
    db = tmp_path / "frostwatch.db"
    d = DaemonProc(cfg)
    d.start()
    sensor = None
    try:
        assert wait_until(lambda: "connected to" in d.log_text(), 20)
        sensor = Sensor(mosquitto.port)
        assert wait_until(lambda: len(query(db, "SELECT 1 FROM readings")) >= 10, 20)
        killed = time.time()
        mosquitto.kill()
        assert wait_until(lambda: health_events(db, "broker"), 2 * KEEPALIVE_S + 10), "no broker-down event"
        down_ms, _, detail = health_events(db, "broker")[0]
        assert "no connection to the MQTT broker" in detail
        assert down_ms / 1000 - killed <= 2 * KEEPALIVE_S + 10
        assert wait_until(lambda: any(ch == "console" and st == "sent"
                                      for ch, st, _ in _console_deliveries(db, "broker:%")), 15), \
            "the broker-down alert was not delivered on the console channel"
        time.sleep(2.0)  # a real outage: the sensor loses readings meanwhile
        mosquitto.start()
        assert wait_until(lambda: d.log_text().count("connected to") >= 2, 15), "no reconnect"
        assert wait_until(lambda: any("recovered" in e[2] for e in health_events(db, "broker")), 15)
        time.sleep(1.5)
    finally:
        if sensor:
            sensor.stop()
    assert sensor.lost > 0, "the outage should have cost the sensor some readings"
    events = health_events(db, "broker")
    rec_ms = next(e[0] for e in events if "recovered" in e[2])
    times = [r[0] for r in query(db, "SELECT time_utc_ms FROM readings WHERE station='east-low' ORDER BY time_utc_ms")]
    gaps = [(a, b) for a, b in zip(times, times[1:], strict=False) if b - a > 1000]
    assert gaps, "expected a gap in the readings"
    g0, g1 = max(gaps, key=lambda g: g[1] - g[0])
    assert g0 <= down_ms <= g1 + 1000, "the down event falls inside the gap"
    assert rec_ms >= g1 - 3000, "the recovery is recorded when readings resume"
    assert d.terminate() == 0


def test_half_open_broker_raises_broker_down_over_a_non_mqtt_channel(tmp_path, mosquitto):
    """Pass: with the broker SIGSTOPped (no FIN/RST, only keepalive can tell), the daemon raises
    a "broker" health event and delivers it on the console channel within 2.5 x keepalive + 15 s;
    after SIGCONT it reconnects and every reading published before and during the stop is stored
    exactly once."""
    cfg = _site(tmp_path, mosquitto.port)
    db = tmp_path / "frostwatch.db"
    d = DaemonProc(cfg)
    d.start()
    pid = mosquitto.proc.pid
    t0 = dt.datetime.now(dt.UTC).replace(microsecond=0) - dt.timedelta(minutes=30)
    try:
        assert wait_until(lambda: "connected to" in d.log_text(), 20)
        pub = connect_publisher(mosquitto.port)
        assert publish(pub, [reading("hill-low", t0 + dt.timedelta(seconds=k), 3.0) for k in range(50)])
        assert wait_until(lambda: len(query(db, "SELECT 1 FROM readings")) >= 50, 20)
        os.kill(pid, signal.SIGSTOP)
        for k in range(50, 100):  # sent into the frozen broker: they sit in the publisher's queue
            pub.publish(*reading("hill-low", t0 + dt.timedelta(seconds=k), 3.0), qos=1)
        assert wait_until(lambda: health_events(db, "broker"), 2.5 * KEEPALIVE_S + 15), "no broker-down event"
        assert wait_until(lambda: any(ch == "console" and st == "sent"
                                      for ch, st, _ in _console_deliveries(db, "broker:%")), 15)
    finally:
        os.kill(pid, signal.SIGCONT)
    assert wait_until(lambda: len(query(db, "SELECT 1 FROM readings WHERE station='hill-low'")) >= 100, 40), \
        "readings sent during the stop did not arrive after SIGCONT"
    time.sleep(1.0)
    rows = query(db, "SELECT time_utc_ms FROM readings WHERE station='hill-low' ORDER BY time_utc_ms")
    assert len(rows) == 100 and len({r[0] for r in rows}) == 100  # nothing lost, nothing doubled
    pub.loop_stop()
    assert d.terminate() == 0
