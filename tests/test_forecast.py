"""The block projection: physical invariants, which sensor speaks, stale sensors, inversion,
and the demo nights. Synthetic series are built here; the computed check values of the physics
(reference sheet 1.1-2.4) are tested in tests/physics and not repeated."""

from __future__ import annotations

import datetime as dt

import numpy as np
import pytest
from forecast_site import SITE, make_cfg  # noqa: E402,F401

from frostwatch import forecast
from frostwatch.backtest import backtest
from frostwatch.commands.logs import _series_from_readings
from frostwatch.config import load_config
from frostwatch.ingest.csvlog import read_sensor_log
from frostwatch.night import night_of_date

EVENING = dt.date(2027, 4, 14)


def night_for(cfg):
    s = cfg.site
    return night_of_date(s.latitude, s.longitude, s.tz, EVENING)


def evening_series(cfg, night, t0_c=6.0, td_c=-2.0, wind=0.5, cloud=None, offset_c=None, tower_c=None, until=None):
    """5-min readings from 6 h before sunset to `until` (default dusk): air falls 8 degC
    toward sunset + 2 h and reaches `t0_c` there; dew point, wind and cloud constant."""
    start = night.sunset_utc.timestamp() - 6 * 3600.0
    end = (until or night.dusk_utc).timestamp()
    t = np.arange(start, end + 1.0, 300.0)
    dusk = night.dusk_utc.timestamp()
    air = t0_c + 8.0 * np.clip((dusk - t) / (8 * 3600.0), 0.0, 1.0)
    after = t > dusk
    air[after] = t0_c - 1.6 * np.sqrt((t[after] - dusk) / 3600.0)
    out = {("b-low", "air_temperature"): (t, air), ("b-low", "dew_point_temperature"): (t, np.minimum(td_c, air))}
    out[("b-low", "wind_speed")] = (t, np.full_like(t, wind))
    if cloud is not None:
        out[("b-low", "cloud_area_fraction")] = (t, np.full_like(t, cloud))
    if offset_c is not None:
        out[("b-low-2", "air_temperature")] = (t, air + offset_c)
    if tower_c is not None:
        out[("b-tower", "air_temperature")] = (t, air + tower_c)
    return out


def dusk_min(cfg, **kw):
    night = night_for(cfg)
    p = forecast.project_block(night.dusk_utc, cfg.blocks[0], cfg, evening_series(cfg, night, **kw), night)
    assert p.predicted_min_c is not None
    return p.predicted_min_c


# ---- physical invariants of the projection (physics prior, no site history) -------------------


def test_clearer_sky_never_projects_warmer_minimum(tmp_path):
    cfg = make_cfg(tmp_path)
    mins = [dusk_min(cfg, cloud=c) for c in (0.0, 0.2, 0.4, 0.6, 0.8, 1.0)]
    assert all(a <= b + 1e-9 for a, b in zip(mins, mins[1:], strict=False)), mins
    assert mins[0] < mins[-1]


def test_higher_dew_point_never_projects_colder_minimum(tmp_path):
    cfg = make_cfg(tmp_path)
    mins = [dusk_min(cfg, td_c=td) for td in (-12.0, -8.0, -4.0, 0.0, 3.0, 5.5)]
    assert all(a <= b + 1e-9 for a, b in zip(mins, mins[1:], strict=False)), mins


def test_more_wind_never_projects_colder_in_radiative_model(tmp_path):
    cfg = make_cfg(tmp_path)
    mins = [dusk_min(cfg, wind=w) for w in (0.0, 0.5, 1.0, 1.5, 2.0, 2.4)]
    assert all(a <= b + 1e-9 for a, b in zip(mins, mins[1:], strict=False)), mins


def test_projection_is_monotone_in_starting_temperature(tmp_path):
    cfg = make_cfg(tmp_path)
    mins = [dusk_min(cfg, t0_c=t0, td_c=-6.0) for t0 in (-2.0, 0.0, 2.0, 4.0, 8.0, 12.0)]
    assert all(a <= b + 1e-9 for a, b in zip(mins, mins[1:], strict=False)), mins


def test_invariants_hold_with_a_site_calibration(tmp_path):
    """A calibration whose regression has physical signs keeps the invariants (common practice:
    FAO-FP ch. 5's fitted slopes on T0 and Td are positive)."""
    cfg = make_cfg(tmp_path)
    night = night_for(cfg)
    recs = [
        forecast.NightRecord(dt.date(2027, 3, d), "b-low", t0, td, 11.0, 0.5 * t0 + 0.1 * td - 4.0 + 3.0 * c,
                             night.sunrise_utc, 0.5, c, 0.0, True, 0.5, c)
        for d, (t0, td, c) in enumerate([(2, -6, 0.0), (5, -2, 0.1), (8, 0, 0.6), (3, -8, 0.0), (6, -1, 0.9),
                                         (1, -9, 0.2), (7, -3, 0.0), (4, -4, 0.4), (9, 1, 1.0), (2, -3, 0.3)], start=1)
    ]
    cal = forecast.fit_calibration(recs, 10)
    assert cal.coefs[0] > 0 and cal.coefs[1] > 0 and cal.coefs[2] > 0
    def m(**kw):
        return forecast.project_block(night.dusk_utc, cfg.blocks[0], cfg, evening_series(cfg, night, **kw), night, cal).predicted_min_c
    assert m(cloud=0.0) <= m(cloud=0.5) <= m(cloud=1.0)
    assert m(td_c=-8.0, cloud=0.0) <= m(td_c=-2.0, cloud=0.0)
    assert m(t0_c=2.0, cloud=0.0) <= m(t0_c=6.0, cloud=0.0)


def test_clear_sky_assumed_and_said_without_sky_sensor(tmp_path):
    cfg = make_cfg(tmp_path)
    night = night_for(cfg)
    p = forecast.project_block(night.dusk_utc, cfg.blocks[0], cfg, evening_series(cfg, night), night)
    assert any("clear sky assumed" in n for n in p.notes)
    p = forecast.project_block(night.dusk_utc, cfg.blocks[0], cfg, evening_series(cfg, night, cloud=0.2), night)
    assert not any("clear sky assumed" in n for n in p.notes)


def test_windy_and_cloudy_nights_are_flagged(tmp_path):
    cfg = make_cfg(tmp_path)
    night = night_for(cfg)
    later = night.dusk_utc + dt.timedelta(hours=3)
    p = forecast.project_block(later, cfg.blocks[0], cfg, evening_series(cfg, night, wind=4.0, until=later), night)
    assert p.regime == "windy" and p.method.startswith("nowcast")
    assert any("radiation model does not hold" in n and "tonight's observed cooling" in n for n in p.notes)
    p = forecast.project_block(later, cfg.blocks[0], cfg, evening_series(cfg, night, cloud=0.9, until=later), night)
    assert p.regime == "cloudy"


def test_nowcast_follows_tonight(tmp_path):
    """Tonight cools along T0 - 1.6 sqrt(t - t0); four hours in, the nowcast's curve is that one
    (Reuter's square-root curve, reference sheet 1.2) whatever the dusk forecast said."""
    cfg = make_cfg(tmp_path)
    night = night_for(cfg)
    now = night.dusk_utc + dt.timedelta(hours=6)
    p = forecast.project_block(now, cfg.blocks[0], cfg, evening_series(cfg, night, until=now), night)
    h = night.hours_to_sunrise(night.dusk_utc)
    expected = 6.0 - 1.6 * np.sqrt(h)
    assert p.method.startswith("nowcast")
    assert p.predicted_min_c == pytest.approx(expected, abs=0.6)
    assert p.band_c < forecast.PRIOR_BAND_C


def test_crossings_are_where_reuters_curve_reaches_each_threshold(tmp_path):
    """At dusk the projection runs from the air now (T0) to the predicted minimum at sunrise on
    Reuter's square-root curve, T(t) = T0 + (Tmin - T0) sqrt((t - t0) / (sunrise - t0)) (reference
    sheet 1.2), so a threshold thr is crossed at t0 + (sunrise - t0) ((thr - T0) / (Tmin - T0))^2,
    and the band's cold edge crosses where the same curve to the band's low end does. Tolerance
    3 min: the curve is sampled every 5 min and read between samples along a straight line (a
    square root is concave, so the line crosses a little late, most near t0)."""
    cfg = make_cfg(tmp_path)
    night = night_for(cfg)
    b = cfg.blocks[0]
    p = forecast.project_block(night.dusk_utc, b, cfg, evening_series(cfg, night, t0_c=0.0, td_c=-9.0), night)
    t0, t_sr = night.dusk_utc.timestamp(), night.sunrise_utc.timestamp()
    thresholds = {"t10_margin": b.kill_10pct_c + b.margin_c, "t10": b.kill_10pct_c, "t90": b.kill_90pct_c}

    def reuter_crossing(thr: float, t_min: float) -> float | None:
        if thr >= p.air_temp_c:
            return t0
        if thr < t_min:
            return None  # never reached before sunrise
        return t0 + (t_sr - t0) * ((thr - p.air_temp_c) / (t_min - p.air_temp_c)) ** 2

    assert p.method == "dusk forecast" and p.air_temp_c == pytest.approx(0.0, abs=0.05)
    assert abs(p.predicted_min_at_utc.timestamp() - t_sr) <= 1.0  # the minimum at sunrise (instants to the second)
    reached = 0
    for key, thr in thresholds.items():
        for suffix, t_min in (("", p.predicted_min_c), ("_cold_edge", p.band_low_c)):
            want, got = reuter_crossing(thr, t_min), p.crossings_utc[key + suffix]
            if want is None:
                assert got is None, key + suffix
            else:
                reached += 1
                assert got is not None and abs(got.timestamp() - want) <= 180.0, (key + suffix, got, want)
    assert reached >= 4  # the cold night reaches at least T10 + margin and T10 on both curves
    assert p.band_c == pytest.approx(p.predicted_min_c - p.band_low_c, abs=0.011)


def test_wet_bulb_only_for_sprinkler_blocks(tmp_path):
    night = night_for(make_cfg(tmp_path))
    for protection, expect in (("none", False), ("overtree_sprinkler", True)):
        cfg = make_cfg(tmp_path, protection)
        p = forecast.project_block(night.dusk_utc, cfg.blocks[0], cfg, evening_series(cfg, night, t0_c=2.0), night)
        assert (p.wet_bulb_c is not None) is expect
        assert ("wet_bulb_t10" in p.crossings_utc) is expect
        if expect:
            assert p.wet_bulb_c < p.air_temp_c  # dry air: wet bulb below the air (ASHRAE psychrometrics)


# ---- which sensor speaks, stale sensors ---------------------------------------------------------


def test_speaking_sensor_is_the_coldest_healthy_crop_height_one(tmp_path):
    cfg = make_cfg(tmp_path)
    night = night_for(cfg)
    s = evening_series(cfg, night, offset_c=-1.0, tower_c=-3.0)  # tower colder: still not a crop sensor
    p = forecast.project_block(night.dusk_utc, cfg.blocks[0], cfg, s, night)
    assert p.station == "b-low-2"
    s = evening_series(cfg, night, offset_c=+1.0)
    assert forecast.project_block(night.dusk_utc, cfg.blocks[0], cfg, s, night).station == "b-low"


def test_stale_sensor_is_left_out_and_reported(tmp_path):
    """A crop sensor silent for more than 3 of its intervals (config stale_after_intervals) is not
    used at its last value, however cold, and the projection says so."""
    cfg = make_cfg(tmp_path)
    night = night_for(cfg)
    s = evening_series(cfg, night, offset_c=-2.0)
    t, v = s[("b-low-2", "air_temperature")]
    now = night.dusk_utc.timestamp()
    keep = t <= now - 3.5 * 300.0  # silent for 3.5 intervals
    s[("b-low-2", "air_temperature")] = (t[keep], v[keep])
    p = forecast.project_block(night.dusk_utc, cfg.blocks[0], cfg, s, night)
    assert p.station == "b-low"
    assert any("b-low-2" in n and "silent" in n and "left out" in n for n in p.notes)
    keep = t <= now - 2.0 * 300.0  # silent for 2 intervals: still trusted
    s[("b-low-2", "air_temperature")] = (t[keep], v[keep])
    assert forecast.project_block(night.dusk_utc, cfg.blocks[0], cfg, s, night).station == "b-low-2"


def test_stuck_sensor_is_left_out(tmp_path):
    cfg = make_cfg(tmp_path)
    night = night_for(cfg)
    s = evening_series(cfg, night, offset_c=-2.0)
    t, v = s[("b-low-2", "air_temperature")]
    s[("b-low-2", "air_temperature")] = (t, np.full_like(v, -5.0))
    p = forecast.project_block(night.dusk_utc, cfg.blocks[0], cfg, s, night)
    assert p.station == "b-low"
    assert any("stuck" in n for n in p.notes)


def test_no_healthy_sensor_gives_no_projection(tmp_path):
    cfg = make_cfg(tmp_path)
    night = night_for(cfg)
    s = evening_series(cfg, night)
    late = night.dusk_utc + dt.timedelta(hours=2)
    p = forecast.project_block(late, cfg.blocks[0], cfg, s, night)
    assert p.station is None and p.predicted_min_c is None and p.regime == "unmonitored"
    assert any("no healthy crop-height sensor" in n for n in p.notes)


# ---- inversion -----------------------------------------------------------------------------


@pytest.mark.parametrize(
    "tower_c, cls",
    [(-0.5, "none"), (1.0, "weak"), (2.0, "moderate"), (4.0, "strong")],
    # thresholds: reference sheet 3 (Goodall et al. 1957; Ker et al. 2007 "strong" >= 3 degC)
)
def test_inversion_measured_and_classified(tmp_path, tower_c, cls):
    cfg = make_cfg(tmp_path)
    night = night_for(cfg)
    p = forecast.project_block(night.dusk_utc, cfg.blocks[0], cfg, evening_series(cfg, night, tower_c=tower_c), night)
    assert p.inversion_c == pytest.approx(tower_c, abs=0.01)
    assert p.inversion_class == cls
    # at t0 on a clear calm night with no past night known the inversion at the minimum is not known
    # yet (a radiation inversion builds after dusk, reference sheet 3): known once the tower has a curve
    assert p.projected_inversion_c is None and p.inversion_basis == "not-yet"
    assert night.dusk_utc < p.inversion_known_by_utc <= night.dusk_utc + dt.timedelta(hours=1)


def test_inversion_projected_grows_when_crop_cools_faster(tmp_path):
    cfg = make_cfg(tmp_path)
    night = night_for(cfg)
    now = night.dusk_utc + dt.timedelta(hours=3)
    s = evening_series(cfg, night, tower_c=1.0, until=now)
    t, v = s[("b-low", "air_temperature")]
    dusk = night.dusk_utc.timestamp()
    tower = v + 1.0 + 0.8 * np.sqrt(np.clip((t - dusk) / 3600.0, 0, None))  # the tower cools half as fast
    s[("b-tower", "air_temperature")] = (t, tower)
    p = forecast.project_block(now, cfg.blocks[0], cfg, s, night)
    assert p.projected_inversion_c > p.inversion_c > 1.0


def test_no_tower_says_so(tmp_path):
    cfg = make_cfg(tmp_path)
    night = night_for(cfg)
    p = forecast.project_block(night.dusk_utc, cfg.blocks[0], cfg, evening_series(cfg, night), night)
    assert p.inversion_c is None and any("no tower" in n for n in p.notes)


# ---- the demo farm ------------------------------------------------------------------------


def test_demo_frost_night_projects_sub_t10_by_dusk_and_cloudy_night_does_not(demo_config, demo_logs):
    cfg = load_config(str(demo_config))
    known = {s.id for s in cfg.stations}
    readings = [r for log in demo_logs for r in read_sensor_log(log, known)[0]]
    rows = backtest(cfg, _series_from_readings(readings))
    t10 = {b.id: b.kill_10pct_c for b in cfg.blocks}
    frost = {r["block"]: r for r in rows if r["night"] == "2027-04-14"}
    cloudy = {r["block"]: r for r in rows if r["night"] == "2027-04-16"}
    assert frost["east"]["predicted_min_c"] < t10["east"]
    assert frost["east"]["observed_min_c"] < t10["east"]
    assert cloudy and all(r["predicted_min_c"] > t10[b] for b, r in cloudy.items())


# ---- speed budget (not timed here: bench/ measures; this only keeps the work per call small) ----


def test_calibration_fit_is_memoised_for_a_growing_history():
    recs: list = []
    a = forecast.fit_calibration(recs, 10)
    assert forecast.fit_calibration(recs, 10) is a
    recs.append(forecast.NightRecord(EVENING, "b-low", 3.0, -4.0, 11.0, -3.0, dt.datetime(2027, 4, 15, tzinfo=dt.UTC),
                                     0.5, 0.0, -2.0, True, 0.5, 0.0))
    b = forecast.fit_calibration(recs, 10)
    assert b is not a and b.n_nights == 1


def test_dusk_regression_is_reuters_square_root_law():
    """Nights that all follow one cooling coefficient K give Tn = T0 + K sqrt(h) back exactly:
    reference sheet 1.1 check B (T0 0.95 degC, h 13 h, b' -1.7750 degC h^-1/2 -> Tp -5.45 degC)."""
    k = -1.7750
    recs = [
        forecast.NightRecord(dt.date(2027, 3, d), "b-low", t0, td, 13.0, t0 + k * 13.0**0.5,
                             dt.datetime(2027, 3, d + 1, tzinfo=dt.UTC), 0.5, 0.0, 0.0, True, 0.5, 0.0)
        for d, (t0, td) in enumerate([(2, -6), (5, -2), (8, 0), (3, -8), (6, -1), (1, -9), (7, -3), (4, -4)], start=1)
    ]
    cal = forecast.fit_calibration(recs, 10)
    assert cal.weight == 1.0
    x = forecast.feature_vector(0.95, -4.0, 0.0, 0.5)
    assert cal.regression_c(x, 13.0) == pytest.approx(-5.45, abs=0.01)
    # a shorter night cools less, by the square root of its length
    assert cal.regression_c(x, 6.5) == pytest.approx(0.95 + k * 6.5**0.5, abs=0.01)
    # d Tn / d T0 is one on this site (every night drops by the same amount)
    assert cal.coefs[0] == pytest.approx(1.0, abs=1e-6)


def test_wet_bulb_crossing_closed_form_matches_a_brute_force_curve():
    """The wet-bulb crossing is taken where the air curve crosses air_temp_c_for_wet_bulb(thr, Td);
    check it against wet bulbs computed along a fine air curve (dew point following the air down
    once reached), at dew points below and above the threshold."""
    import numpy as np

    from frostwatch.forecast import crossing_time
    from frostwatch.physics import humidity

    grid = np.arange(0.0, 8 * 3600.0 + 1, 60.0)
    curve = 3.0 - 2.2 * np.sqrt(grid / 3600.0)  # a square-root night from 3 degC
    for td in (-9.0, -4.0, -1.5, 1.0):
        for thr in (-1.2, -2.2):
            wb = np.asarray(humidity.wet_bulb_c_from_dew_point(curve, np.minimum(td, curve)), dtype=float)
            brute = crossing_time(grid, wb, thr)
            air_at = float(humidity.air_temp_c_for_wet_bulb(thr, td))
            fast = crossing_time(grid, curve, air_at if np.isfinite(air_at) else thr)
            if brute is None:
                assert fast is None
            else:
                assert abs(fast - brute) <= 60.0, (td, thr, fast, brute)  # within one grid step


def test_act_time_comes_from_the_band_cold_edge_and_says_so(tmp_path):
    """The ready-by time is taken where the 80 % band's cold edge reaches T10 + margin (the safe
    side, issue 15), the middle projection's crossing is kept beside it, and the reasons say both,
    and that the site is still learning."""
    from frostwatch.advice import explain, plan_advice
    from frostwatch.display import Display

    cfg = make_cfg(tmp_path)
    night = night_for(cfg)
    p = forecast.project_block(night.dusk_utc, cfg.blocks[0], cfg, evening_series(cfg, night, t0_c=0.0, td_c=-9.0), night)
    plan = plan_advice(p, cfg.blocks[0], night.dusk_utc, 1000.0)
    assert plan.crossing_utc == p.crossings_utc["t10_margin_cold_edge"]
    assert plan.crossing_middle_utc == p.crossings_utc["t10_margin"]
    assert plan.crossing_utc < plan.crossing_middle_utc
    assert plan.ready_by_utc == plan.crossing_utc - dt.timedelta(minutes=cfg.blocks[0].mobilisation_min)
    why = " ".join(explain.reasons(plan, Display()))
    assert "times are set early" in why and "still learning" in why


def _air_mass_night(d: int, t0: float, td: float, humid: bool, hours: float = 10.0) -> forecast.NightRecord:
    """A night whose cooling coefficient depends on T0 one way in humid air and the other way in
    dry air (a made-up site: the point is only that the two air masses cool differently)."""
    k = -0.5 - 0.08 * (t0 - 21.0) if humid else -1.5 + 0.08 * (t0 - 11.0)
    day = dt.date(2027, 1, 1) + dt.timedelta(days=d)
    return forecast.NightRecord(day, "b-low", t0, td, hours, t0 + k * hours**0.5,
                                dt.datetime.combine(day, dt.time(12), tzinfo=dt.UTC), 0.5, 0.0, 0.0, True, 0.5, 0.0)


def test_a_few_dry_nights_are_forecast_from_nights_like_them(forecast_setting):
    """Sixty humid nights and eight dry ones: the dusk regression weighs past nights by how close
    their dew point at t0 was, so a new dry night is forecast from the dry nights' cooling, not
    carried over from the humid majority (issue 15: weight toward similar nights)."""
    rng = np.random.default_rng(7)
    recs = []
    for d in range(68):
        if d % 8 == 3:
            recs.append(_air_mass_night(d, rng.uniform(8, 14), rng.uniform(-2, 4), humid=False))
        else:
            recs.append(_air_mass_night(d, rng.uniform(18, 24), rng.uniform(14, 20), humid=True))
    new_dry = [_air_mass_night(100 + i, t0, td, humid=False) for i, (t0, td) in enumerate([(8.5, 0.0), (13.5, 2.0), (10.0, -1.0)])]

    def mae(cal):
        return float(np.mean([abs(cal.regression_c(r.features, r.hours_to_sunrise) - r.observed_min_c) for r in new_dry]))

    weighted = mae(forecast.fit_calibration(recs, 10))
    forecast_setting("SIMILAR_WIDTH_C", None)
    alike = mae(forecast.fit_calibration(list(recs), 10))
    assert weighted < 0.15 and alike > 0.4  # measured 0.05 and 0.52


def test_evening_curve_switch_keeps_it_to_clear_calm_dusks(forecast_setting):
    """`EVENING_CLEAR_CALM_ONLY` (a benchmark variant, off as shipped): on, the evening curve leaves
    the skill blend of cloudy or windy dusks as the physics prior does, and stays in the clear calm
    dusks' blend; off, both blends keep it."""
    rng = np.random.default_rng(11)
    recs = []
    for d in range(40):
        calm = d % 2 == 0
        t0 = rng.uniform(5, 15)
        k = -1.2 if calm else -0.5
        day = dt.date(2027, 1, 1) + dt.timedelta(days=d)
        obs = t0 + k * 3.0 + rng.normal(scale=0.5)
        recs.append(forecast.NightRecord(
            day, "b-low", t0, t0 - 5.0, 9.0, obs, dt.datetime.combine(day, dt.time(12), tzinfo=dt.UTC),
            0.5 if calm else 4.0, 0.0 if calm else 0.8, obs + rng.normal(scale=1.0), calm,
            t0_wind_m_s=0.5 if calm else 4.0, t0_cloud_frac=0.0 if calm else 0.8,
            evening_curve_c=obs + rng.normal(scale=1.5)))

    def methods(cal):
        return {regime: {m for m, _ in w} for regime, w in cal.dusk_weights}

    shipped = methods(forecast.fit_calibration(recs, 10))
    assert "evening_curve" in shipped["clear_calm"] and "evening_curve" in shipped["other"]
    assert "prior" in shipped["clear_calm"] and "prior" not in shipped["other"]
    forecast_setting("EVENING_CLEAR_CALM_ONLY", True)
    switched = methods(forecast.fit_calibration(list(recs), 10))
    assert "evening_curve" in switched["clear_calm"] and "evening_curve" not in switched["other"]
    assert switched["other"] == {"regression", "drop_regression"}


def test_dusk_inputs_see_only_readings_up_to_dusk(demo_config):
    """The dusk inputs are what was known at the dusk point: readings that come after it, even a
    burst at another rate, change nothing. Here the humidity reported every 15 min until 10 min
    before dusk and every 10 s from a minute after it; judged by the later rate, the dusk's
    humidity reading would have been called stale and the dew point lost."""
    from frostwatch.forecast.sensors import dusk_inputs

    cfg = load_config(str(demo_config))
    t0 = 1_807_000_000.0
    air_t = np.arange(t0 - 3 * 3600.0, t0 + 2 * 3600.0 + 1, 60.0)
    rh_t = np.concatenate([np.arange(t0 - 3 * 3600.0, t0 - 600.0 + 1, 900.0), np.arange(t0 + 60.0, t0 + 2 * 3600.0, 10.0)])
    rh_t = rh_t[(rh_t <= t0 - 600.0) | (rh_t > t0)]
    full = {("east-low", "air_temperature"): (air_t, 8.0 - (air_t - air_t[0]) / 3600.0),
            ("east-low", "relative_humidity"): (rh_t, np.full(len(rh_t), 55.0))}
    known = {k: (t[t <= t0], v[t <= t0]) for k, (t, v) in full.items()}
    stations = cfg.stations_of("east")
    at_dusk, later = dusk_inputs(cfg, known, "east-low", stations, t0), dusk_inputs(cfg, full, "east-low", stations, t0)
    assert at_dusk is not None and at_dusk.dew_point_c is not None
    assert later == at_dusk
