"""Square-root-of-time cooling: Brunt's conduction law, the FAO-FP (Reuter) trend and its fit.

Pure numpy and Python floats, no I/O, no clock. Temperatures in degC, elapsed time in hours at
the interface (seconds inside the conduction formula), fluxes in W m-2 with a *loss* counted
positive where a name says ``loss``. Out-of-domain inputs give NaN.
"""

from __future__ import annotations

import math

import numpy as np

from frostwatch.physics._broadcast import _out

SQRT_PI = math.sqrt(math.pi)  # [-]

# Thermal admittance mu = sqrt(k rho c) of natural surfaces [J m-2 K-1 s-1/2].
# Oke, T.R. (1987). Boundary Layer Climates, 2nd ed., Table 2.1 (values from memory;
# verify against the table before relying on them).
THERMAL_ADMITTANCE_J_M2_K_S05: dict[str, float] = {
    "dry_sandy_soil": 600.0,
    "saturated_sandy_soil": 2550.0,
    "dry_clay": 600.0,
    "saturated_clay": 2200.0,
    "dry_peat": 190.0,
    "fresh_snow": 130.0,
    "still_water": 1545.0,
}
# Moist mineral orchard floor, between Oke's dry and saturated soils (engineering choice;
# the same value as the Brunt check of the reference sheet, section 1.3).
GROUND_ADMITTANCE_DEFAULT_J_M2_K_S05 = 1200.0


def surface_cooling_k_brunt_1941(net_loss_w_m2, thermal_admittance_j_m2_k_s05, elapsed_s):
    """Surface cooling of a semi-infinite medium under a constant net loss (Brunt 1941).

    Parameters
    ----------
    net_loss_w_m2 : float or array_like
        Constant net radiative loss, positive for a loss [W m-2].
    thermal_admittance_j_m2_k_s05 : float or array_like
        Thermal admittance ``mu = sqrt(k rho c)`` of the medium [J m-2 K-1 s-1/2].
    elapsed_s : float or array_like
        Time since the loss began [s].

    Returns
    -------
    float or ndarray
        Surface temperature fall ``T0 - Ts(t)`` [K]; NaN for mu <= 0 or t < 0.

    Notes
    -----
    ``T0 - Ts = 2 Rn sqrt(t) / (sqrt(pi) mu)``: the heat-conduction solution for a
    constant surface flux into a semi-infinite uniform medium, the physical basis
    of the square-root-of-time cooling law. Check: 80 W m-2, mu = 1200, 10 h gives
    14.3 K. It is the surface (soil) fall; screen-height air cools less.

    References
    ----------
    Brunt, D. (1941). Physical and Dynamical Meteorology, 2nd ed., Cambridge
    University Press (from memory).
    Carslaw, H.S. & Jaeger, J.C. (1959). Conduction of Heat in Solids, 2nd ed.,
    section 2.9 (constant flux at the surface; from memory).
    """
    rn = np.asarray(net_loss_w_m2, dtype=float)
    mu = np.asarray(thermal_admittance_j_m2_k_s05, dtype=float)
    t = np.asarray(elapsed_s, dtype=float)
    ok = np.isfinite(rn) & np.isfinite(mu) & (mu > 0.0) & np.isfinite(t) & (t >= 0.0)
    with np.errstate(all="ignore"):
        dt_k = 2.0 * rn * np.sqrt(t) / (SQRT_PI * mu)
    return _out(np.where(ok, dt_k, np.nan))


def reuter_coefficient_c_per_sqrt_h(t0_temp_c, predicted_min_c, hours_to_sunrise):
    """Coefficient b' of the FAO-FP square-root trend, ``(Tp - T0) / sqrt(h)``.

    Parameters
    ----------
    t0_temp_c : float or array_like
        Air temperature at t0, 2 h after sunset [degC].
    predicted_min_c : float or array_like
        Predicted minimum at sunrise [degC].
    hours_to_sunrise : float or array_like
        Hours from t0 to sunrise [h], > 0.

    Returns
    -------
    float or ndarray
        b' [degC h-1/2] (negative on a cooling night); NaN for h <= 0.

    References
    ----------
    Snyder, R.L. & de Melo-Abreu, J.P. (2005). Frost Protection: fundamentals,
    practice and economics, Vol. 1, FAO, Ch. 5 (on-farm minimum model, step 2).
    Reuter, H. (1951). Forecasting minimum temperatures. Tellus 3: 141-147.
    """
    t0 = np.asarray(t0_temp_c, dtype=float)
    tp = np.asarray(predicted_min_c, dtype=float)
    h = np.asarray(hours_to_sunrise, dtype=float)
    with np.errstate(all="ignore"):
        coeff = (tp - t0) / np.sqrt(h)
    return _out(np.where(np.isfinite(h) & (h > 0.0), coeff, np.nan))


def reuter_sqrt_trend_c(t0_temp_c, predicted_min_c, elapsed_h, hours_to_sunrise):
    """Temperature trend from t0 to sunrise, ``T(t) = T0 + b' sqrt(t - t0)``.

    Parameters
    ----------
    t0_temp_c : float or array_like
        Air temperature at t0, 2 h after sunset [degC].
    predicted_min_c : float or array_like
        Predicted minimum at sunrise [degC].
    elapsed_h : float or array_like
        Hours since t0 [h], 0..hours_to_sunrise.
    hours_to_sunrise : float or array_like
        Hours from t0 to sunrise [h], > 0.

    Returns
    -------
    float or ndarray
        Trend temperature [degC]; NaN before t0 or after sunrise (no extrapolation).

    Notes
    -----
    ``b' = (Tp - T0) / sqrt(h)``, so the curve passes through T0 at t0 and Tp at
    sunrise. Check B of the reference sheet: T0 = 0.95, Tp = -5.45, h = 13 h gives
    -0.83 after one hour.

    References
    ----------
    Snyder, R.L. & de Melo-Abreu, J.P. (2005). Frost Protection, Vol. 1, FAO, Ch. 5.
    Reuter, H. (1951). Tellus 3: 141-147.
    """
    t0 = np.asarray(t0_temp_c, dtype=float)
    coeff = np.asarray(reuter_coefficient_c_per_sqrt_h(t0_temp_c, predicted_min_c, hours_to_sunrise))
    t = np.asarray(elapsed_h, dtype=float)
    h = np.asarray(hours_to_sunrise, dtype=float)
    ok = np.isfinite(t) & (t >= 0.0) & (t <= h)
    with np.errstate(all="ignore"):
        temp = t0 + coeff * np.sqrt(t)
    return _out(np.where(ok, temp, np.nan))


def crossing_elapsed_h(t0_temp_c, coeff_c_per_sqrt_h, threshold_c):
    """Hours after t0 at which ``T0 + b' sqrt(t)`` reaches a threshold.

    Parameters
    ----------
    t0_temp_c : float or array_like
        Air temperature at t0 [degC].
    coeff_c_per_sqrt_h : float or array_like
        Trend coefficient b' [degC h-1/2].
    threshold_c : float or array_like
        Threshold temperature, e.g. a critical bud temperature [degC].

    Returns
    -------
    float or ndarray
        Elapsed time [h]: 0 when the threshold is at or above T0, NaN when the
        curve never reaches it (b' >= 0 with the threshold below T0).

    Notes
    -----
    Inverse of the trend: ``t = ((Tc - T0) / b')^2`` for Tc < T0 and b' < 0. The
    caller compares the result with the hours left to sunrise.

    References
    ----------
    Snyder, R.L. & de Melo-Abreu, J.P. (2005). Frost Protection, Vol. 1, FAO, Ch. 5.
    """
    t0 = np.asarray(t0_temp_c, dtype=float)
    b = np.asarray(coeff_c_per_sqrt_h, dtype=float)
    tc = np.asarray(threshold_c, dtype=float)
    with np.errstate(all="ignore"):
        t_h = ((tc - t0) / b) ** 2
    finite = np.isfinite(t0) & np.isfinite(b) & np.isfinite(tc)
    result = np.where(tc >= t0, 0.0, np.where(b < 0.0, t_h, np.nan))
    return _out(np.where(finite, result, np.nan))


def fit_sqrt_cooling(elapsed_h, temps_c, recent_half_life_h=None):
    """Least-squares fit of ``T = a + b sqrt(t)`` to observed night temperatures.

    Parameters
    ----------
    elapsed_h : array_like
        Hours since the reference time (t0) of each reading [h], >= 0.
    temps_c : array_like
        Observed air temperatures [degC], same length.
    recent_half_life_h : float, optional
        If given, weight each point by ``0.5 ** ((t_last - t) / half_life)`` so the
        fit follows the latest readings (useful for a rolling nowcast) [h].

    Returns
    -------
    tuple of float
        ``(a_c, b_c_per_sqrt_h, residual_std_c)``: intercept [degC], slope
        [degC h-1/2] and the residual standard deviation [degC]. All NaN with
        fewer than two usable points or a single distinct time; the residual
        standard deviation is NaN with exactly two.

    Notes
    -----
    Points with non-finite values or negative times are dropped. The residual
    standard deviation is ``sqrt(sum(w r^2) / sum(w) * n / (n - 2))``, which is
    the ordinary ``sqrt(SSR / (n - 2))`` when all weights are 1.

    References
    ----------
    Reuter, H. (1951). Tellus 3: 141-147 (the square-root law).
    Savage, M.J. (2015). Int. J. Biometeorol., doi:10.1007/s00484-015-1017-7
    (square-root nowcasts of the night minimum).
    """
    t = np.asarray(elapsed_h, dtype=float).ravel()
    y = np.asarray(temps_c, dtype=float).ravel()
    if t.shape != y.shape:
        raise ValueError(f"elapsed_h has {t.size} values but temps_c has {y.size}; expected equal lengths")
    keep = np.isfinite(t) & np.isfinite(y) & (t >= 0.0)
    t, y = t[keep], y[keep]
    nan3 = (math.nan, math.nan, math.nan)
    if t.size < 2 or np.ptp(t) == 0.0:
        return nan3
    if recent_half_life_h is None:
        w = np.ones_like(t)
    else:
        if not (recent_half_life_h > 0.0):
            raise ValueError(
                f"recent_half_life_h is {recent_half_life_h}; expected a positive number of hours"
            )
        w = 0.5 ** ((t.max() - t) / recent_half_life_h)
    x = np.sqrt(t)
    sw = np.sqrt(w)
    design = np.column_stack([np.ones_like(x), x]) * sw[:, None]
    (a, b), *_ = np.linalg.lstsq(design, y * sw, rcond=None)
    n = t.size
    if n < 3:
        return float(a), float(b), math.nan
    resid = y - (a + b * x)
    std = math.sqrt(float(np.sum(w * resid**2) / np.sum(w)) * n / (n - 2))
    return float(a), float(b), std


# ------------------------------------------------------------------------------------------
# Energy-balance projection
# ------------------------------------------------------------------------------------------
