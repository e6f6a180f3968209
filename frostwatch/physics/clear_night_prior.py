"""Physics prior for the night minimum, used while a site has too few nights of its own."""

from __future__ import annotations

import math

import numpy as np

from frostwatch.constants import GRAVITY_M_S2, SECONDS_PER_HOUR_S, ZERO_CELSIUS_K
from frostwatch.physics import night_energy_balance as neb
from frostwatch.physics import saturation
from frostwatch.physics._broadcast import _out
from frostwatch.physics.longwave import SURFACE_EMISSIVITY_DEFAULT_FRAC, net_longwave_w_m2
from frostwatch.physics.night_energy_balance import AIR_ADMITTANCE_EFFECTIVE_J_M2_K_S05, _project_path_c
from frostwatch.physics.sky_emissivity import AIR_TEMP_MAX_C, AIR_TEMP_MIN_C
from frostwatch.physics.sqrt_time_cooling import GROUND_ADMITTANCE_DEFAULT_J_M2_K_S05, SQRT_PI
from frostwatch.physics.wind_mixing import ANEMOMETER_HEIGHT_M, LOUIS_B, LOUIS_D, NEUTRAL_TRANSFER_COEFF_FRAC


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
    scalars = (t0_temp_c, dew_point_c, hours_to_sunrise, wind_speed_m_s, cloud_frac, pressure_hpa)
    if all(type(v) is float or type(v) is int for v in scalars):  # one night: no arrays (the same floats)
        return _minimum_one_c(*map(float, scalars))
    arrays = np.broadcast_arrays(
        *(
            np.asarray(v, dtype=float)
            for v in (t0_temp_c, dew_point_c, hours_to_sunrise, wind_speed_m_s, cloud_frac, pressure_hpa)
        )
    )
    result = np.full(arrays[0].shape, math.nan)
    if result.size > 1:
        result.flat[:] = _minimum_many_c(*(a.ravel() for a in arrays))
        return _out(result)
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


def _minimum_one_c(t0: float, td: float, h: float, u: float, c: float, p: float) -> float:
    """The loop above for one night, from `_project_path_c`'s kept kernel without its arrays:
    the same checks, the same kernel, the same steps (`_PathKernel.path_minimum`)."""
    if not (math.isfinite(h) and 0.0 < h <= 24.0) or not all(math.isfinite(v) for v in (t0, td, u, c, p)):
        return math.nan
    if not (AIR_TEMP_MIN_C <= td and AIR_TEMP_MIN_C <= t0 <= AIR_TEMP_MAX_C and u >= 0.0 and 0.0 <= c <= 1.0
            and neb.PRESSURE_MIN_HPA <= p <= neb.PRESSURE_MAX_HPA):
        return math.nan
    kernel = neb._kernel(t0, td, STEP_S, u, c, p, GROUND_ADMITTANCE_DEFAULT_J_M2_K_S05,
                         AIR_ADMITTANCE_EFFECTIVE_J_M2_K_S05, t0, 0.0, SURFACE_EMISSIVITY_DEFAULT_FRAC, "brutsaert_1975",
                         "jacobs_1978")
    if kernel is None:
        return math.nan
    n_steps = math.ceil(h * SECONDS_PER_HOUR_S / STEP_S - 1e-9)
    return kernel.path_minimum(n_steps, min(n_steps * STEP_S, h * SECONDS_PER_HOUR_S))


STEP_S = 300.0  # the prior's time step (5 min)
FIRST_SPAN_K = 16.0  # the loss curve is tabulated this far below t0 first; nights that cool further get all of it


def _minimum_many_c(t0_c, td_c, hours, wind_m_s, cloud_frac, pressure_hpa) -> np.ndarray:
    """The prior's minimum for many nights at once (1-D arrays), stepped together in numpy: the
    same arithmetic as `night_energy_balance._project_path_c` night by night (each step's
    operations in the same order, element-wise, so the same floats), with the prior's fixed
    settings (ground and air admittance, no earlier onset, the aloft air at t0, Brutsaert 1975
    sky, Jacobs 1978 cloud). NaN where a night is out of domain. tests/physics/test_cooling.py
    compares it with the scalar path."""
    n = len(t0_c)
    out = np.full(n, math.nan)
    with np.errstate(all="ignore"):
        vp = np.asarray(saturation.vapour_pressure_hpa_from_dew_point(np.asarray(td_c, dtype=float)), dtype=float)
        vp_sat = np.asarray(saturation.vapour_pressure_hpa_from_dew_point(np.asarray(t0_c, dtype=float)), dtype=float)
    todo = []
    for i in range(n):
        t0, td, h, u, c, p = (float(t0_c[i]), float(td_c[i]), float(hours[i]), float(wind_m_s[i]), float(cloud_frac[i]),
                              float(pressure_hpa[i]))
        if not (math.isfinite(h) and 0.0 < h <= 24.0) or not all(math.isfinite(v) for v in (t0, td, u, c, p)):
            continue
        if not (AIR_TEMP_MIN_C <= td and AIR_TEMP_MIN_C <= t0 <= AIR_TEMP_MAX_C and u >= 0.0 and 0.0 <= c <= 1.0
                and neb.PRESSURE_MIN_HPA <= p <= neb.PRESSURE_MAX_HPA):
            continue
        vp0 = math.nan if vp[i] > neb.SUPERSATURATION_MAX_FRAC * vp_sat[i] else min(float(vp[i]), float(vp_sat[i]))
        if math.isfinite(vp0):
            todo.append((i, t0, h, u, c, p, vp0))
    deeper = _step_together(todo, FIRST_SPAN_K, out)
    _step_together(deeper, neb.PROJECTION_GRID_SPAN_K, out)
    return out


def _step_together(nights: list[tuple], span_k: float, out: np.ndarray) -> list[tuple]:
    """Step `nights` ((index, t0, hours, wind, cloud, pressure, vapour pressure at t0), in domain)
    on their loss curves tabulated `span_k` below t0, writing each night's minimum to `out`;
    returns the nights whose air left that part of the curve (none once it is the whole span)."""
    if not nights:
        return []
    mu = GROUND_ADMITTANCE_DEFAULT_J_M2_K_S05 + AIR_ADMITTANCE_EFFECTIVE_J_M2_K_S05
    step_k = neb.PROJECTION_GRID_STEP_K
    whole = span_k >= neb.PROJECTION_GRID_SPAN_K
    rows, grids, vps, clouds = [], [], [], []
    offset = 0
    for i, t0, h, u, c, p, vp0 in nights:
        top_i = math.ceil(t0 / step_k) + 1
        bottom_i = math.ceil(max(AIR_TEMP_MIN_C, t0 - neb.PROJECTION_GRID_SPAN_K) / step_k)
        full_last = top_i - bottom_i  # the whole curve's last index, as `_project_path_c` has it
        if not whole:
            bottom_i = max(bottom_i, math.ceil((t0 - span_k) / step_k))
        grid = np.arange(top_i, bottom_i - 1, -1) * step_k
        rho_cp = p * 100.0 / (neb.R_DRY_AIR_J_KG_K * (t0 + ZERO_CELSIUS_K)) * neb.CP_DRY_AIR_J_KG_K
        ri_per_k = GRAVITY_M_S2 * ANEMOMETER_HEIGHT_M / ((t0 + ZERO_CELSIUS_K) * u**2) if u > 1e-6 else 0.0
        steps = math.ceil(h * SECONDS_PER_HOUR_S / STEP_S - 1e-9)
        # the index a path may reach here and still use this part of the curve as the whole one
        reach = full_last if len(grid) - 1 == full_last else len(grid) - 2
        rows.append((i, steps, h * SECONDS_PER_HOUR_S, top_i * step_k, offset, full_last, reach,
                     ri_per_k, rho_cp * NEUTRAL_TRANSFER_COEFF_FRAC * u, t0))
        grids.append(grid)
        vps.append(vp0)
        clouds.append(c)
        offset += len(grid)
    sizes = [len(g) for g in grids]
    grid_c = np.concatenate(grids)
    grid_vp = np.minimum(np.repeat(vps, sizes), neb._saturation_vp_hpa(grid_c))
    loss = -np.asarray(net_longwave_w_m2(grid_c, grid_vp, np.repeat(clouds, sizes), grid_c, SURFACE_EMISSIVITY_DEFAULT_FRAC,
                                         "brutsaert_1975", "jacobs_1978"), dtype=float)
    idx, steps, end_s, top_c, off, last, reach, ri_per_k, k_neutral, temp = (
        np.array(col) for col in zip(*rows, strict=True))
    aloft = temp.copy()
    lowest = temp.copy()
    nan = np.zeros(len(idx), dtype=bool)
    left = np.zeros(len(idx), dtype=bool)  # left the tabulated part (stepped again on the whole curve)
    root_prev = np.zeros(len(idx))  # sqrt(onset): no earlier onset
    with np.errstate(all="ignore"):
        for k in range(1, int(steps.max()) + 1):
            on = (steps >= k) & ~nan & ~left
            if not on.any():
                break
            root = np.sqrt(np.minimum(k * STEP_S, end_s))
            ds = 2.0 / SQRT_PI * (root - root_prev)
            root_prev = root
            x = (top_c - temp) / step_k
            inside = (x >= 0.0) & (x <= last)
            left |= on & inside & (x > reach)
            on &= ~left
            j = np.where(last > 0, np.minimum(np.where(inside & on, x, 0.0).astype(np.int64), last - 1), 0)
            f = x - j
            lq = loss[off + j] * (1.0 - f) + loss[off + np.minimum(j + 1, last)] * f
            ri = ri_per_k * np.maximum(0.0, aloft - temp)
            k_mix = k_neutral / (1.0 + 3.0 * LOUIS_B * ri * np.sqrt(1.0 + LOUIS_D * ri))
            a = ds / mu
            stepped = (temp - a * lq + a * k_mix * aloft) / (1.0 + a * k_mix)
            nan |= on & ~(inside & np.isfinite(lq))
            temp = np.where(on, stepped, temp)
            lowest = np.where(on & ~nan, np.minimum(lowest, temp), lowest)
    done = ~left
    out[idx[done]] = np.where(nan[done], math.nan, lowest[done])
    return [nights[r] for r in np.nonzero(left)[0].tolist()]
