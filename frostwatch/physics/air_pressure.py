"""Station pressure: the standard sea-level value and the FAO-56 pressure from elevation."""

from __future__ import annotations

import numpy as np

from frostwatch.constants import STANDARD_PRESSURE_HPA  # noqa: F401 - re-exported with the pressure function
from frostwatch.physics._broadcast import _inputs, _result

ELEVATION_MIN_M = -500.0  # [m] below the lowest dry land (Dead Sea shore, about -430 m)
ELEVATION_MAX_M = 11000.0  # [m] standard tropopause; the formula's lapse rate ends there


def pressure_hpa_from_elevation(elevation_m):
    """Standard-atmosphere station pressure from elevation, FAO-56 eq. 7.

    Parameters
    ----------
    elevation_m : float or array_like
        Elevation above mean sea level [m].

    Returns
    -------
    float or ndarray
        Atmospheric pressure [hPa]; NaN outside -500..11000 m.

    Notes
    -----
    P = 101.3 ((293 - 0.0065 z) / 293)^5.26 kPa: a standard atmosphere at 20 degC with a
    lapse rate of 6.5 K km-1, so it holds up to the tropopause. Weather changes the real
    pressure by a few percent; use a measured pressure where there is one.

    References
    ----------
    Allen, R. G., Pereira, L. S., Raes, D. and Smith, M. (1998), FAO Irrigation and Drainage
    Paper 56, ch. 3, eq. 7.
    """
    (z,), scalar = _inputs(elevation_m)
    ok = (z >= ELEVATION_MIN_M) & (z <= ELEVATION_MAX_M)
    z = np.where(ok, z, 0.0)
    p_hpa = 10.0 * 101.3 * ((293.0 - 0.0065 * z) / 293.0) ** 5.26
    return _result(np.where(ok, p_hpa, np.nan), scalar)
