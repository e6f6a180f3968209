"""Pure parts of the daemon: sensor-health rules, [[mappings]] parsing and validation, sd_notify
over a fake NOTIFY_SOCKET."""

from __future__ import annotations

import datetime as dt
import json
import os
import socket

import numpy as np
import pytest

from frostwatch import health, sdnotify
from frostwatch.config import load_config
from frostwatch.errors import ConfigError
from frostwatch.ingest.mqtt import mappings_from_config
from frostwatch.ingest.parse import parse_mqtt_message
from frostwatch.models import Reading, Rejection

NOW_S = 1_900_000_000.0
RULES = health.HealthRules()


def _series(**kw):
    return {k: (np.asarray(t, float), np.asarray(v, float)) for k, (t, v) in kw.items()}


def _every(minutes: int, n: int, end_s: float = NOW_S) -> np.ndarray:
    return end_s - 60.0 * minutes * np.arange(n)[::-1]


def test_healthy_station_has_no_problem(demo_config):
    cfg = load_config(demo_config)
    st = cfg.station("east-low")
    t = _every(5, 30)
    s = {("east-low", "air_temperature"): (t, 3.0 + 0.01 * np.arange(30))}
    assert health.station_problems(st, s, NOW_S, 0, RULES) == []


def test_silent_stuck_range_and_battery(demo_config):
    cfg = load_config(demo_config)
    st = cfg.station("east-low")
    t = _every(5, 30, NOW_S - 16 * 60)  # usual interval 5 min; silent 16 min > 3 intervals
    s = {("east-low", "air_temperature"): (t, 3.0 + 0.01 * np.arange(30))}
    keys = [p.key for p in health.station_problems(st, s, NOW_S, 0, RULES)]
    assert keys == ["east-low:silent"]
    t = _every(5, 30)
    s = {("east-low", "air_temperature"): (t, np.full(30, 2.5)), ("east-low", "battery_voltage"): (t, np.full(30, 3.1))}
    keys = {p.key for p in health.station_problems(st, s, NOW_S, 5, RULES)}
    assert keys == {"east-low:stuck", "east-low:range", "east-low:battery"}


def test_a_block_without_a_healthy_crop_sensor_is_not_monitored_and_no_health_problem(demo_config):
    """The block's own monitoring state (frostwatch.monitoring) says it, not a health problem:
    the alert rules raise it as the block's `unmonitored` alert."""
    from frostwatch.decision import MonitorReason
    from frostwatch.monitoring import block_monitoring

    cfg = load_config(demo_config)
    t = _every(5, 30)
    ok = 3.0 + 0.01 * np.arange(30)
    s = {(sid, "air_temperature"): (t, ok) for sid in ("east-low", "river-low", "river-low-b")}
    rep = health.assess(cfg, s, NOW_S, {}, rules=RULES)
    assert not [p for p in rep.problems if p.key.startswith("block:")]
    hill = block_monitoring(cfg, cfg.block("hill"), s, NOW_S)
    assert (hill.monitored, hill.reason, hill.stations) == (False, MonitorReason.NO_DATA, ("hill-low",))
    # one of river's two crop sensors still speaks: river is monitored
    del s[("river-low", "air_temperature")]
    assert block_monitoring(cfg, cfg.block("river"), s, NOW_S).monitored
    # a silent sensor: not monitored since its last reading
    late = {("hill-low", "air_temperature"): (t - 3600.0, ok)}
    m = block_monitoring(cfg, cfg.block("hill"), late, NOW_S)
    assert (m.monitored, m.reason) == (False, MonitorReason.SILENT)
    assert m.since_utc.timestamp() == pytest.approx(t[-1] - 3600.0)



def test_transitions_raise_once_and_clear_once():
    p = health.Problem("a:silent", "a", "silent")
    rep = health.HealthReport((p,))
    raised, cleared, active = health.transitions({}, rep)
    assert raised == [p] and cleared == []
    raised, cleared, active = health.transitions(active, rep)
    assert raised == [] and cleared == []
    urgent = health.Problem("a:silent", "a", "silent", urgent=True)
    raised, _, active = health.transitions(active, health.HealthReport((urgent,)))
    assert raised == [urgent]
    raised, cleared, active = health.transitions(active, health.HealthReport(()))
    assert raised == [] and cleared == [urgent] and active == {}


MAPPINGS = """
[[mappings]]
topic = "lora/{station}/up"
fields = { "obj.temp" = "air_temperature", rh = "relative_humidity" }
units = { "obj.temp" = "degF" }
time_field = "ts"
time_format = "unix_s"
station_map = { "dev-17" = "east-low" }

[[mappings]]
topic = "shed/weather"
station = "shed-sky"
fields = { sky = "surface_temperature" }
"""


def test_mapped_layout_is_read(demo_config):
    demo_config.write_text(demo_config.read_text() + MAPPINGS)
    cfg = load_config(demo_config)
    maps = mappings_from_config(cfg)
    assert [m.subscription for m in maps] == ["lora/+/up", "shed/weather"]
    now = dt.datetime.fromtimestamp(NOW_S, dt.UTC)
    known = {s.id for s in cfg.stations}
    payload = json.dumps({"ts": NOW_S - 60, "obj": {"temp": 32.0}, "rh": 91}).encode()
    out = parse_mqtt_message("lora/dev-17/up", payload, "frostwatch", now, known, mappings=maps)
    assert out == [
        Reading(now - dt.timedelta(seconds=60), "east-low", "air_temperature", 0.0),
        Reading(now - dt.timedelta(seconds=60), "east-low", "relative_humidity", 91.0),
    ]
    out = parse_mqtt_message("shed/weather", b'{"sky": -20.5}', "frostwatch", now, known, mappings=maps)
    assert out == [Reading(now, "shed-sky", "surface_temperature", -20.5)]
    bad = parse_mqtt_message("lora/dev-99/up", payload, "frostwatch", now, known, mappings=maps)
    assert isinstance(bad[0], Rejection) and "unknown station 'dev-99'" in bad[0].reason
    nan = parse_mqtt_message("lora/dev-17/up", b'{"ts": 1e999, "rh": 50}', "frostwatch", now, known, mappings=maps)
    assert isinstance(nan[0], Rejection) and "not a number of seconds" in nan[0].reason
    # the native form still works beside the mappings
    out = parse_mqtt_message("frostwatch/east-low/air_temperature", b"2.5", "frostwatch", now, known, mappings=maps)
    assert out == [Reading(now, "east-low", "air_temperature", 2.5)]


def test_mappings_section_is_validated(demo_config):
    demo_config.write_text(demo_config.read_text() + """
[[mappings]]
topic = "x/{device}/y"
fields = { t = "air_temp" }
units = { t = "furlongs" , q = "degC"}
time_format = "epoch"
colour = "red"
""")
    with pytest.raises(ConfigError) as e:  # loading the config runs this module's validator
        load_config(demo_config)
    msg = str(e.value)
    for want in (
        "mappings[0].colour: unknown key",
        "mappings[0].topic: 'x/{device}/y'; only one whole level may be {station}",
        "mappings[0].station: missing",
        "mappings[0].fields.t: 'air_temp' is not a quantity",
        "mappings[0].units.q: not one of this mapping's fields",
        "mappings[0].time_format: 'epoch'; expected one of iso8601, unix_s, unix_ms",
    ):
        assert want in msg, (want, msg)


def test_sd_notify_sends_datagrams_to_notify_socket(tmp_path, monkeypatch):
    path = tmp_path / "notify.sock"
    srv = socket.socket(socket.AF_UNIX, socket.SOCK_DGRAM)
    srv.bind(str(path))
    srv.settimeout(2)
    try:
        monkeypatch.setenv("NOTIFY_SOCKET", str(path))
        assert sdnotify.notify("READY=1")
        assert srv.recv(100) == b"READY=1"
        monkeypatch.setenv("WATCHDOG_USEC", "30000000")
        monkeypatch.setenv("WATCHDOG_PID", str(os.getpid()))
        assert sdnotify.watchdog_interval_s() == 15.0
        monkeypatch.setenv("WATCHDOG_PID", "1")
        assert sdnotify.watchdog_interval_s() is None  # meant for another process
        monkeypatch.delenv("NOTIFY_SOCKET")
        assert not sdnotify.notify("WATCHDOG=1")  # outside systemd: a no-op
    finally:
        srv.close()
