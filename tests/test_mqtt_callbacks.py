"""An exception in a paho callback is logged with its name and dropped, never raised into paho's
thread (which would end it without a word and stop every reading)."""

from __future__ import annotations

import logging

from frostwatch.mqtt_callbacks import guarded


def test_a_failing_callback_is_logged_and_dropped(caplog):
    def on_message(client, userdata, msg):
        raise ValueError("bad payload")

    log = logging.getLogger("frostwatch.test")
    wrapped = guarded(on_message, log, "ingest")
    with caplog.at_level(logging.ERROR, logger="frostwatch.test"):
        assert wrapped(None, None, None) is None
    assert wrapped.__name__ == "on_message"
    assert "ingest: error in MQTT callback on_message" in caplog.text
    assert "bad payload" in caplog.text


def test_a_working_callback_runs():
    seen = []
    guarded(lambda *a: seen.append(a), logging.getLogger("frostwatch.test"), "fleet view")(1, 2)
    assert seen == [(1, 2)]
