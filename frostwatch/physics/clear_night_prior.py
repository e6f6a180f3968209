"""Physics prior for the night minimum, used while a site has too few nights of its own."""

from __future__ import annotations

import math

import numpy as np

from frostwatch.physics._broadcast import _out
from frostwatch.physics.longwave import SURFACE_EMISSIVITY_DEFAULT_FRAC
from frostwatch.physics.night_energy_balance import AIR_ADMITTANCE_EFFECTIVE_J_M2_K_S05, _project_path_c
from frostwatch.physics.sqrt_time_cooling import GROUND_ADMITTANCE_DEFAULT_J_M2_K_S05


def clear_night_minimum_prior_c(
    t0_temp_c,
    dew_point_c,
    hours_to_sunrise,
    wind_speed_m_s=0.0,
    cloud_frac=0.0,
    pressure_hpa=1013.25,
):
    """Physics-based prior for the night minimum, for a site with few calibration nights.

    Parameters
    ----------
    t0_temp_c : float or array_like
        Crop-height air temperature at t0, 2 h after sunset [degC].
    dew_point_c : float or array_like
        Dew point at t0 [degC].
    hours_to_sunrise : float or array_like
        Hours from t0 to sunrise [h], 0 < h <= 24.
    wind_speed_m_s : float or array_like
        Mean wind speed [m s-1].
    cloud_frac : float or array_like
        Cloud fraction [-].
    pressure_hpa : float or array_like
        Station pressure [hPa].

    Returns
    -------
    float or ndarray
        Projected minimum air temperature [degC] (broadcast over the inputs);
        NaN where an input is out of domain.

    Notes
    -----
    The minimum of ``project_night_energy_balance`` with its defaults (5-min
    steps, Brutsaert 1975 sky, Jacobs 1978 cloud, ground 1200 J m-2 K-1 s-1/2).
    Its one free constant, ``AIR_ADMITTANCE_EFFECTIVE_J_M2_K_S05``, was tuned on
    the ten radiation nights of the FAO-FP Ch. 5 sample (reference sheet 1.1),
    taking 12 h from t0 to sunrise for those April nights (an assumption: the
    sample gives no sunrise times). The MAE there is 1.25 degC (bias +0.2 degC),
    against 0.53 degC for the in-sample site regression: the prior misses the
    sample's strong dependence on T0 (slope 0.45) and overstates that on the dew
    point, so humid nights come out too warm and very dry ones too cold. Use it
    until a site has about ten calibration nights, then the site regression.

    References
    ----------
    Snyder, R.L. & de Melo-Abreu, J.P. (2005). Frost Protection, Vol. 1, FAO, Ch. 5.
    """
    arrays = np.broadcast_arrays(
        *(
            np.asarray(v, dtype=float)
            for v in (t0_temp_c, dew_point_c, hours_to_sunrise, wind_speed_m_s, cloud_frac, pressure_hpa)
        )
    )
    result = np.full(arrays[0].shape, math.nan)
    for idx in np.ndindex(result.shape):
        t0, td, h, u, c, p = (float(a[idx]) for a in arrays)
        if not (math.isfinite(h) and 0.0 < h <= 24.0):
            continue
        _, temps = _project_path_c(
            t0,
            td,
            h,
            300.0,
            u,
            c,
            p,
            GROUND_ADMITTANCE_DEFAULT_J_M2_K_S05,
            AIR_ADMITTANCE_EFFECTIVE_J_M2_K_S05,
            None,
            0.0,
            SURFACE_EMISSIVITY_DEFAULT_FRAC,
            "brutsaert_1975",
            "jacobs_1978",
        )
        result[idx] = math.nan if np.isnan(temps).any() else float(temps.min())
    return _out(result)
