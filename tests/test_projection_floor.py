"""The physical floor under the projection (frostwatch.physics.cooling_floor): a reading that
falls faster than a clear night can cool is projected no lower than the floor, and the grower is
told to check the sensor; real nights never reach it."""

from __future__ import annotations

import datetime as dt

import numpy as np
from forecast_site import make_cfg

from frostwatch import forecast
from frostwatch.advice import explain, plan_advice
from frostwatch.display import Display
from frostwatch.night import night_of_date


def _faulty_fall(cfg, night, rate_c_per_h: float, minutes: int):
    """Minute readings: an ordinary evening (1.5 degC/h before sunset, 9 degC at sunset), then the
    crop-height sensor falls `rate_c_per_h` from sunset for `minutes`."""
    sunset = night.sunset_utc.timestamp()
    t = np.arange(sunset - 3 * 3600.0, sunset + minutes * 60.0 + 1.0, 60.0)
    air = 9.0 - np.where(t <= sunset, 1.5, rate_c_per_h) * (t - sunset) / 3600.0
    return {("b-low", "air_temperature"): (t, air), ("b-low", "dew_point_temperature"): (t, np.minimum(-4.0, air)),
            ("b-low", "wind_speed"): (t, np.full_like(t, 0.5))}


def test_an_18_c_per_hour_fall_is_held_at_the_physical_floor_and_said():
    """Before: a sensor falling 18 degC/h from sunset (9 degC) read -9 degC an hour later and the
    estimate went on to -37.7 degC at sunrise, band to -40.3, as if possible, and nothing said why;
    two hours on, -59.8. Now the reading is seen to fall faster than a clear night can cool (Brunt's
    fall under the clearest sky's loss, from the sunset reading), the minimum and the band's cold
    edge are held at the floor or above, and the reasons say to check the sensor."""
    import tempfile
    from pathlib import Path

    from frostwatch.physics import cooling_floor

    cfg = make_cfg(Path(tempfile.mkdtemp()))
    night = night_of_date(cfg.site.latitude, cfg.site.longitude, cfg.site.tz, dt.date(2027, 4, 14))
    for minutes in (60, 120):
        now = night.sunset_utc + dt.timedelta(minutes=minutes)
        p = forecast.project_block(now, cfg.blocks[0], cfg, _faulty_fall(cfg, night, 18.0, minutes), night)
        hours = night.hours_to_sunrise(now)
        from_now = cooling_floor.radiative_cooling_floor_c(p.air_temp_c, p.dew_point_c, hours)
        from_sunset = cooling_floor.radiative_cooling_floor_c(9.0, p.dew_point_c, night.hours_to_sunrise(night.sunset_utc))
        floor = round(min(max(from_now, from_sunset), p.air_temp_c), 2)
        assert p.air_temp_c < cooling_floor.radiative_cooling_floor_c(9.0, p.dew_point_c, minutes / 60.0)  # the reading itself
        assert p.physics_floor_c == floor
        assert p.predicted_min_c >= floor and p.band_low_c >= floor
        assert min(p.curve_air_temp_c) >= floor - 0.01
        assert any("cooling faster than physics allows" in n and "check the sensor" in n for n in p.notes)
        plan = plan_advice(p, cfg.blocks[0], now, 1000.0)
        why = " ".join(explain.reasons(plan, Display()))
        assert "cooling faster than physics allows: check the sensor" in why


def test_an_ordinary_clear_night_never_reaches_the_floor():
    """3 degC/h after dusk (a fast but real clear-night fall) is projected as before: no floor."""
    import tempfile
    from pathlib import Path

    cfg = make_cfg(Path(tempfile.mkdtemp()))
    night = night_of_date(cfg.site.latitude, cfg.site.longitude, cfg.site.tz, dt.date(2027, 4, 14))
    now = night.sunset_utc + dt.timedelta(minutes=60)
    p = forecast.project_block(now, cfg.blocks[0], cfg, _faulty_fall(cfg, night, 3.0, 60), night)
    assert p.physics_floor_c is None
    assert not any("physics allows" in n for n in p.notes)
