"""The nowcast's approach correction (forecast.ridge.lead_fit): the ratio or offset that brings
the blend's fall still to come to the fall that came, at the instants 2 h before past nights'
minima, by least squares shrunk toward no correction. Checked against numpy's own least squares
on the same points (the shrinkage written as extra rows of the design, the usual ridge identity)."""

from __future__ import annotations

import numpy as np
import pytest

from frostwatch.forecast import calibration
from frostwatch.forecast.ridge import lead_fit


def _sums(x, y):
    return np.array([[len(x)], [x.sum()], [y.sum()], [(x * x).sum()], [(x * y).sum()]])


@pytest.mark.parametrize("k", [0.0, 2.0, 7.5])
def test_each_mode_is_the_shrunk_least_squares_of_the_points(k):
    rng = np.random.default_rng(15)
    x = -rng.uniform(0.0, 2.0, 25)  # the blend's falls (<= 0)
    y = 1.3 * x - 0.2 + rng.normal(0.0, 0.3, 25)  # the falls that came
    r = np.sqrt(k)
    for mode, design, extra, target in (
        ("scale", x[:, None], [[r]], [r]),  # y = b x, b shrunk toward 1
        ("affine", np.column_stack([np.ones_like(x), x]), [[r, 0.0], [0.0, r]], [0.0, r]),  # (c, b) toward (0, 1)
    ):
        want = np.linalg.lstsq(np.vstack([design, extra]), np.concatenate([y, target]), rcond=None)[0]
        off, ratio = lead_fit(_sums(x, y), mode, k)[0]
        got = [ratio] if mode == "scale" else [off, ratio]
        assert got == pytest.approx(want.tolist(), rel=1e-9, abs=1e-12)
        if mode == "scale":
            assert off == 0.0
    off, ratio = lead_fit(_sums(x, y), "add", k)[0]
    assert ratio == 1.0 and off == pytest.approx(np.sum(y - x) / (len(x) + k))


def test_no_points_no_correction():
    for mode in ("scale", "add", "affine"):
        assert lead_fit(np.zeros((5, 3)), mode, 2.0) == ((0.0, 1.0),) * 3


def test_the_corrected_fall_is_applied_in_its_bin_on_cold_nights_and_said():
    cal = calibration.Calibration(n_nights=30, mean_min_c=5.0,
                                  nc_lead=((0.0, 1.0),) * 2 + ((0.0, 1.5),) + ((0.0, 1.0),) * 11)
    f = (-0.8, 2.5 ** 0.5, -1.0, 0.0, 0.0, 3.0)  # 2.5 h left: bin 2
    raw, spoke_raw = cal.nowcast_drop_c(f, 2.5, -0.6, 6.0, lead=False)
    got, spoke = cal.nowcast_drop_c(f, 2.5, -0.6, 6.0, dusk_min_c=1.0)
    assert got == pytest.approx(1.5 * raw) and raw < 0.0
    assert "x1.50 as on past nights' approach" in spoke and "approach" not in spoke_raw
    # a night forecast at dusk warmer than the mean minimum learned, or with no dusk forecast: none
    for warm in (5.0, 9.0, None):
        assert cal.nowcast_drop_c(f, 2.5, -0.6, 6.0, dusk_min_c=warm) == (raw, spoke_raw)
    # another bin, ratio 1: as before
    assert cal.nowcast_drop_c(f, 5.5, -0.6, 3.0, dusk_min_c=1.0)[0] == cal.nowcast_drop_c(f, 5.5, -0.6, 3.0, lead=False)[0]


def test_the_approach_blend_mixes_the_corrected_and_naive_falls_while_cooling_on_cold_nights():
    """The approach blend (calibration.NOWCAST_APPROACH_BLEND): fall = w_c x corrected + w_n x naive,
    with the weights learned at past nights' instants 2 h before their minima; only on the nights the
    correction takes (dusk forecast below the mean minimum) and at instants whose last 2 h cooled."""
    lead = ((0.0, 1.0),) * 2 + ((0.0, 1.5),) + ((0.0, 1.0),) * 11
    plain = calibration.Calibration(n_nights=30, mean_min_c=5.0, naive_fall_c=1.2, nc_lead=lead)
    cal = calibration.Calibration(n_nights=30, mean_min_c=5.0, naive_fall_c=1.2, nc_lead=lead,
                                  nc_approach=(("corrected", 0.6), ("naive", 0.4)))
    cooling = (-0.8, 2.5 ** 0.5, -1.0, 0.0, 0.0, 3.0)  # 2.5 h left, the last 2 h cooled
    corrected, _ = plain.nowcast_drop_c(cooling, 2.5, -0.6, 6.0, dusk_min_c=1.0)
    got, spoke = cal.nowcast_drop_c(cooling, 2.5, -0.6, 6.0, dusk_min_c=1.0)
    assert got == pytest.approx(0.6 * corrected + 0.4 * -1.2)
    assert "naive fall 40% as 2 h before past nights' minima" in spoke
    # the corrected fall alone without `approach`, on a warm night, or where the last 2 h did not cool
    assert cal.nowcast_drop_c(cooling, 2.5, -0.6, 6.0, dusk_min_c=1.0, approach=False)[0] == corrected
    assert cal.nowcast_drop_c(cooling, 2.5, -0.6, 6.0, dusk_min_c=9.0) == plain.nowcast_drop_c(cooling, 2.5, -0.6, 6.0, dusk_min_c=9.0)
    warming = cooling[:2] + (0.2,) + cooling[3:]
    assert cal.nowcast_drop_c(warming, 2.5, -0.6, 6.0, dusk_min_c=1.0) == plain.nowcast_drop_c(warming, 2.5, -0.6, 6.0, dusk_min_c=1.0)
    # no weights learned yet (fewer than SKILL_MIN_SCORED nights scored): the corrected fall
    assert not calibration.Calibration(n_nights=30, mean_min_c=5.0, naive_fall_c=1.2).approaching(cooling, 1.0)


def test_the_learner_scores_the_approach_blend_only_where_a_minimum_was_2_h_away():
    """Its weights come from one point per cold night (the half-hourly point nearest 2 h before the
    observed minimum), scored with the calibration of the earlier nights (walk-forward)."""
    import datetime as dt

    from frostwatch.forecast.learner import Learner

    def night(k, tmin):
        # half-hourly points from 8 h to 1 h left, cooling 0.4 degC/h; the minimum at sunrise
        samples = tuple(((-0.4 * (8.5 - hl) ** 0.5, hl ** 0.5, -0.8, 0.5, 0.0, 2.0), -0.4 * hl)
                        for hl in np.arange(8.0, 0.9, -0.5))
        return calibration.NightRecord(
            night=dt.date(2024, 3, 1) + dt.timedelta(days=k), station="s", t0_temp_c=tmin + 4.0, t0_dew_point_c=tmin,
            hours_to_sunrise=9.0, observed_min_c=tmin, observed_min_at_utc=dt.datetime(2024, 3, 2, 6, tzinfo=dt.UTC),
            mean_wind_m_s=0.5, max_cloud_frac=0.0, prior_c=tmin + 0.5, radiation_night=True, t0_wind_m_s=0.5,
            t0_cloud_frac=0.0, nowcast_samples=samples, fall_before_min_c=0.8, min_hours_left=0.0)

    learner = Learner(10)
    for k in range(40):
        learner.learn(night(k, -1.0 if k % 2 else 3.0))
    scored = learner.approach_skill.scored
    assert 0 < scored["corrected"] == scored["naive"] <= 20  # at most one point per colder night
    w = dict(learner.calibration().nc_approach)
    assert set(w) == {"corrected", "naive"} and sum(w.values()) == pytest.approx(1.0)
