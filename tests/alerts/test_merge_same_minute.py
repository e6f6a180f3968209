"""One message per block and minute (issue 13.4): when one evaluation raises two alerts for a block
(the dusk message "wait" and the rise to "ready", as hill once did), the grower gets one, the most
urgent, carrying whatever the others resolve; and no replayed night of the demo or the scenarios
sends a block two alerts in the same minute."""

from __future__ import annotations

import datetime as dt
from collections import Counter
from pathlib import Path

from frostwatch.advice import plan_advice
from frostwatch.alerts.rules import BlockAlertState, merged, step
from frostwatch.config import Block
from frostwatch.decision import Monitoring, MonitorReason
from frostwatch.display import Display
from frostwatch.models import Alert, Projection
from frostwatch.night import Night

UTC = dt.UTC
SUNSET = dt.datetime(2027, 4, 15, 2, 45, tzinfo=UTC)
SUNRISE = dt.datetime(2027, 4, 15, 13, 15, tzinfo=UTC)
NIGHT = Night(dt.date(2027, 4, 14), SUNSET, SUNRISE)
D = Display("degC", "America/Los_Angeles")
HILL = Block(id="hill", crop="pear", stage="tight cluster", kill_10pct_c=-4.4, kill_90pct_c=-9.4, critical_source="t",
             protection="none", margin_c=2.0, mobilisation_min=45.0)
WATCHED = Monitoring(True, MonitorReason.OK, ("hill-low",))
SAMPLE = Path(__file__).resolve().parents[2] / "sample_sensor_logs"


def _proj(now):
    crossing = now + dt.timedelta(hours=2)
    return Projection(time_utc=now, block="hill", station="hill-low", air_temp_c=6.0, dew_point_c=-4.0, wet_bulb_c=None,
                      predicted_min_c=-6.8, predicted_min_at_utc=SUNRISE, band_c=2.8,
                      crossings_utc={"t10_margin": crossing, "t10_margin_cold_edge": crossing}, inversion_c=None,
                      projected_inversion_c=None, inversion_class=None, wind_speed_m_s=0.9, regime="radiation",
                      method="t", sunset_utc=SUNSET, sunrise_utc=SUNRISE)


def test_the_dusk_message_and_a_rise_to_ready_in_one_evaluation_are_one_message():
    state, sent = BlockAlertState(), []
    # one evaluation before the dusk point starts the rise's persistence; the next, at dusk, would
    # send both the dusk message (wait) and ready
    for now in (NIGHT.dusk_utc - dt.timedelta(minutes=2), NIGHT.dusk_utc):
        p = _proj(now)
        state, alerts = step(state, plan_advice(p, HILL, now), p, HILL, now, NIGHT, D, WATCHED)
        sent.append(alerts)
    assert sent[0] == []
    (one,) = sent[1]
    assert one.level == "ready" and one.message.startswith("hill: READY: get ready")
    assert state.level == "ready" and state.outlook_sent and state.last_key == one.key


def test_merged_keeps_the_most_urgent_and_what_the_others_resolve():
    t = SUNSET
    a = Alert(t, "east", "wait", 2, "x", "east: WAIT", "east/2027-04-14/001-wait")
    b = Alert(t, "east", "ready", 3, "y", "east: READY", "east/2027-04-14/002-ready")
    c = Alert(t, "east", "rest", 0, "z", "east: REST", "east/2027-04-14/003-rest", resolves="east/2027-04-14/000-go-look")
    m = merged([a, c, b])
    assert m.key == b.key and m.resolves == "east/2027-04-14/000-go-look"


def test_no_replayed_night_sends_a_block_two_alerts_in_one_minute(replayed):
    from importlib import resources

    demo = resources.files("frostwatch.sample_logs").joinpath("demo-farm.toml").read_text(encoding="utf-8")
    scen = SAMPLE / "scenarios"
    runs = [(demo, [SAMPLE / n for n in (
        "2027-04-14-radiation-frost.csv", "2027-04-15-windy-advective.csv", "2027-04-16-cloudy-safe.csv")],
        "demo-farm.toml")]
    runs += [((scen / config).read_text(encoding="utf-8"), [scen / log], config)
             for log, config in (("2027-04-20-sprinklers-sunrise.csv", "alder-flat-sprinklers.toml"),
                                 ("2027-04-21-site-tower.csv", "alder-flat-towers.toml"),
                                 ("2027-04-22-drying-night.csv", "alder-flat-drying.toml"))]
    alerts = [a for r in replayed.many(runs) for a in r.doc()["alerts"]]  # side by side, one per core
    per_minute = Counter((a["block"], a["time"][:16]) for a in alerts)
    assert [k for k, n in per_minute.items() if n > 1] == []
