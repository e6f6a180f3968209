"""The alert rules for a block nobody watches (pure): inside the night's watch window one
`unmonitored` alert of its own (no data at all, or stale data), never an outlook or all-clear
while blind, one "monitored again" message once its sensor has reported for two evaluations; by
day no alert (the screens still say NOT MONITORED). Routed like a frost alert."""

from __future__ import annotations

import datetime as dt

from frostwatch.advice import plan_advice
from frostwatch.alerts.config import load_alerts_config
from frostwatch.alerts.rules import BlockAlertState, step
from frostwatch.config import Block, config_from_dict
from frostwatch.decision import Monitoring, MonitorReason
from frostwatch.display import Display
from frostwatch.models import Projection
from frostwatch.night import Night

UTC = dt.UTC
SUNSET = dt.datetime(2027, 4, 15, 2, 45, tzinfo=UTC)  # 19:45 PDT
SUNRISE = dt.datetime(2027, 4, 15, 13, 15, tzinfo=UTC)
NIGHT = Night(dt.date(2027, 4, 14), SUNSET, SUNRISE)
D = Display("degC", "America/Los_Angeles")
BLOCK = Block(id="east", crop="apple", stage="full bloom", kill_10pct_c=-2.2, kill_90pct_c=-3.9, critical_source="t",
              protection="wind_machine", margin_c=2.0, mobilisation_min=30.0, wind_machines=2)
BLIND = Monitoring(False, MonitorReason.NO_DATA, ("east-low",))
WATCHED = Monitoring(True, MonitorReason.OK, ("east-low",))


def _proj(now, air=None, pmin=None) -> Projection:
    return Projection(time_utc=now, block="east", station=None if air is None else "east-low", air_temp_c=air,
                      dew_point_c=None, wet_bulb_c=None, predicted_min_c=pmin, predicted_min_at_utc=None,
                      band_c=None if pmin is None else 1.0, crossings_utc={}, inversion_c=None,
                      projected_inversion_c=None, inversion_class=None, wind_speed_m_s=None,
                      regime="radiation", method="t", sunset_utc=SUNSET, sunrise_utc=SUNRISE)


def _run(times, monitorings, air=None, pmin=None, state=None):
    state = state or BlockAlertState()
    out = []
    for now, mon in zip(times, monitorings, strict=True):
        p = _proj(now, air if mon.monitored else None, pmin if mon.monitored else None)
        state, alerts = step(state, plan_advice(p, BLOCK, now), p, BLOCK, now, NIGHT, D, mon)
        out += alerts
    return state, out


def _every(start, n, minutes=2):
    return [start + dt.timedelta(minutes=minutes * k) for k in range(n)]


def test_no_data_at_night_is_one_unmonitored_alert_and_never_an_all_clear():
    times = _every(SUNSET + dt.timedelta(hours=3), 10)  # after the dusk point
    state, alerts = _run(times, [BLIND] * 10)
    assert [(a.level, a.rank) for a in alerts] == [("go-look", 4)]
    a = alerts[0]
    assert a.message.startswith("east: GO LOOK: NOT MONITORED since 22:45: no reading at all from its crop-height sensor")
    assert "n/a" not in a.message and "REST" not in a.message and "outlook" not in a.message
    assert not state.outlook_sent and state.unmonitored_key == a.key


def test_stale_data_says_since_the_last_reading():
    """Pass: the alert names the last reading by its clock time only. Fails on "(3.0 h ago)":
    the text goes out again unchanged in the repeats and the escalation, when it is no longer
    true (a live trial's escalation after 15 min still said "(3 min ago)")."""
    last = SUNSET + dt.timedelta(hours=1)
    stale = Monitoring(False, MonitorReason.SILENT, ("east-low",), last, last)
    _, alerts = _run([SUNSET + dt.timedelta(hours=4)], [stale])
    first = alerts[0].message.splitlines()[0]
    assert first == "east: GO LOOK: NOT MONITORED since 20:45: no reading from its crop-height sensor (east-low) since 20:45", first


def test_the_text_message_says_what_the_sensor_did():
    """Pass: the short form tells a sensor never heard ("no reading yet"), a stuck one and a silent
    one ("no reading since 20:45") apart. Fails when a sensor never heard reads "no reading since
    22:45": 22:45 is only when frostwatch started looking, and there never was a reading."""
    _, never = _run([SUNSET + dt.timedelta(hours=3)], [BLIND])
    assert never[0].short.startswith("east GO LOOK: no reading yet (east-low); judge the block by hand."), never[0].short
    last = SUNSET + dt.timedelta(hours=1)
    stuck = Monitoring(False, MonitorReason.STUCK, ("east-low",), last, last)
    _, alerts = _run([SUNSET + dt.timedelta(hours=4)], [stuck])
    assert alerts[0].short.startswith("east GO LOOK: sensor stuck (east-low); judge the block by hand."), alerts[0].short
    silent = Monitoring(False, MonitorReason.SILENT, ("east-low",), last, last)
    _, alerts = _run([SUNSET + dt.timedelta(hours=4)], [silent])
    assert alerts[0].short.startswith("east GO LOOK: no reading since 20:45 (east-low); judge"), alerts[0].short


def test_by_day_a_blind_block_raises_no_alert():
    noon = SUNSET - dt.timedelta(hours=6)
    _, alerts = _run(_every(noon, 5), [BLIND] * 5)
    assert alerts == []


def test_monitored_again_after_two_evaluations_once_then_the_outlook():
    times = _every(SUNSET + dt.timedelta(hours=3), 8)
    mons = [BLIND, BLIND, WATCHED, WATCHED, WATCHED, WATCHED, WATCHED, WATCHED]
    state, alerts = _run(times, mons, air=6.0, pmin=4.0)
    levels = [(a.level, a.resolves is not None) for a in alerts]
    # the dusk outlook comes with the first watched evaluation; the second one closes the
    # unmonitored alert (attached to no other message: its own "monitored again")
    assert levels == [("go-look", False), ("rest", False), ("rest", True)], [a.message for a in alerts]
    assert alerts[2].message.startswith("east: monitored again;") and alerts[2].resolves == alerts[0].key
    assert state.unmonitored_key is None


def test_an_unmonitored_alert_goes_the_way_of_act_unless_routed_itself(tmp_path):
    raw = {"site": {"name": "x", "latitude": 46.0, "longitude": -120.0, "elevation_m": 100, "timezone": "UTC"},
           "blocks": [{"id": "east", "crop": "apple", "stage": "full bloom"}],
           "stations": [{"id": "east-low", "block": "east", "height_m": 1.5}],
           "storage": {"path": str(tmp_path / "x.db")},
           "channels": [{"name": "log", "type": "console"}, {"name": "siren", "type": "mqtt", "topic": "s"}],
           "alerts": {"route": {"default": ["log"], "protect": ["log", "siren"]}}}
    ac = load_alerts_config(config_from_dict(raw, tmp_path / "x.toml"))
    assert [c.name for c in ac.channels_for("go-look")] == ["log", "siren"]
    assert [c.name for c in ac.channels_for("ready")] == ["log"]
    raw["alerts"]["route"]["go-look"] = ["log"]
    ac = load_alerts_config(config_from_dict(raw, tmp_path / "x.toml"))
    assert [c.name for c in ac.channels_for("go-look")] == ["log"]
