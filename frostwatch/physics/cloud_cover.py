"""Cloud corrections of sky emissivity, and the cloud fraction an infrared sky thermometer implies.

Pure, vectorised numpy; NaN outside a formula's range (see `frostwatch.physics.sky_emissivity`).
"""

from __future__ import annotations

from collections.abc import Callable

import numpy as np

from frostwatch.constants import ZERO_CELSIUS_K
from frostwatch.physics.sky_emissivity import (
    _frac_ok,
    _lookup,
    _masked,
    _out,
    clear_sky_emissivity,
)


def all_sky_emissivity_jacobs_1978(clear_emissivity, cloud_frac):
    """All-sky emissivity after Jacobs (1978): ``eps_c (1 + 0.26 c)``.

    Parameters
    ----------
    clear_emissivity : float or array_like
        Clear-sky emissivity [-], 0..1.
    cloud_frac : float or array_like
        Cloud fraction [-], 0..1.

    Returns
    -------
    float or ndarray
        All-sky emissivity [-] (not capped; the dispatcher caps at 1), NaN
        outside the valid range.

    Notes
    -----
    Fitted on Baffin Island observations; Brutsaert (1982) gives the same form
    with 0.22.

    References
    ----------
    Jacobs, J.D. (1978). Radiation climate of Broughton Island. In: Energy
    budget studies in relation to fast-ice breakup processes in Davis Strait,
    Occasional Paper 26, INSTAAR, Univ. of Colorado, 105-120 (citation from memory).
    Flerchinger, G.N. et al. (2009). Water Resources Research 45, W03423, Table 2.
    """
    eps = np.asarray(clear_emissivity, dtype=float)
    c = np.asarray(cloud_frac, dtype=float)
    return _masked(eps * (1.0 + 0.26 * c), _frac_ok(eps) & _frac_ok(c))


def all_sky_emissivity_konzelmann_1994(clear_emissivity, cloud_frac):
    """All-sky emissivity after Konzelmann et al. (1994): ``eps_c (1 - c^4) + 0.952 c^4``.

    Parameters
    ----------
    clear_emissivity : float or array_like
        Clear-sky emissivity [-], 0..1.
    cloud_frac : float or array_like
        Cloud fraction [-], 0..1.

    Returns
    -------
    float or ndarray
        All-sky emissivity [-], NaN outside the valid range.

    Notes
    -----
    Little effect from scattered cloud (c^4); an overcast sky tends to 0.952.

    References
    ----------
    Konzelmann, T. et al. (1994). Parameterization of global and longwave
    incoming radiation for the Greenland Ice Sheet. Global and Planetary
    Change 9: 143-164.
    Flerchinger, G.N. et al. (2009). Water Resources Research 45, W03423, Table 2.
    """
    eps = np.asarray(clear_emissivity, dtype=float)
    c4 = np.asarray(cloud_frac, dtype=float) ** 4
    return _masked(eps * (1.0 - c4) + 0.952 * c4, _frac_ok(eps) & _frac_ok(cloud_frac))


def all_sky_emissivity_unsworth_monteith_1975(clear_emissivity, cloud_frac):
    """All-sky emissivity after Unsworth & Monteith (1975): ``(1 - 0.84 c) eps_c + 0.84 c``.

    Parameters
    ----------
    clear_emissivity : float or array_like
        Clear-sky emissivity [-], 0..1.
    cloud_frac : float or array_like
        Cloud fraction [-], 0..1.

    Returns
    -------
    float or ndarray
        All-sky emissivity [-], NaN outside the valid range.

    References
    ----------
    Unsworth, M.H. & Monteith, J.L. (1975). Long-wave radiation at the ground.
    Quarterly Journal of the Royal Meteorological Society 101: 13-24.
    Flerchinger, G.N. et al. (2009). Water Resources Research 45, W03423, Table 2.
    """
    eps = np.asarray(clear_emissivity, dtype=float)
    c = np.asarray(cloud_frac, dtype=float)
    return _masked((1.0 - 0.84 * c) * eps + 0.84 * c, _frac_ok(eps) & _frac_ok(c))


ALL_SKY_EMISSIVITY_MODELS: dict[str, Callable] = {
    "jacobs_1978": all_sky_emissivity_jacobs_1978,
    "konzelmann_1994": all_sky_emissivity_konzelmann_1994,
    "unsworth_monteith_1975": all_sky_emissivity_unsworth_monteith_1975,
}
"""Cloud corrections by name; each takes (clear_emissivity, cloud_frac)."""


def all_sky_emissivity(clear_emissivity, cloud_frac, model="jacobs_1978"):
    """All-sky emissivity by cloud-correction name, capped at 1.

    Parameters
    ----------
    clear_emissivity : float or array_like
        Clear-sky emissivity [-], 0..1.
    cloud_frac : float or array_like
        Cloud fraction [-], 0..1.
    model : str
        A key of ``ALL_SKY_EMISSIVITY_MODELS``; default ``"jacobs_1978"``.

    Returns
    -------
    float or ndarray
        All-sky emissivity [-], at most 1, NaN outside the valid range.

    Raises
    ------
    ValueError
        If ``model`` is not a known name.

    Notes
    -----
    A sky cannot emit more than a blackbody at screen temperature in this
    single-layer view, hence the cap ``min(eps, 1)`` (a humid sky with Jacobs'
    factor can exceed 1 otherwise).

    References
    ----------
    Flerchinger, G.N. et al. (2009). Water Resources Research 45, W03423, Table 2.
    """
    eps = _lookup(ALL_SKY_EMISSIVITY_MODELS, model, "cloud correction")(clear_emissivity, cloud_frac)
    return _out(np.minimum(eps, 1.0))


def cloud_frac_from_sky_temperature(
    sky_temp_c,
    air_temp_c,
    vapour_pressure_hpa,
    model="brutsaert_1975",
    cloud_emissivity_frac=1.0,
):
    """Effective cloud fraction from an infrared sky-thermometer reading.

    Parameters
    ----------
    sky_temp_c : float or array_like
        Effective sky brightness temperature from an upward-looking infrared
        sensor [degC].
    air_temp_c : float or array_like
        Screen-level air temperature [degC].
    vapour_pressure_hpa : float or array_like
        Screen-level actual vapour pressure [hPa].
    model : str
        Clear-sky emissivity model name; default ``"brutsaert_1975"``.
    cloud_emissivity_frac : float
        Emissivity of the cloud base [-]; default 1 (low water cloud is close
        to a blackbody).

    Returns
    -------
    float or ndarray
        Cloud fraction [-], clipped to 0..1, NaN for invalid input.

    Notes
    -----
    The sky is taken to emit ``sigma T_sky^4``, so the apparent emissivity is
    ``eps_a = (T_sky / Ta)^4`` (kelvin). The sky is then a mixture of clear
    sky and cloud base at screen temperature:
    ``eps_a = (1 - c) eps_clear + c eps_cloud``, hence
    ``c = (eps_a - eps_clear) / (eps_cloud - eps_clear)``, clipped to 0..1.
    Assumptions: the cloud base is near screen temperature (low cloud;
    high cold cloud reads as a smaller fraction), and the sensor reports a
    broadband-equivalent temperature. Window-band (8-14 um) sensors read
    colder than broadband on clear nights, so clear skies clip to 0, which is
    the cautious side for frost. The fraction is radiatively effective, not an
    observer's okta count; the linear mixing is the form of Unsworth &
    Monteith (1975) with their 0.84 replaced by the cloud emissivity.

    References
    ----------
    Unsworth, M.H. & Monteith, J.L. (1975). Quarterly Journal of the Royal
    Meteorological Society 101: 13-24.
    """
    ta_k = np.asarray(air_temp_c, dtype=float) + ZERO_CELSIUS_K
    sky_k = np.asarray(sky_temp_c, dtype=float) + ZERO_CELSIUS_K
    eps_cloud = np.asarray(cloud_emissivity_frac, dtype=float)
    eps_clear = np.asarray(clear_sky_emissivity(air_temp_c, vapour_pressure_hpa, model), dtype=float)
    with np.errstate(all="ignore"):
        eps_apparent = (sky_k / ta_k) ** 4
        frac = np.clip((eps_apparent - eps_clear) / (eps_cloud - eps_clear), 0.0, 1.0)
    ok = np.isfinite(sky_k) & (sky_k > 0.0) & np.isfinite(eps_clear) & (eps_cloud > eps_clear)
    ok &= eps_cloud <= 1.0
    return _masked(frac, ok)

