"""The benchmark's typical-year sensor logs (bench/tmy.py): pvlib's readers and an independent parse
of the raw files agree row for row, and the rows sit where the user's manuals say.

Outside references: the TMY3 and TMY2 files pvlib ships (Wilcox & Marion 2008; Marion & Urban
1995), psychrolib (ASHRAE 2017) for relative humidity, astral for sunrise.
"""

from __future__ import annotations

import datetime as dt
import importlib.util
import sys
from pathlib import Path

import numpy as np
import pytest

pytest.importorskip("pvlib")

_SPEC = importlib.util.spec_from_file_location("bench_tmy", Path(__file__).resolve().parents[1] / "bench" / "tmy.py")
tmy = importlib.util.module_from_spec(_SPEC)
sys.modules["bench_tmy"] = tmy  # dataclasses look their module up
_SPEC.loader.exec_module(tmy)


@pytest.fixture(scope="module", params=sorted(tmy.SITES))
def both(request):
    site = tmy.SITES[request.param]
    return site, tmy.read_raw(site), tmy.read_pvlib(site)


def test_pvlib_and_raw_parse_agree_row_for_row(both):
    site, raw, via_pvlib = both
    assert len(raw.time_s) == 8760
    assert np.array_equal(raw.time_s, via_pvlib.time_s)
    for name in raw.fields:
        assert np.array_equal(raw.fields[name], via_pvlib.fields[name], equal_nan=True), name
    assert (raw.latitude, raw.longitude, raw.utc_offset_h) == pytest.approx(
        (via_pvlib.latitude, via_pvlib.longitude, via_pvlib.utc_offset_h))


def test_raw_columns_are_the_right_ones_humidity_from_dry_bulb_and_dew_point(both):
    """RH recomputed from the parsed dry bulb and dew point (psychrolib, ASHRAE 2017) matches the
    file's own RH column: the fixed columns and scalings read the right fields."""
    psychrolib = pytest.importorskip("psychrolib")
    psychrolib.SetUnitSystem(psychrolib.SI)
    _, raw, _ = both
    t, td, rh = raw.fields["temp_c"], raw.fields["dew_c"], raw.fields["rh_pct"]
    ok = np.isfinite(t) & np.isfinite(td) & np.isfinite(rh) & (td <= t)
    calc = np.array([100.0 * psychrolib.GetSatVapPres(d) / psychrolib.GetSatVapPres(a) for a, d in zip(t[ok], td[ok], strict=True)])
    assert np.median(np.abs(calc - rh[ok])) < 1.0
    assert np.percentile(np.abs(calc - rh[ok]), 95) < 4.0


def test_rows_are_hour_ending_local_standard_time_by_sunrise(both):
    """The first morning row with sunshine ends an hour in which, or just after which, the sun rose
    (astral sunrise at the file's coordinates): stamps are hour-ending in the header's fixed UTC
    offset. Hour-beginning stamps would put that row before sunrise on most days."""
    import astral  # a dependency of frostwatch itself (sun times): always installed
    from astral.sun import sunrise

    _, raw, _ = both
    obs = astral.Observer(latitude=raw.latitude, longitude=raw.longitude)
    order = np.argsort(raw.time_s)
    t, ghi = raw.time_s[order], raw.fields["ghi_wh_m2"][order]
    local = t + raw.utc_offset_h * 3600.0
    lead_min = []
    for day in np.unique(np.floor(local / 86400.0))[::7]:  # one day a week
        sel = (local >= day * 86400.0) & (local < day * 86400.0 + 12 * 3600.0) & (ghi > 0)
        if not sel.any():
            continue
        first = float(t[sel][0])
        try:
            noon = dt.datetime.fromtimestamp(day * 86400.0 + 43200.0, dt.UTC).date()
            rise = sunrise(obs, date=noon, tzinfo=dt.UTC).timestamp()
        except ValueError:
            continue
        lead_min.append((first - rise) / 60.0)
    lead_min = np.array(lead_min)
    assert len(lead_min) > 40
    assert np.mean((lead_min >= -10.0) & (lead_min <= 130.0)) >= 0.95  # within the hour or the next
    assert 0.0 < np.median(lead_min) < 60.0


def test_pvlib_tmy2_stamps_are_hour_beginning_and_one_year(both):
    """Documents why the bench does not take pvlib's TMY2 index as it is (tmy.PVLIB_DIFFERENCES)."""
    site, raw, _ = both
    if site.kind != "tmy2":
        pytest.skip("TMY2 only")
    import pvlib

    data, _meta = pvlib.iotools.read_tmy2(str(tmy.data_dir() / site.file))
    idx = np.array([x.timestamp() for x in data.index])
    same_month = data["year"].to_numpy() == data["year"].to_numpy()[0]
    assert np.all(raw.time_s[same_month] - idx[same_month] == 3600.0)
    assert len({x.year for x in data.index}) == 1 and len(set(data["year"])) > 1
