"""The physical floor under a projection (frostwatch.physics.cooling_floor): the formula against
outside references, and the bound against open data it must never cut."""

from __future__ import annotations

import datetime as dt
import importlib.util
import math
import sys
from pathlib import Path
from zoneinfo import ZoneInfo

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st

from frostwatch.night import night_of_date
from frostwatch.physics import cooling_floor


def test_radiative_cooling_floor_vs_scipy_sigma_and_metpy_saturation():
    """Worked out beside the function from outside values: Stefan-Boltzmann from scipy.constants
    (CODATA 2018), the vapour pressure at the dew point from MetPy's saturation_vapor_pressure
    (Bolton 1980, over water), Brutsaert's (1975) emissivity 1.24 (e/T)^(1/7) and Brunt's fall
    2 Rn sqrt(t) / (sqrt(pi) mu) with mu 600 (reference sheet 1.3, 2.2). Tolerance 0.02 K: Bolton's
    curve and frostwatch's Hyland-Wexler differ by up to 0.3 % in e, 0.05 % in the emissivity."""
    constants = pytest.importorskip("scipy.constants")
    mpcalc = pytest.importorskip("metpy.calc")
    from metpy.units import units

    for air, td, hours in ((10.0, -4.0, 10.0), (0.0, -5.0, 10.0), (5.0, -3.0, 6.5), (-2.0, -4.0, 1.0), (15.0, 8.0, 9.0)):
        e_hpa = mpcalc.saturation_vapor_pressure(units.Quantity(td, "degC")).to("hPa").magnitude
        t_k = air + 273.15
        eps = 1.24 * (e_hpa / t_k) ** (1 / 7)
        loss = (1 - eps) * constants.sigma * t_k**4
        fall = 2 * loss * math.sqrt(hours * 3600.0) / (math.sqrt(math.pi) * 600.0)
        assert cooling_floor.radiative_cooling_floor_c(air, td, hours) == pytest.approx(air - fall, abs=0.02)
    # the reference sheet's check of Brutsaert at 0 / -5 degC: eps 0.683 (section 2.2)
    assert 1.24 * (4.215 / 273.15) ** (1 / 7) == pytest.approx(0.683, abs=0.001)


def test_radiative_cooling_floor_check_value_and_shape():
    """The docstring's check value; a drier sky, a longer night or a less conductive ground
    gives a lower floor; no humidity reading counts as a dry sky; out of range is NaN."""
    assert cooling_floor.radiative_cooling_floor_c(10.0, -4.0, 10.0) == pytest.approx(-30.67, abs=0.01)
    f = cooling_floor.radiative_cooling_floor_c
    assert f(10.0, -10.0, 10.0) < f(10.0, -4.0, 10.0) < f(10.0, 5.0, 10.0)
    assert f(10.0, -4.0, 10.0) < f(10.0, -4.0, 5.0) < f(10.0, -4.0, 1.0) < f(10.0, -4.0, 0.0) == 10.0
    assert f(10.0, -4.0, 10.0, 300.0) < f(10.0, -4.0, 10.0)
    assert f(10.0, None, 10.0) == pytest.approx(f(10.0, -20.0, 10.0))
    assert math.isnan(f(60.0, 0.0, 10.0)) and math.isnan(f(10.0, -4.0, -1.0))
    arr = f(np.array([10.0, 0.0]), np.array([-4.0, np.nan]), 8.0)
    assert arr.shape == (2,) and arr[1] == pytest.approx(f(0.0, None, 8.0))


@given(air=st.floats(-50.0, 50.0), depression=st.one_of(st.none(), st.floats(0.0, 60.0)), hours=st.floats(-1.0, 24.0))
def test_radiative_cooling_floor_f_is_the_vectorised_function(air, depression, hours):
    """The projection's float twin gives the vectorised function's value (NaN where it is NaN)."""
    td = None if depression is None else air - depression
    a = cooling_floor.radiative_cooling_floor_c(air, td, hours)
    b = cooling_floor.radiative_cooling_floor_f(air, td, hours)
    assert (math.isnan(a) and math.isnan(b)) or b == pytest.approx(a, rel=1e-12, abs=1e-9)


def test_the_floor_is_below_every_night_of_the_fao_fp_sample():
    """FAO-FP ch. 5's ten radiation nights (reference sheet 1.1, a published sample): each
    minimum is above the floor from its T0 and Td at sunset + 2 h over the 13 h to sunrise."""
    t0 = [3.2, 0.8, 0.2, 2.6, 4.4, 5.2, 2.7, 1.2, 4.5, 5.6]
    td = [-4.2, -8.8, -6.5, -6.2, -6.1, 2.6, -0.7, -1.7, -1.2, 0.1]
    tn = [-3.1, -5.0, -6.3, -5.4, -4.0, -2.5, -4.8, -5.0, -4.4, -3.3]
    floors = cooling_floor.radiative_cooling_floor_c(np.array(t0), np.array(td), 13.0)
    assert np.all(np.array(tn) > floors + 10.0)  # loose on purpose: about 30-40 K below each T0


_SPEC = importlib.util.spec_from_file_location("bench_tmy", Path(__file__).resolve().parents[2] / "bench" / "tmy.py")
tmy = importlib.util.module_from_spec(_SPEC)
sys.modules["bench_tmy"] = tmy
_SPEC.loader.exec_module(tmy)


@pytest.mark.parametrize("site_key", sorted(tmy.SITES))
def test_the_floor_never_cuts_a_night_of_the_open_typical_years(site_key):
    """Every night of pvlib's three typical years (Greensboro and Sand Point TMY3, Miami TMY2;
    Wilcox & Marion 2008), whatever its wind and cloud: the lowest hourly reading from sunset to
    sunrise is above the floor of its own time from the last reading at or before sunset and the
    dew point then. The closest calls are summer thunderstorms (overcast, dew point near 20 degC,
    -10 K in 3 h at Greensboro: 1.8 K above the floor; Miami 3.3 K; Sand Point 6.5 K): rain's
    cooling, not radiation's, and still above it. The projection applies the floor on radiation
    nights only."""
    pytest.importorskip("pvlib")
    h = tmy.read_raw(tmy.SITES[site_key])
    order = np.argsort(h.time_s)
    t, temp, dew = h.time_s[order], h.fields["temp_c"][order], h.fields["dew_c"][order]
    tz = ZoneInfo(tmy.fixed_zone_name(h.utc_offset_h))
    closest, nights = math.inf, 0
    for day in sorted({dt.datetime.fromtimestamp(s + h.utc_offset_h * 3600, dt.UTC).date() for s in t[::24]}):
        n = night_of_date(h.latitude, h.longitude, tz, day)
        ss, sr = n.sunset_utc.timestamp(), n.sunrise_utc.timestamp()
        j = int(np.searchsorted(t, ss, side="right")) - 1
        night = (t > ss) & (t <= sr)
        if j < 0 or ss - t[j] > 3600.0 or night.sum() < 5 or not (np.isfinite(temp[j]) and np.isfinite(dew[j])):
            continue
        ok = night & np.isfinite(temp)
        floors = cooling_floor.radiative_cooling_floor_c(temp[j], dew[j], (t[ok] - t[j]) / 3600.0)
        closest = min(closest, float(np.min(temp[ok] - floors)))
        nights += 1
    print(f"{site_key}: {nights} nights, closest reading {closest:.1f} K above the floor")
    assert nights > 300
    assert closest > 1.0
