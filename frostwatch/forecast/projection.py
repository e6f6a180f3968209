"""A block's night, projected: the dusk forecast, the nowcast, the 80 % band and the crossing times
of the stage's critical temperatures. Pure: readings, config, a calibration and an injected `now`
in, a `Projection` out. What a finished night did, for the calibration: `forecast.records`.

The curves and their crossings are in `forecast.curves`; a past night's nowcast training points
are `forecast.nowcast`'s.

The dusk forecast follows FAO-FP ch. 5 (Snyder & de Melo-Abreu 2005): at t0 = sunset + 2 h the
night minimum comes from the site's regression on what is known then, or from the physics prior
(`frostwatch.physics.clear_night_prior.clear_night_minimum_prior_c`) while the site is still learning (see
`calibration.Calibration`). The trend from now to sunrise is Reuter's square-root curve
T(t) = T0 + b' sqrt(t - t0). After t0 the minimum is re-projected at every evaluation from
tonight's own cooling (the nowcast). The band's cold edge gets its own curve and crossings: the
alerts take the act time from it (the safe side).
"""

from __future__ import annotations

import datetime as dt
import functools
import math

import numpy as np

from frostwatch import towers as towers_mod
from frostwatch.config import SPRINKLER_METHODS, Block, Config
from frostwatch.forecast import carry, crosscheck, floor, settings
from frostwatch.forecast import inversion as inv
from frostwatch.forecast.calibration import Calibration
from frostwatch.forecast.curves import (  # noqa: F401  (crossing_time, _utc: also read from here)
    _utc,
    block_crossings,
    crossing_time,
    evening_curve_c,
    evening_curve_spread_c,
    grid_utc,
    night_grid,
    sqrt_curve_c,
    sqrt_curves_c,
    utc_seconds,
)
from frostwatch.forecast.features import feature_vector
from frostwatch.forecast.nowcast import features_at
from frostwatch.forecast.past_night import NightRecord
from frostwatch.forecast.sensors import (
    ASSUMED_DEPRESSION_C,
    INPUT_WINDOW_S,
    DuskInputs,
    Series,
    as_of,
    cloud_frac_now,
    dew_point_of,
    dusk_inputs,
    speaking_station,
)
from frostwatch.models import Projection
from frostwatch.night import Night
from frostwatch.physics import clear_night_prior, humidity

CLOUDY_FRAC = 0.5  # above this cloud fraction the radiation model is flagged as not holding
GRID_STEP_S = 300.0
MIN_BAND_C = 0.3


_PRIMED: dict[tuple, float] = {}  # the last batch of priors worked out at once (prime_priors)


@functools.lru_cache(maxsize=4096)
def _prior_cached(t0_c: float, td_c: float, hours: float, wind: float, cloud: float, p_hpa: float) -> float:
    return float(clear_night_prior.clear_night_minimum_prior_c(
        t0_c, td_c, hours, wind_speed_m_s=wind, cloud_frac=cloud, pressure_hpa=p_hpa
    ))


def _prior_key(t0_c: float, td_c: float, hours: float, wind: float, cloud: float, p_hpa: float) -> tuple:
    return round(t0_c, 2), round(td_c, 2), round(hours, 2), round(wind, 1), round(cloud, 2), round(p_hpa)


def prior_c(t0_c: float, td_c: float, hours: float, wind: float, cloud: float, p_hpa: float) -> float:
    """The physics prior, memoised on inputs rounded well inside their measurement error."""
    key = _prior_key(t0_c, td_c, hours, wind, cloud, p_hpa)
    primed = _PRIMED.get(key)
    return _prior_cached(*key) if primed is None else primed


def prime_priors(inputs: list[tuple[float, ...]]) -> None:
    """Work out `prior_c` of many nights' inputs in one vectorised pass (the energy balance of
    all nights stepped together, the same values), kept until the next batch: a backtest's dusk
    forecasts then find them. One night alone is left to `prior_c`."""
    keys = list(dict.fromkeys(_prior_key(*a) for a in inputs))
    if len(keys) < 2:
        return
    values = clear_night_prior.clear_night_minimum_prior_c(*np.array(keys, dtype=float).T)
    _PRIMED.clear()
    _PRIMED.update(zip(keys, values.tolist(), strict=True))


def _round2(x: float) -> float:
    """`round(x, 2)` as a float: a float rounded as Python rounds it, numpy's float64 (the band's
    offsets are) as numpy rounds it (x * 100 to the nearest integer, halves to even, / 100), the
    same value as `round(np.float64(x), 2)` gives without numpy's scalar round (a few
    microseconds each) and without numpy's type in the stored values."""
    if type(x) is float:
        return round(x, 2)
    y = float(x) * 100.0
    if not math.isfinite(y):
        return float(np.round(x, 2))
    k = round(y)  # an int, halves to even as np.rint
    return math.copysign(0.0, y) if k == 0 else k / 100.0


def _learning_note(cal: Calibration) -> str | None:
    if not cal.learning:
        return None
    if cal.n_nights == 0:
        return (f"site still learning: no past night known yet (needs about {cal.calibration_nights}); "
                "the minimum is from tonight's evening cooling and the physics prior alone, treat it with care")
    return (f"site still learning: {cal.n_nights} of about {cal.calibration_nights} past nights known; "
            "the band is wide until more are")


def _dusk_forecast(
    t0_c: float, td0_c: float | None, wind0: float | None, cloud0: float | None, trend0: float | None,
    p_trend0: float | None, t0_s: float, method: str, t_air: np.ndarray, v_air: np.ndarray, night: Night,
    cal: Calibration, p_hpa: float, memo: dict | None = None, before_dusk: bool = False,
) -> tuple:
    """The forecast from t0 (dusk, or now before it): (t0_c, t0_s, method, hours from t0 to
    sunrise, minimum, Reuter's b', the band's low and high offsets, notes). `memo`: the
    evening curve's memo for these readings (`curves.evening_curve_c`).

    Before dusk the same evening curve on the readings so far, so the estimate runs into the dusk
    forecast, read by what it knows: with its standard error (`curves.evening_curve_spread_c`), it
    is shrunk toward the forecast without it as a measurement toward a prior whose spread is
    `PRIOR_BAND_C` (the weight v / (v + se^2)), and the band widens by what is left of its error.
    Right after sunset, when a reading or two hardly spread on the square-root clock, it counts for
    next to nothing; by dusk, fully."""
    sunset_s, sunrise_s = night.sunset_utc.timestamp(), night.sunrise_utc.timestamp()
    if not before_dusk:
        evening = evening_curve_c(t_air, v_air, sunset_s, t0_s, t0_c, sunrise_s, memo)
        return _dusk_forecast_with(t0_c, td0_c, wind0, cloud0, trend0, p_trend0, t0_s, method, evening, night, cal,
                                   p_hpa)
    fit = evening_curve_spread_c(t_air, v_air, sunset_s, t0_s, t0_c, sunrise_s, memo)
    # the error still to come before dusk, the curve's own at sunset, none at dusk: the estimate
    # runs into the dusk forecast without a step (the daemon's clock, in whole milliseconds, may
    # stand a fraction of one before dusk where a replay stands at it)
    to_dusk = min(1.0, max(0.0, (night.dusk_utc.timestamp() - t0_s) / (night.dusk_utc.timestamp() - sunset_s)))
    return _dusk_forecast_with(t0_c, td0_c, wind0, cloud0, trend0, p_trend0, t0_s, method,
                               None if fit is None else fit[0], night, cal, p_hpa,
                               evening_se_c=None if fit is None else fit[1] * math.sqrt(to_dusk))


def _dusk_forecast_with(
    t0_c: float, td0_c: float | None, wind0: float | None, cloud0: float | None, trend0: float | None,
    p_trend0: float | None, t0_s: float, method: str, evening: float | None, night: Night, cal: Calibration,
    p_hpa: float, evening_se_c: float | None = None,
) -> tuple:
    """`_dusk_forecast` with tonight's evening curve (`curves.evening_curve_c`) given, and before
    dusk its standard error."""
    sunrise_s = night.sunrise_utc.timestamp()
    notes = []
    h_from_t0 = max(0.25, (sunrise_s - t0_s) / 3600.0)
    x = feature_vector(t0_c, td0_c, cloud0, wind0, trend0, p_trend0)
    prior = prior_c(t0_c, x[1], h_from_t0, x[3], x[2], p_hpa)
    if not math.isfinite(prior):
        notes.append("the physics prior is undefined for these inputs; the site regression alone is used")
        prior = cal.regression_c(x, h_from_t0) if cal.weight > 0 else t0_c - 3.0
    widen_c = 0.0
    if evening is not None and evening_se_c is not None and math.isfinite(evening):
        without = cal.predict_c(prior, x, h_from_t0, None)
        trust = settings.PRIOR_BAND_C**2 / (settings.PRIOR_BAND_C**2 + evening_se_c**2)
        evening = without + trust * (evening - without)
        share = cal.predict_c(prior, x, h_from_t0, evening + 1.0) - cal.predict_c(prior, x, h_from_t0, evening)
        widen_c = settings.BAND_Z * abs(share) * math.sqrt(trust) * evening_se_c
    tp_dusk = min(cal.predict_c(prior, x, h_from_t0, evening), t0_c)
    if td0_c is None:
        notes.append(f"no humidity reading at dusk: dew point assumed {ASSUMED_DEPRESSION_C:g} K below the air for the dusk forecast")
    b_dusk = (tp_dusk - t0_c) / math.sqrt(h_from_t0)
    lo_off, hi_off = cal.dusk_band_c(h_from_t0)
    if widen_c > 0.0:  # the evening curve's error left after shrinking, beside the forecast's own
        lo_off, hi_off = -math.hypot(lo_off, widen_c), math.hypot(hi_off, widen_c)
    return t0_c, t0_s, method, h_from_t0, tp_dusk, b_dusk, lo_off, hi_off, tuple(notes)


def dusk_memo(block_id: str, rec: NightRecord, night: Night, cal: Calibration, p_hpa: float) -> dict:
    """A `project_block` memo that holds the night's dusk forecast made from its record's inputs
    (`forecast.records`: the dusk inputs and evening curve as of t0, from readings up to t0, as
    `project_block` at t0 or later works them out from the same readings). A backtest projects
    each night at its dusk with it instead of working those inputs out a second time."""
    dusk_s = night.dusk_utc.timestamp()
    di = DuskInputs(rec.station, rec.t0_temp_c, rec.t0_dew_point_c, rec.t0_wind_m_s, rec.t0_cloud_frac,
                    rec.t0_wind_trend_m_s, rec.t0_pressure_trend_hpa)
    dusk = _dusk_forecast_with(di.temp_c, di.dew_point_c, di.wind_m_s, di.cloud_frac, di.wind_trend_m_s,
                               di.pressure_trend_hpa, dusk_s, "dusk forecast", rec.evening_curve_c, night, cal, p_hpa)
    return {("dusk", block_id, rec.station, dusk_s): (cal, di, dusk)}


def project_block(
    now_utc: dt.datetime,
    block: Block,
    cfg: Config,
    series: Series,
    night: Night,
    calibration: Calibration | None = None,
    pressure_hpa: float | None = None,
    curves: bool = True,
    memo: dict | None = None,
    dusk_memo: dict | None = None,
    doubts: dict | None = None,
) -> Projection:
    """Project `block`'s crop-height air (and wet bulb) from `now_utc` to sunrise.

    With `curves=False` the projected curves, their crossings and the wet bulb along them are
    left out (empty); every other field is the same (a backtest scores the minimum and band).
    `memo` (a replay's `pipeline.WindowMemo` values, emptied when the readings window changes)
    keeps what the window alone decides: the dusk forecast, from dusk on. `dusk_memo` (without
    `memo`: the daemon's, `pipeline.Evaluator`, emptied when a reading at or before dusk is
    added or the config changes) keeps the dusk forecast alone, which readings up to dusk decide."""
    now_s = now_utc.timestamp()
    fc = cfg.forecast
    cal = calibration or Calibration(calibration_nights=fc.calibration_nights)
    p_hpa = pressure_hpa or float(humidity.pressure_hpa_from_elevation(cfg.site.elevation_m))
    stations = cfg.stations_of(block.id)
    site_stations = cfg.stations_of(None)
    # a thermometer far out of line with the rest of the farm does not speak (`crosscheck`)
    doubts = crosscheck.sensor_doubts(cfg, series, now_s, memo) if doubts is None else doubts
    states = [crosscheck.trusted(carry.station_state(s, series, now_s, fc.stale_after_intervals, memo), doubts)
              for s in stations]
    site_states = [crosscheck.trusted(carry.station_state(s, series, now_s, fc.stale_after_intervals, memo), doubts)
                   for s in site_stations]
    notes = [p for s in states for p in s.problems]
    speaker = speaking_station(states)
    base = dict(time_utc=now_utc, block=block.id, sunset_utc=night.sunset_utc, sunrise_utc=night.sunrise_utc)
    if speaker is None:
        notes.append(f"block {block.id}: no healthy crop-height sensor; no projection can be made")
        return Projection(
            **base, station=None, air_temp_c=None, dew_point_c=None, wet_bulb_c=None,
            predicted_min_c=None, predicted_min_at_utc=None, band_c=None, crossings_utc={},
            inversion_c=None, projected_inversion_c=None, inversion_class=None, wind_speed_m_s=None,
            regime="unmonitored", method="none", notes=tuple(notes),
        )

    air_c = speaker.latest["air_temperature"]
    td_c = dew_point_of(speaker, [s for s in states if s is not speaker] + site_states)
    if td_c is not None:
        td_c = min(td_c, air_c)
    wind = carry.mean_as_of(series, [s.id for s in stations + site_stations], "wind_speed", now_s, INPUT_WINDOW_S, memo)
    wind_from_farm = False
    if wind is None:
        # no anemometer in the block or site-wide: the farm's wind is better than none
        others = [s.id for s in cfg.stations if s.block not in (block.id, None)]
        wind = carry.mean_as_of(series, others, "wind_speed", now_s, INPUT_WINDOW_S, memo)
        if wind is not None:
            wind_from_farm = True
            notes.append("no wind sensor in this block: wind from the farm's other sensors")
    cloud = cloud_frac_now(series, cfg, now_s, air_c, td_c,
                           None if memo is None else functools.partial(carry.mean_as_of, memo=memo))
    if cloud is None:
        notes.append("no sky or cloud sensor: clear sky assumed")
    regime = "radiation"
    if wind is not None and wind > fc.radiation_wind_limit_m_s:
        regime = "windy"
        notes.append(f"wind {wind:.1f} m/s is above {fc.radiation_wind_limit_m_s:g} m/s: radiation model does not hold; "
                     "projection leans on tonight's observed cooling")
    elif cloud is not None and cloud >= CLOUDY_FRAC:
        regime = "cloudy"
        notes.append(f"cloud fraction {cloud:.1f}: radiation model does not hold; projection leans on tonight's observed cooling")
    learning = _learning_note(cal)
    if learning:
        notes.append(learning)
    if cal.n_protected:
        notes.append(f"{cal.n_protected} past night(s) with protection running left out of the calibration")

    sunrise_s, dusk_s = night.sunrise_utc.timestamp(), night.dusk_utc.timestamp()
    hours_left = max(0.0, (sunrise_s - now_s) / 3600.0)
    t_air, v_air = series[(speaker.station, "air_temperature")]
    if len(t_air) and not t_air[-1] <= now_s:  # sorted: a window cut at now (an evaluation's) is kept as it is
        upto = t_air <= now_s
        t_air, v_air = t_air[upto], v_air[upto]

    # the dusk forecast: at t0 if we are past it, else from the latest values. Past dusk it is
    # made from the readings window alone (and the calibration): a replay's memo keeps it while
    # the window is the same
    key = ("dusk", block.id, speaker.station, dusk_s)
    keep = memo if memo is not None else dusk_memo
    kept = None if keep is None or now_s < dusk_s else keep.get(key)
    if kept is not None and kept[0] is cal:
        di, dusk = kept[1], kept[2]
    else:
        di = dusk_inputs(cfg, series, speaker.station, stations, dusk_s) if now_s >= dusk_s else None
        dusk = None if di is None else _dusk_forecast(
            di.temp_c, di.dew_point_c, di.wind_m_s, di.cloud_frac, di.wind_trend_m_s, di.pressure_trend_hpa, dusk_s,
            "dusk forecast", t_air, v_air, night, cal, p_hpa)
        if keep is not None and now_s >= dusk_s:
            keep[key] = (cal, di, dusk)
    if dusk is None:
        dusk = _dusk_forecast(air_c, td_c, wind, cloud, None, None, now_s, "pre-dusk estimate", t_air, v_air, night,
                              cal, p_hpa, None if memo is None else memo.setdefault(("evening", speaker.station), {}),
                              before_dusk=True)
    t0_c, t0_s, method, h_from_t0, tp_dusk, b_dusk, lo_off, hi_off, dusk_notes = dusk
    notes.extend(dusk_notes)

    e_now = math.sqrt(max(0.0, (now_s - t0_s) / 3600.0))
    anchor_c = as_of(series, speaker.station, "air_temperature", now_s, math.inf) or air_c
    tp_c = tp_dusk
    band_at_c = None  # the band's centre where it is not tp_c
    if di is not None and now_s > t0_s and now_s < sunrise_s:
        f = features_at(t_air, v_air, t0_s, t0_c, sunrise_s, now_s, wind, cloud, td_c,
                        None if memo is None else memo.setdefault(("nowcast", speaker.station), {}))
        if f is not None:
            latest_c, feats = f
            dusk_drop = b_dusk * (math.sqrt(h_from_t0) - e_now)
            blend = cal.nowcast_fall_c(feats, hours_left, dusk_drop, e_now * e_now)  # the fall before the corrections
            drop, spoke = cal.nowcast_drop_c(feats, hours_left, dusk_drop, e_now * e_now, dusk_min_c=tp_dusk, blend=blend)
            tp_c = latest_c + drop
            lo_off, hi_off, _ = cal.nowcast_band(hours_left)
            method = f"nowcast ({spoke})"
            if settings.NOWCAST_LEAD_CORRECTION and settings.LEAD_BAND_RAW and cal.nc_lead:
                # the band is the blend's own (its walk-forward residuals): around the blend before the correction
                band_at_c = latest_c + blend[0]  # nowcast_drop_c(..., lead=False)
    tp_c = min(tp_c, anchor_c)
    band_at_c = tp_c if band_at_c is None else min(band_at_c, anchor_c)
    floor_c = physics_floor_c = None  # the physical floor (radiation nights), where the projection or its band reached it
    if now_s < sunrise_s and regime == "radiation":
        tp_c, band_at_c, floor_c, physics_floor_c, note = floor.held_at_floor(
            t_air, v_air, night.sunset_utc.timestamp(), now_s, sunrise_s, anchor_c, td_c, tp_c, band_at_c,
            band_at_c + min(lo_off, -MIN_BAND_C / 2))
        if note:
            notes.append(note)

    grid_s, e_grid, grid_times = night_grid(now_s, sunrise_s, t0_s, GRID_STEP_S)  # every block's, made once
    span = math.sqrt(h_from_t0) - e_now

    band_low_c = band_at_c + min(lo_off, -MIN_BAND_C / 2)
    band_high_c = band_at_c + max(hi_off, MIN_BAND_C / 2)
    if floor_c is not None:  # the band's cold edge no colder than physics allows either
        band_low_c = max(band_low_c, floor_c)
    if curves:  # the curve and its cold edge as the rows of one array (rounded together below)
        both = sqrt_curves_c((tp_c, band_low_c), anchor_c, e_grid, e_now, span)
        curve, cold_curve = both
    else:
        both = None
        curve = cold_curve = sqrt_curve_c(tp_c, anchor_c, e_grid, e_now, span)

    wet_c = None
    td_trend = td_at_start = None  # the dew point's fall tonight, for sprinkler blocks (below)
    crossings: dict[str, dt.datetime | None] = {}
    if now_s >= sunrise_s:
        # after sunrise: report what was observed, project nothing
        night_sel = t_air >= night.sunset_utc.timestamp()
        obs = v_air[night_sel] if night_sel.any() else v_air
        i = int(obs.argmin())
        tmin_c = float(obs[i])
        tmin_at = _utc(float(t_air[night_sel][i] if night_sel.any() else t_air[i]))
        if td_c is not None and block.protection in SPRINKLER_METHODS:
            wet_c = float(humidity.wet_bulb_c_from_dew_point(air_c, td_c, p_hpa))
            wet_c = wet_c if math.isfinite(wet_c) else None
        method = "observed (after sunrise)"
        band_low_c = band_high_c = tmin_c
    elif not curves:
        i = int(curve.argmin())
        tmin_c = float(curve[i])
        tmin_at = _utc(float(grid_s[i]))
    else:
        i = int(curve.argmin())
        tmin_c = float(curve[i])
        tmin_at = _utc(float(grid_s[i]))
        out = crosscheck.left_out(doubts)  # a sensor in the wrong unit gives no dew point either
        dew_point_stations = [speaker.station] + [s.station for s in states + site_states
                                                  if s is not speaker and s.station not in out]
        crossings, wet_c, td_trend, td_at_start = block_crossings(
            block, grid_s, curve, cold_curve, tmin_at, air_c, td_c, p_hpa, series, dew_point_stations, now_s)

    # inversion: tower minus crop height, now and projected to the minimum; a block without a
    # tower of its own uses the nearest (or the site-wide) one (frostwatch.towers)
    tower_states = {s.station: s for s in states + site_states}
    if not any(s.role == "tower" and s.healthy and "air_temperature" in s.latest for s in states):
        # only a block without a healthy tower of its own looks at the others (the farm's towers
        # are not all read for every block)
        for st in cfg.stations_with_role("tower"):
            if st.id not in tower_states:
                tower_states[st.id] = crosscheck.trusted(
                    carry.station_state(st, series, now_s, fc.stale_after_intervals, memo), doubts)
    choice = towers_mod.tower_for_block(cfg, block, tower_states)
    outlook = inv.inversion_outlook(
        tower_states[choice.station] if choice is not None else None, series, air_c, t0_s, now_s, sunrise_s,
        tmin_at.timestamp() if tmin_at else None, regime == "radiation", crop_station=speaker.station,
        history_c=cal.inversion_at_min_c, history_nights=cal.inversion_nights,
        step_s=fc.evaluation_interval_min * 60.0, dusk_s=dusk_s)
    inv_c, proj_inv_c, inv_class = outlook.now_c, outlook.projected_c, outlook.inversion_class
    if inv_c is None:
        notes.append("no tower sensor: inversion not measured")
    tower_fields = {} if choice is None else dict(
        tower_station=choice.station, tower_own=choice.own, tower_site_wide=choice.site_wide,
        tower_distance_m=None if choice.distance_m is None else round(choice.distance_m, 0),
        inversion_basis=outlook.basis, inversion_known_by_utc=_utc(outlook.known_by_s),
        inversion_history_nights=outlook.history_nights)
    drying_fields = {} if td_trend is None and td_at_start is None else dict(
        dew_point_trend_c_per_h=None if td_trend is None else round(td_trend, 2),
        dew_point_at_start_c=None if td_at_start is None else round(td_at_start, 2))
    step = max(1, len(grid_s) // 48)
    projecting = now_s < sunrise_s
    drawn = projecting and curves
    drawn_c = both[:, ::step].round(2).tolist() if drawn else ((), ())  # both curves' drawn points in one rounding
    return Projection(
        **base,
        station=speaker.station,
        air_temp_c=air_c,
        dew_point_c=td_c,
        wet_bulb_c=wet_c,
        predicted_min_c=round(tmin_c, 2),
        predicted_min_at_utc=tmin_at,
        band_c=_round2(max(0.0, tmin_c - band_low_c)) if projecting else 0.0,
        crossings_utc=crossings,
        inversion_c=None if inv_c is None else round(inv_c, 2),
        projected_inversion_c=None if proj_inv_c is None else round(proj_inv_c, 2),
        inversion_class=inv_class,
        wind_speed_m_s=None if wind is None else round(wind, 2),
        regime=regime,
        method=method,
        notes=tuple(notes),
        curve_time_utc=grid_times(step) if drawn else (),
        curve_air_temp_c=tuple(drawn_c[0]),
        band_low_c=_round2(min(band_low_c, tmin_c)),
        band_high_c=_round2(max(band_high_c, tmin_c)),
        curve_cold_edge_c=tuple(drawn_c[1]),
        calibration_nights_known=cal.n_nights if cal.learning else None,
        calibration_nights_needed=cal.calibration_nights if cal.learning else None,
        wind_from_farm=wind_from_farm,
        physics_floor_c=physics_floor_c,
        **tower_fields,
        **drying_fields,
    )
