"""The inversion at the time of the minimum, and the fan verdict before it is known
(frostwatch.forecast.inversion, frostwatch.advice.fans).

The rule the verdict is judged by: wind machines need about 1.5-2 C between crop height and
10 m (frost-physics.md 4.1, common practice; Goodall et al. 1957 call < 2.8 C over 12-15 m weak),
wind below 2.5 m/s (FAO-FP 2005 p. 160). A radiation inversion forms after sunset
(frost-physics.md 3), so the inversion at dusk is no verdict on the coldest hour.
"""

from __future__ import annotations

import datetime as dt
import math

import numpy as np
import pytest

from frostwatch.advice import explain, plan_advice, render
from frostwatch.advice.plan import Condition, Step, WhyNot
from frostwatch.config import Block
from frostwatch.display import Display
from frostwatch.forecast import inversion as inv
from frostwatch.forecast.calibration import NightRecord
from frostwatch.forecast.learner import Learner
from frostwatch.models import Projection, StationState

UTC = dt.UTC
T0 = dt.datetime(2027, 4, 15, 4, 40, tzinfo=UTC)  # sunset + 2 h (21:40 local at a -7 h site)
SUNRISE = dt.datetime(2027, 4, 15, 13, 10, tzinfo=UTC)
MIN_USEFUL_C = 1.5  # frost-physics.md 4.1 (common practice)


def _series(t0_s: float, hours: float, crop, tower, step_s: float = 120.0):
    """Crop and tower air on a 2-min grid from 3 h before t0: `crop(h)` and `tower(h)` of the
    hours since t0 (negative before it)."""
    t = np.arange(t0_s - 3 * 3600.0, t0_s + hours * 3600.0 + 1.0, step_s)
    h = (t - t0_s) / 3600.0
    return {("low", "air_temperature"): (t, np.array([crop(x) for x in h])),
            ("tower", "air_temperature"): (t, np.array([tower(x) for x in h]))}


def _tower_state(series, now_s):
    t, v = series[("tower", "air_temperature")]
    i = int(np.searchsorted(t, now_s, side="right")) - 1
    at = dt.datetime.fromtimestamp(float(t[i]), UTC)
    return StationState("tower", 10.0, "tower", {"air_temperature": float(v[i])}, {"air_temperature": at}, True)


def _crop_now(series, now_s):
    t, v = series[("low", "air_temperature")]
    return float(v[int(np.searchsorted(t, now_s, side="right")) - 1])


def _crop(h):  # Reuter's curve from 2 C at t0, -4 C at sunrise (8.5 h later)
    return 2.0 + (-6.0 / math.sqrt(8.5)) * math.sqrt(max(0.0, h)) if h >= 0 else 2.0 - 1.5 * h


def _outlook(series, now, radiation=True, **kw):
    now_s, t0_s = now.timestamp(), T0.timestamp()
    return inv.inversion_outlook(_tower_state(series, now_s), series, _crop_now(series, now_s), min(t0_s, now_s),
                                 now_s, SUNRISE.timestamp(), SUNRISE.timestamp() - 600, radiation,
                                 crop_station="low", step_s=120.0, dusk_s=t0_s, **kw)


def test_before_the_tower_curve_exists_the_inversion_is_not_known_yet_and_says_when():
    s = _series(T0.timestamp(), 3.0, _crop, lambda h: _crop(h) + 0.4)
    o = _outlook(s, T0 - dt.timedelta(hours=2))
    assert o.basis == inv.NOT_YET and o.projected_c is None and o.now_c == pytest.approx(0.4)
    # three 2-min readings after t0 + 3 min (t0 + 9 min), on the next 2-min evaluation: t0 + 10 min
    assert o.known_by_s == T0.timestamp() + 10 * 60
    later = _outlook(s, T0 + dt.timedelta(minutes=20))
    assert later.basis == inv.TOWER_CURVE and later.projected_c is not None


def test_a_windy_or_cloudy_night_holds_the_inversion_now():
    s = _series(T0.timestamp(), 3.0, _crop, lambda h: _crop(h) + 0.4)
    o = _outlook(s, T0 - dt.timedelta(hours=2), radiation=False)
    assert o.basis == inv.HELD and o.projected_c == pytest.approx(0.4)


def test_a_tower_that_cools_with_the_crop_projects_no_growth():
    # 0.6 C above the crop all night: the inversion at the minimum is 0.6 C, under the 1.5 C fans need
    s = _series(T0.timestamp(), 3.0, _crop, lambda h: _crop(h) + 0.6)
    o = _outlook(s, T0 + dt.timedelta(minutes=40))
    assert o.basis == inv.TOWER_CURVE and o.projected_c == pytest.approx(0.6, abs=0.1)
    assert o.projected_c < MIN_USEFUL_C


def test_a_tower_that_stays_put_while_the_crop_cools_projects_a_growing_inversion():
    s = _series(T0.timestamp(), 3.0, _crop, lambda h: 3.0 if h >= 0 else 3.0 - 1.0 * h)
    o = _outlook(s, T0 + dt.timedelta(hours=2))
    # at the minimum: 3.0 - (crop at sunrise - 10 min, about -3.9) = about 6.9 C
    assert o.projected_c == pytest.approx(3.0 - _crop(8.5 - 1 / 6), abs=0.3)


def test_the_site_history_speaks_from_three_nights_before_the_tower_curve():
    s = _series(T0.timestamp(), 3.0, _crop, lambda h: _crop(h) + 0.3)
    early = T0 - dt.timedelta(hours=2)
    assert _outlook(s, early, history_c=3.9, history_nights=2).basis == inv.NOT_YET
    o = _outlook(s, early, history_c=3.9, history_nights=3)
    assert (o.basis, o.projected_c, o.history_nights) == (inv.SITE_HISTORY, 3.9, 3)
    assert _outlook(s, T0 + dt.timedelta(minutes=40), history_c=3.9, history_nights=3).basis == inv.TOWER_CURVE


def _record(day: int, inversion_c: float | None, radiation: bool = True, protected: bool = False) -> NightRecord:
    return NightRecord(
        night=dt.date(2027, 4, day), station="low", t0_temp_c=3.0, t0_dew_point_c=-3.0, hours_to_sunrise=8.5,
        observed_min_c=-2.0, observed_min_at_utc=dt.datetime(2027, 4, day + 1, 13, 0, tzinfo=UTC),
        mean_wind_m_s=0.8, max_cloud_frac=None, prior_c=-2.5, radiation_night=radiation, protected=protected,
        inversion_at_min_c=inversion_c,
    )


def test_the_learner_keeps_the_inversion_of_clear_calm_unprotected_nights_only():
    lr = Learner(10)
    for rec in (_record(1, 3.0), _record(2, 5.0, protected=True), _record(3, 0.4, radiation=False),
                _record(4, 4.0), _record(5, None), _record(6, 3.6)):
        lr.learn(rec)
    cal = lr.calibration()
    assert cal.inversion_nights == 3 and cal.inversion_at_min_c == pytest.approx(3.6)


# ---- the fan verdict and its words -----------------------------------------------------------------


def _block() -> Block:
    return Block(id="b1", crop="apple", stage="full bloom", kill_10pct_c=-2.2, kill_90pct_c=-3.9,
                 critical_source="test", protection="wind_machine", margin_c=2.0, mobilisation_min=30.0,
                 wind_machines=2)


def _projection(now, **kw) -> Projection:
    crossing = T0 + dt.timedelta(minutes=20)
    base = dict(time_utc=now, block="b1", station="low", air_temp_c=4.0, dew_point_c=-5.0, wet_bulb_c=0.5,
                predicted_min_c=-5.0, predicted_min_at_utc=SUNRISE, band_c=1.0,
                crossings_utc={"t10_margin": crossing, "t10": None}, inversion_c=0.6, projected_inversion_c=None,
                inversion_class="weak", wind_speed_m_s=0.8, regime="radiation", method="pre-dusk estimate",
                sunset_utc=T0 - dt.timedelta(hours=2), sunrise_utc=SUNRISE, inversion_basis="not-yet",
                inversion_known_by_utc=T0 + dt.timedelta(minutes=10))
    base.update(kw)
    return Projection(**base)


def test_not_known_yet_is_never_not_advised_and_says_when_frostwatch_will_know():
    d = Display("degC", "America/Los_Angeles")
    now = T0 - dt.timedelta(hours=1)
    plan = plan_advice(_projection(now), _block(), now)
    v = plan.verdict
    assert v.advised and v.why_not is None and v.conditions == (Condition.WARM_AIR_ALOFT,)
    assert v.fans.inversion_pending and v.fans.gain_low_c == 0.0 and v.fans.shortfall_c is None
    assert plan.step is Step.GET_READY
    words = render.action(plan.step, plan, d)
    assert words.startswith("get the wind machines ready by ") and "other means" not in words and " if " not in words
    assert explain.verdict_line(plan, d) == ("Wind machines: warm air aloft usually builds after dusk; frostwatch will "
                                             "say by 21:50 whether they will help.")
    start = render.action(Step.START_NOW, plan, d)
    assert start.startswith("start the wind machines now if the tower reads at least 1.5 °C warmer than crop height")


def test_once_known_a_weak_inversion_is_still_not_advised():
    now = T0 + dt.timedelta(minutes=30)
    p = _projection(now, projected_inversion_c=0.6, inversion_basis="tower-curve", inversion_known_by_utc=None)
    v = plan_advice(p, _block(), now).verdict
    assert not v.advised and v.why_not is WhyNot.INVERSION_WEAK and not v.fans.inversion_pending


def test_from_the_site_history_the_verdict_cites_its_nights():
    d = Display("degC", "America/Los_Angeles")
    now = T0 - dt.timedelta(hours=1)
    p = _projection(now, projected_inversion_c=0.6, inversion_basis="site-history", inversion_known_by_utc=None,
                    inversion_history_nights=5)
    plan = plan_advice(p, _block(), now)
    assert plan.verdict.why_not is WhyNot.INVERSION_WEAK and plan.verdict.fans.history_nights == 5
    assert "5 past clear nights" in explain.verdict_line(plan, d)
    strong = plan_advice(_projection(now, projected_inversion_c=3.9, inversion_basis="site-history",
                                     inversion_known_by_utc=None, inversion_history_nights=5), _block(), now)
    assert strong.verdict.advised and "3.9 °C warmer aloft" in " ".join(explain.reasons(strong, d))


def test_a_windy_night_is_not_advised_whatever_the_inversion():
    now = T0 - dt.timedelta(hours=1)
    v = plan_advice(_projection(now, wind_speed_m_s=4.0), _block(), now).verdict
    assert not v.advised and v.why_not is WhyNot.TOO_WINDY_FOR_FANS and not v.fans.inversion_pending
