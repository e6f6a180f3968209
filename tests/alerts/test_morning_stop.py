"""The morning stop message only for protection that may have run (pure rules, issue 13.6): a block
whose running flag never read "running" and whose alerts never told anyone to start its method
(too windy for fans, say) gets no "safe to stop" after sunrise, only the night-over summary; one
told to start, or whose flag read "running", gets its stop message as before. The demo's windy
night, replayed, shows it end to end."""

from __future__ import annotations

import datetime as dt
import json
import subprocess
import sys

import numpy as np

from frostwatch.advice import plan_advice
from frostwatch.advice.plan import Step
from frostwatch.alerts.levels import step_for_level
from frostwatch.alerts.rules import BlockAlertState, protection_ran, step
from frostwatch.config import Block
from frostwatch.decision import Monitoring, MonitorReason
from frostwatch.display import Display
from frostwatch.models import Projection
from frostwatch.night import Night

UTC = dt.UTC
SUNSET = dt.datetime(2027, 4, 15, 2, 45, tzinfo=UTC)
SUNRISE = dt.datetime(2027, 4, 15, 13, 15, tzinfo=UTC)
NIGHT = Night(dt.date(2027, 4, 14), SUNSET, SUNRISE)
D = Display("degC", "America/Los_Angeles")
BLOCK = Block(id="east", crop="apple", stage="full bloom", kill_10pct_c=-2.2, kill_90pct_c=-3.9, critical_source="t",
              protection="wind_machine", margin_c=2.0, mobilisation_min=30.0, wind_machines=2)
WATCHED = Monitoring(True, MonitorReason.OK, ("east-low",))


def _proj(now, air, pmin, wind, crossing=None):
    return Projection(time_utc=now, block="east", station="east-low", air_temp_c=air, dew_point_c=-6.0, wet_bulb_c=None,
                      predicted_min_c=pmin, predicted_min_at_utc=SUNRISE, band_c=0.5,
                      crossings_utc={"t10_margin": crossing, "t10_margin_cold_edge": crossing}, inversion_c=4.0,
                      projected_inversion_c=4.0, inversion_class="strong", wind_speed_m_s=wind, regime="radiation",
                      method="t", sunset_utc=SUNSET, sunrise_utc=SUNRISE)


def _night(wind: float, running: bool | None):
    """Evaluations every 10 min from 02:00 local: an act (crossing within the crew's time), then
    after sunrise the air rising through T10 + margin. Returns the alerts and the last state."""
    state, alerts = BlockAlertState(), []
    t = SUNSET + dt.timedelta(hours=4)
    while t < SUNRISE + dt.timedelta(hours=2):
        if t < SUNRISE:
            p = _proj(t, 0.5, -3.0, wind, t + dt.timedelta(minutes=20))
            series = None
        else:
            air = -1.0 + 2.0 * (t - SUNRISE).total_seconds() / 3600.0
            ts = np.array([(t - dt.timedelta(minutes=m)).timestamp() for m in (30, 20, 10, 0)])
            series = {("east-low", "air_temperature"): (ts, air - 2.0 * (t.timestamp() - ts) / 3600.0)}
            p = _proj(t, air, -1.2, wind)
        plan = plan_advice(p, BLOCK, t, series=series, protection_running=running)
        state, got = step(state, plan, p, BLOCK, t, NIGHT, D, WATCHED)
        alerts += got
        t += dt.timedelta(minutes=10)
    return alerts, state, plan


def test_fans_never_advised_and_never_running_get_no_stop_message():
    alerts, state, plan = _night(wind=5.0, running=False)
    levels = [a.level for a in alerts]
    assert "protect" in levels and "may-stop" not in levels
    assert alerts[-1].level == "rest" and "night is over" in alerts[-1].message
    assert "may stop" not in alerts[-1].message and "wind machines" not in alerts[-1].message.splitlines()[0]
    assert not protection_ran(state)
    # and the screens never tell the grower to keep never-started machines running
    assert step_for_level("protect", plan, ran=False) in (Step.NIGHT_OVER, Step.NOTHING)


def test_fans_advised_to_start_get_their_stop_message_even_without_a_running_flag():
    alerts, state, _ = _night(wind=0.5, running=None)
    assert [a.level for a in alerts][-1] == "may-stop"
    assert "the wind machines may stop" in alerts[-1].message and protection_ran(state)


def test_a_running_flag_means_it_ran_even_when_not_advised():
    alerts, state, _ = _night(wind=5.0, running=True)
    assert protection_ran(state) and alerts[-1].level == "may-stop"


def test_the_demo_windy_night_has_no_safe_to_stop(tmp_path, demo_config, demo_logs):
    p = subprocess.run([sys.executable, "-m", "frostwatch", "replay", str(demo_logs[1]), "--config", str(demo_config),
                        "--json", "--no-report"], capture_output=True, text=True, timeout=600)
    assert p.returncode == 0, p.stderr[-2000:]
    alerts = json.loads(p.stdout)["alerts"]
    assert any(a["level"] == "protect" for a in alerts)
    assert not any(a["level"] == "may-stop" for a in alerts)
    mornings = [a for a in alerts if "night is over" in a["message"]]
    assert {a["block"] for a in mornings} >= {"east", "river"}
