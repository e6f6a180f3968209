"""A poison message costs only itself (issue 18, item 1): the real daemon and a real Mosquitto.

Each poison is published between two good readings; the good ones must be stored and the poison
must cost exactly one rejection row. Before the fix, a 401-digit integer or a year-1 time raised
OverflowError in the parser, the writer retried its batch every second forever and nothing after
it was stored or acknowledged (a retained one came back on every session).
"""

from __future__ import annotations

import datetime as dt
import json

import pytest
from fault_helpers import DaemonProc, connect_publisher, publish, query, reading, wait_until, write_config

pytestmark = pytest.mark.broker

TOPIC = "frostwatch/east-low/air_temperature"


def _now() -> dt.datetime:
    return dt.datetime.now(dt.UTC).replace(microsecond=0)


def _iso(t: dt.datetime) -> str:
    return t.isoformat().replace("+00:00", "Z")


def poisons(t: dt.datetime) -> list[tuple[str, bytes, str]]:
    """(topic, payload, words the rejection's reason must hold)."""
    big = "1" + "0" * 400  # a 401-digit integer
    return [
        (TOPIC, f'{{"time": "{_iso(t)}", "value": {big}}}'.encode(), "401 digits"),
        (TOPIC, b'{"time": "0001-01-01T00:00:00+14:00", "value": 3.0}', "out of range"),
        (TOPIC, b'{"time": "9999-12-31T23:59:59-14:00", "value": 3.0}', "out of range"),
        (TOPIC, f'{{"time": "{_iso(t)}", "value": 1e99999}}'.encode(), "not a finite number"),
        (TOPIC, f'{{"time": "{_iso(t)}", "value": {big}.5e-3}}'.encode(), "not a finite number"),
        ("frostwatch/east-low", f'{{"time": "{_iso(t)}", "relative_humidity": {big}, "air_temperature": 2.5}}'.encode(),
         "401 digits"),
        (TOPIC, f'{{"time": "{_iso(t)}", "value": 2.0, "value": 40.0}}'.encode(), "more than once"),
    ]


def _rejections(db) -> list[tuple[str, str]]:
    return query(db, "SELECT source, reason FROM rejections ORDER BY id")


def test_each_poison_costs_one_rejection_row_and_the_readings_around_it_are_stored(tmp_path, mosquitto):
    """Pass: for each poison (a 401-digit integer value, 0001-01-01T00:00:00+14:00,
    9999-12-31T23:59:59-14:00, huge exponents, a 401-digit value beside a good one in a station
    message, a duplicated key) published between two good readings, both good readings are
    stored (and the good quantity of the mixed message), the poison costs exactly one rejection
    row naming what is wrong, and the daemon keeps storing afterwards."""
    cfg = write_config(tmp_path, mosquitto.port)
    db = tmp_path / "frostwatch.db"
    d = DaemonProc(cfg)
    d.start()
    pub = connect_publisher(mosquitto.port, "poison-pub")
    try:
        assert wait_until(lambda: "connected to" in d.log_text(), 20)
        t0 = _now() - dt.timedelta(minutes=30)
        ps = poisons(t0)
        msgs = []
        for i, (topic, payload, _why) in enumerate(ps):
            msgs.append(reading("river-low", t0 + dt.timedelta(seconds=2 * i), 4.0))
            msgs.append((topic, payload))
            msgs.append(reading("hill-low", t0 + dt.timedelta(seconds=2 * i + 1), 4.5))
        assert publish(pub, msgs)
        want = 2 * len(ps) + 1  # + the good air temperature of the mixed station message
        assert wait_until(lambda: query(db, "SELECT count(*) FROM readings") == [(want,)], 30), d.log_text()[-3000:]
        assert wait_until(lambda: len(_rejections(db)) >= len(ps), 10)
        rows = _rejections(db)
        assert len(rows) == len(ps), rows
        for (_t, _p, why), (_src, reason) in zip(ps, rows, strict=True):
            assert why in reason, (why, reason)
            assert len(reason) <= 500
        assert publish(pub, [reading("east-low", t0 + dt.timedelta(minutes=5), 3.0)])
        assert wait_until(lambda: query(db, "SELECT count(*) FROM readings") == [(want + 1,)], 20)
        assert d.alive()
    finally:
        pub.loop_stop()
        d.terminate()


def test_a_retained_poison_costs_one_rejection_row_across_restarts(tmp_path, mosquitto):
    """Pass: a retained 401-digit value on a reading topic, published before the daemon starts,
    costs one rejection row; readings published before and after it are stored; after a restart
    of the daemon (session resumed) and after a restart with a fresh session (the broker sends
    the retained message again) it is still one row, and new readings keep being stored."""
    cfg = write_config(tmp_path, mosquitto.port)
    db = tmp_path / "frostwatch.db"
    t0 = _now() - dt.timedelta(minutes=20)
    pub = connect_publisher(mosquitto.port, "retained-pub")
    big = "9" * 401
    try:
        # the daemon's session must exist so that the readings around the poison are queued for it
        d = DaemonProc(cfg)
        d.start()
        assert wait_until(lambda: "connected to" in d.log_text(), 20)
        assert d.terminate() == 0
        infos = [pub.publish(*reading("river-low", t0, 4.0), qos=1),
                 pub.publish(TOPIC, f'{{"time": "{_iso(t0)}", "value": {big}}}'.encode(), qos=1, retain=True),
                 pub.publish(*reading("hill-low", t0, 4.5), qos=1)]
        for i in infos:
            i.wait_for_publish(10)
        d = DaemonProc(cfg)
        d.start()
        assert wait_until(lambda: query(db, "SELECT count(*) FROM readings") == [(2,)], 30), d.log_text()[-3000:]
        assert wait_until(lambda: len(_rejections(db)) == 1, 10)
        assert "401 digits" in _rejections(db)[0][1]
        assert d.terminate() == 0
        d = DaemonProc(cfg)  # the same session: the retained message is not sent again
        d.start()
        assert publish(pub, [reading("river-low", t0 + dt.timedelta(seconds=1), 4.1)])
        assert wait_until(lambda: query(db, "SELECT count(*) FROM readings") == [(3,)], 30)
        assert d.terminate() == 0
        cfg.write_text(cfg.read_text().replace("[broker]", '[broker]\nclient_id = "frostwatch-fresh"', 1))
        d = DaemonProc(cfg)  # a new session: the broker sends the retained poison again
        mark = len(d.log_text())
        d.start()
        assert wait_until(lambda: "(session new)" in d.log_text()[mark:], 20)
        assert publish(pub, [reading("hill-low", t0 + dt.timedelta(seconds=1), 4.6)])
        assert wait_until(lambda: query(db, "SELECT count(*) FROM readings") == [(4,)], 30), d.log_text()[-3000:]
        assert len(_rejections(db)) == 1, _rejections(db)
        assert d.terminate() == 0
    finally:
        pub.publish(TOPIC, b"", qos=1, retain=True).wait_for_publish(5)  # clear the retained message
        pub.loop_stop()
        if d.alive():
            d.terminate()


def test_a_bare_401_digit_number_and_poisons_on_a_mapped_topic_cost_one_row_each(tmp_path, mosquitto):
    """Pass: the bare-number form (a 401-digit payload) and a mapped layout whose unix time is a
    401-digit integer each cost one rejection row, and readings around them are stored."""
    tail = ('\n[[mappings]]\ntopic = "lora/{station}/up"\nfields = { temp = "air_temperature" }\n'
            'time_field = "ts"\ntime_format = "unix_s"\nstation_map = { "dev-1" = "east-low" }\n')
    cfg = write_config(tmp_path, mosquitto.port, tail=tail)
    db = tmp_path / "frostwatch.db"
    d = DaemonProc(cfg)
    d.start()
    pub = connect_publisher(mosquitto.port, "poison-pub-2")
    try:
        assert wait_until(lambda: "connected to" in d.log_text(), 20)
        t0 = _now() - dt.timedelta(minutes=10)
        msgs = [reading("river-low", t0, 4.0), (TOPIC, b"1" + b"0" * 400),
                reading("river-low", t0 + dt.timedelta(seconds=1), 4.0),
                ("lora/dev-1/up", json.dumps({"ts": 10**400, "temp": 3.0}).encode()),
                ("lora/dev-1/up", json.dumps({"ts": int(t0.timestamp()) + 3, "temp": 3.0}).encode())]
        assert publish(pub, msgs)
        assert wait_until(lambda: query(db, "SELECT count(*) FROM readings") == [(3,)], 30), d.log_text()[-3000:]
        assert wait_until(lambda: len(_rejections(db)) == 2, 10), _rejections(db)
    finally:
        pub.loop_stop()
        d.terminate()
