"""Night cooling: Brunt's conduction law, Reuter's square-root trend, an energy-balance projection.

Pure numpy and Python floats, no I/O, no clock. Temperatures in degC, elapsed time
in hours at the interface (seconds inside the conduction formula), fluxes in W m-2
with a *loss* counted positive where a name says ``loss``. Out-of-domain inputs give
NaN; structural mistakes (a negative night length, a zero time step) raise ValueError.
"""

from __future__ import annotations

import math
import numbers

import numpy as np

from frostwatch.physics.radiation import (
    AIR_TEMP_MAX_C,
    AIR_TEMP_MIN_C,
    SUPERSATURATION_MAX_FRAC,
    SURFACE_EMISSIVITY_DEFAULT_FRAC,
    net_longwave_w_m2,
)

SQRT_PI = math.sqrt(math.pi)  # [-]
SECONDS_PER_HOUR_S = 3600.0  # [s]

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

# Effective admittance of the cooling air layer above the crop, rho c_p sqrt(K_eff).
# The one free constant of the projection. Tuned by a grid search over 500..6000 in steps
# of 10, minimising the MAE of the calm, clear prior (clear_night_minimum_prior_c) on the
# FAO-FP Ch. 5 ten-night sample (reference sheet 1.1), taking 12 h from t0 to sunrise:
# optimum 1680 (MAE 1.060 degC, bias -0.22), rounded to 1700 (MAE 1.066 degC, bias -0.17;
# 1.19 at 1500, 1.16 at 1900). Not a measured quantity: it lumps the deepening nocturnal
# inversion into one number (rho c_p sqrt(K_eff) with K_eff about 1.8 m2 s-1). Tuned with the latent heat of the
# deposit left out of the layer's capacity (see `project_night_energy_balance`, Notes); the
# earlier form with it was tuned to 1600 (MAE 1.249 degC).
AIR_ADMITTANCE_EFFECTIVE_J_M2_K_S05 = 1700.0

# Heat brought down by wind from the air aloft: H = rho c_p C_H u (T_aloft - T), with the
# neutral transfer coefficient of the log law, C_Hn = (k / ln(z / z0))^2, at the anemometer's
# height z = 10 m (WMO standard exposure) over an orchard floor of roughness z0 = 0.1 m (about a
# tenth of the height of short crops and grass between rows: common practice), reduced by the
# stability of the growing inversion with Louis's function of the bulk Richardson number
# (`stable_transfer_factor`). The earlier fixed C_H = 0.004 ("neutral reduced to a third", from
# memory) held the evening wind's mixing all night: on the clear nights whose 10 m wind was
# 2-3 m/s at dusk and then calmed, the prior stopped cooling halfway.
VON_KARMAN = 0.4  # [-] von Karman constant (common value)
ANEMOMETER_HEIGHT_M = 10.0  # [m] WMO standard exposure of wind sensors
ROUGHNESS_LENGTH_M = 0.1  # [m] orchard floor, short crops (common practice; engineering choice)
NEUTRAL_TRANSFER_COEFF_FRAC = (VON_KARMAN / math.log(ANEMOMETER_HEIGHT_M / ROUGHNESS_LENGTH_M)) ** 2
GRAVITY_M_S2 = 9.80665  # [m s-2] standard gravity (CGPM 1901)
LOUIS_B = 5.0  # [-] Louis (1979) stable-side constants b = d = 5
LOUIS_D = 5.0  # [-]

CP_DRY_AIR_J_KG_K = 1005.0  # [J kg-1 K-1] common value near 0 degC (from memory)
R_DRY_AIR_J_KG_K = 287.05  # [J kg-1 K-1] specific gas constant of dry air
# Magnus coefficients, WMO-No. 8 (CIMO Guide) Annex 4.B: over water -45..60 degC,
# over ice -65..0.01 degC (reference sheet, section 10).
MAGNUS_E0_HPA = 6.112  # [hPa]
MAGNUS_WATER_B = 17.62  # [-]
MAGNUS_WATER_C_C = 243.12  # [degC]
MAGNUS_ICE_B = 22.46  # [-]
MAGNUS_ICE_C_C = 272.62  # [degC]
ZERO_CELSIUS_K = 273.15  # [K]

PRESSURE_MIN_HPA = 500.0  # [hPa] about 5.5 km altitude; lower is a units error here
PRESSURE_MAX_HPA = 1100.0  # [hPa]
PROJECTION_GRID_STEP_K = 0.05  # [K] spacing of the tabulated net-loss curve
PROJECTION_GRID_SPAN_K = 40.0  # [K] deepest cooling tabulated below the start temperature


def _out(x):
    x = np.asarray(x, dtype=float)
    return float(x) if x.ndim == 0 else x


# ------------------------------------------------------------------------------------------
# Brunt (1941) and Reuter's square-root trend
# ------------------------------------------------------------------------------------------


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


def _saturation_vp_hpa(temp_c):
    """Saturation vapour pressure over water (>= 0 degC) or ice (< 0 degC), Magnus (WMO)."""
    t = np.asarray(temp_c, dtype=float)
    water = MAGNUS_E0_HPA * np.exp(MAGNUS_WATER_B * t / (MAGNUS_WATER_C_C + t))
    ice = MAGNUS_E0_HPA * np.exp(MAGNUS_ICE_B * t / (MAGNUS_ICE_C_C + t))
    return np.where(t >= 0.0, water, ice)


def _vp_from_dew_point_hpa(dew_point_c):
    return MAGNUS_E0_HPA * math.exp(MAGNUS_WATER_B * dew_point_c / (MAGNUS_WATER_C_C + dew_point_c))


def _start_vp_hpa(start_temp_c, dew_point_c):
    """Start vapour pressure, capped at saturation; NaN above 105 % RH (caller checks ranges)."""
    vp_hpa = _vp_from_dew_point_hpa(dew_point_c)
    vp_sat_hpa = _vp_from_dew_point_hpa(start_temp_c)
    if vp_hpa > SUPERSATURATION_MAX_FRAC * vp_sat_hpa:
        return math.nan
    return min(vp_hpa, vp_sat_hpa)


def _dew_point_from_vp_c(vapour_pressure_hpa):
    g = np.log(np.asarray(vapour_pressure_hpa, dtype=float) / MAGNUS_E0_HPA)
    return MAGNUS_WATER_C_C * g / (MAGNUS_WATER_B - g)


def stable_transfer_factor(richardson_frac):
    """Louis's stability factor on the heat transfer coefficient, stable side.

    Parameters
    ----------
    richardson_frac : float or array_like
        Bulk Richardson number of the layer [-]; values <= 0 (neutral or unstable) give 1.

    Returns
    -------
    float or ndarray
        ``C_H / C_Hn = 1 / (1 + 3 b Ri sqrt(1 + d Ri))`` with b = d = 5 [-], in (0, 1].

    Notes
    -----
    No critical Richardson number: the transfer falls smoothly as the inversion strengthens
    (0.5 at Ri of about 0.06, 0.14 at 0.27), so a light wind over a strong inversion is nearly
    decoupled from the air aloft, as on calm radiation nights. Check: Ri = 0.1 gives
    1 / (1 + 1.5 sqrt(1.5)) = 0.3525.

    References
    ----------
    Louis, J.-F. (1979). A parametric model of vertical eddy fluxes in the atmosphere.
    Boundary-Layer Meteorology 17: 187-202 (stable-side form as used operationally by Louis,
    Tiedtke & Geleyn 1982, ECMWF Workshop on Planetary Boundary Layer Parameterization; read in a
    public model's documentation quoting it).
    """
    ri = np.maximum(np.asarray(richardson_frac, dtype=float), 0.0)
    return _out(1.0 / (1.0 + 3.0 * LOUIS_B * ri * np.sqrt(1.0 + LOUIS_D * ri)))


def bulk_richardson_frac(aloft_minus_air_k, air_temp_c, wind_speed_m_s, layer_depth_m=ANEMOMETER_HEIGHT_M):
    """Bulk Richardson number of the layer from crop height to the anemometer.

    ``Ri_b = g dz (T_aloft - T) / (T_K u^2)`` (positive over an inversion); NaN for calm air
    (the caller treats no wind as no transfer).

    References
    ----------
    Stull, R.B. (1988). An Introduction to Boundary Layer Meteorology, Kluwer, sec. 5.6.3 (bulk
    Richardson number; from memory).
    """
    dt_k = np.asarray(aloft_minus_air_k, dtype=float)
    t_k = np.asarray(air_temp_c, dtype=float) + ZERO_CELSIUS_K
    u = np.asarray(wind_speed_m_s, dtype=float)
    with np.errstate(all="ignore"):
        ri = GRAVITY_M_S2 * layer_depth_m * dt_k / (t_k * u * u)
    return _out(np.where(u > 0.0, ri, np.nan))


def _check_structure(hours, step_s):
    if not (isinstance(hours, numbers.Real) and math.isfinite(hours) and 0.0 < hours <= 24.0):
        raise ValueError(f"hours is {hours!r}; expected a night length in hours, 0 < hours <= 24")
    if not (isinstance(step_s, numbers.Real) and math.isfinite(step_s) and 1.0 <= step_s <= 3600.0):
        raise ValueError(f"step_s is {step_s!r}; expected a time step of 1 to 3600 s")


def _project_path_c(
    start_temp_c,
    dew_point_c,
    hours,
    step_s,
    wind_speed_m_s,
    cloud_frac,
    pressure_hpa,
    thermal_admittance_j_m2_k_s05,
    air_admittance_j_m2_k_s05,
    aloft_temp_c,
    onset_h_before_start,
    surface_emissivity,
    model,
    cloud_model,
):
    """Scalar kernel: (elapsed_s, air_temp_c) arrays, NaN temperatures when out of domain."""
    n_steps = math.ceil(hours * SECONDS_PER_HOUR_S / step_s - 1e-9)
    elapsed_s = np.minimum(np.arange(n_steps + 1) * float(step_s), hours * SECONDS_PER_HOUR_S)
    temps = np.full(n_steps + 1, math.nan)
    if aloft_temp_c is None:
        aloft_temp_c = start_temp_c
    values = (
        start_temp_c,
        dew_point_c,
        wind_speed_m_s,
        cloud_frac,
        pressure_hpa,
        thermal_admittance_j_m2_k_s05,
        air_admittance_j_m2_k_s05,
        aloft_temp_c,
        onset_h_before_start,
    )
    if not all(math.isfinite(v) for v in values):
        return elapsed_s, temps
    if not (
        AIR_TEMP_MIN_C <= dew_point_c
        and AIR_TEMP_MIN_C <= start_temp_c <= AIR_TEMP_MAX_C
        and wind_speed_m_s >= 0.0
        and 0.0 <= cloud_frac <= 1.0
        and PRESSURE_MIN_HPA <= pressure_hpa <= PRESSURE_MAX_HPA
        and thermal_admittance_j_m2_k_s05 > 0.0
        and air_admittance_j_m2_k_s05 >= 0.0
        and onset_h_before_start >= 0.0
    ):
        return elapsed_s, temps
    # A hygrometer reading up to 105 % RH (radiation.SUPERSATURATION_MAX_FRAC) is taken as
    # saturated air; anything above is out of domain.
    vp0_hpa = _start_vp_hpa(start_temp_c, dew_point_c)
    if not math.isfinite(vp0_hpa):
        return elapsed_s, temps

    # Net radiative loss tabulated against temperature along the path. Below saturation the
    # vapour pressure follows the saturation curve, so the loss is a function of T alone.
    # The grid sits on fixed multiples of the spacing, so two nights interpolate the same curve.
    top_i = math.ceil(max(start_temp_c, aloft_temp_c) / PROJECTION_GRID_STEP_K) + 1
    bottom_i = math.ceil(max(AIR_TEMP_MIN_C, start_temp_c - PROJECTION_GRID_SPAN_K) / PROJECTION_GRID_STEP_K)
    grid_top_c = top_i * PROJECTION_GRID_STEP_K
    grid_c = np.arange(top_i, bottom_i - 1, -1) * PROJECTION_GRID_STEP_K
    grid_vp = np.minimum(vp0_hpa, _saturation_vp_hpa(grid_c))
    loss = -np.asarray(
        net_longwave_w_m2(grid_c, grid_vp, cloud_frac, grid_c, surface_emissivity, model, cloud_model),
        dtype=float,
    )
    loss_list = loss.tolist()
    last = len(loss_list) - 1

    def loss_at(temp_c):
        x = (grid_top_c - temp_c) / PROJECTION_GRID_STEP_K
        if not (0.0 <= x <= last):
            return math.nan
        i = min(int(x), last - 1) if last > 0 else 0
        f = x - i
        return loss_list[i] * (1.0 - f) + loss_list[min(i + 1, last)] * f

    rho_cp = pressure_hpa * 100.0 / (R_DRY_AIR_J_KG_K * (aloft_temp_c + ZERO_CELSIUS_K)) * CP_DRY_AIR_J_KG_K
    k_neutral = rho_cp * NEUTRAL_TRANSFER_COEFF_FRAC * wind_speed_m_s  # [W m-2 K-1]
    ri_per_k = (
        GRAVITY_M_S2 * ANEMOMETER_HEIGHT_M / ((aloft_temp_c + ZERO_CELSIUS_K) * wind_speed_m_s**2)
        if wind_speed_m_s > 1e-6 else 0.0
    )  # bulk Richardson number per kelvin of inversion
    mu = thermal_admittance_j_m2_k_s05 + air_admittance_j_m2_k_s05
    onset_s = onset_h_before_start * SECONDS_PER_HOUR_S

    temp = start_temp_c
    temps[0] = temp
    root_prev = math.sqrt(onset_s)
    for n in range(1, n_steps + 1):
        root = math.sqrt(onset_s + elapsed_s[n])
        ds = 2.0 / SQRT_PI * (root - root_prev)  # [s^0.5] Brunt's sqrt(t) clock
        root_prev = root
        lq = loss_at(temp)
        if not math.isfinite(lq):
            temp = math.nan
        else:
            # the mixing coefficient from the inversion at the start of the step (Louis), the
            # mixed-in heat implicit in the temperature
            ri = ri_per_k * max(0.0, aloft_temp_c - temp)
            k_mix = k_neutral / (1.0 + 3.0 * LOUIS_B * ri * math.sqrt(1.0 + LOUIS_D * ri))
            a = ds / mu
            temp = (temp - a * lq + a * k_mix * aloft_temp_c) / (1.0 + a * k_mix)
        temps[n] = temp
    return elapsed_s, temps


def project_night_energy_balance(
    start_temp_c,
    dew_point_c,
    hours,
    step_s=300.0,
    wind_speed_m_s=0.0,
    cloud_frac=0.0,
    pressure_hpa=1013.25,
    thermal_admittance_j_m2_k_s05=GROUND_ADMITTANCE_DEFAULT_J_M2_K_S05,
    air_admittance_j_m2_k_s05=AIR_ADMITTANCE_EFFECTIVE_J_M2_K_S05,
    aloft_temp_c=None,
    onset_h_before_start=0.0,
    surface_emissivity=SURFACE_EMISSIVITY_DEFAULT_FRAC,
    model="brutsaert_1975",
    cloud_model="jacobs_1978",
):
    """Project crop-height air temperature and dew point through a radiation night.

    Parameters
    ----------
    start_temp_c : float
        Crop-height air temperature at the start (t0) [degC].
    dew_point_c : float
        Dew point over water at the start [degC], <= start_temp_c; a reading up
        to 105 % RH is taken as saturated air, a higher one gives NaN.
    hours : float
        Length of the projection [h], 0 < hours <= 24 (usually to sunrise).
    step_s : float
        Time step [s]; default 300.
    wind_speed_m_s : float
        Mean wind speed, held over the night [m s-1], >= 0.
    cloud_frac : float
        Cloud fraction, held over the night [-], 0..1.
    pressure_hpa : float
        Station pressure [hPa], 500..1100.
    thermal_admittance_j_m2_k_s05 : float
        Ground thermal admittance [J m-2 K-1 s-1/2]; see
        ``THERMAL_ADMITTANCE_J_M2_K_S05``. Default 1200 (moist mineral soil).
    air_admittance_j_m2_k_s05 : float
        Effective admittance of the cooling air layer [J m-2 K-1 s-1/2]; default
        the tuned ``AIR_ADMITTANCE_EFFECTIVE_J_M2_K_S05``.
    aloft_temp_c : float, optional
        Temperature of the air above the inversion that wind mixes down [degC];
        default the start temperature. Held constant. Below the start temperature
        (no inversion) more wind cools, as it should, and the wind invariant
        below no longer applies.
    onset_h_before_start : float
        Hours of cooling already elapsed at the start [h] (Brunt's clock starts at
        the onset of net loss, about sunset); default 0, the convention of the
        FAO-FP trend, whose clock starts at t0.
    surface_emissivity : float
        Emissivity of the radiating surface [-].
    model, cloud_model : str
        Clear-sky emissivity and cloud-correction names (see ``radiation``).

    Returns
    -------
    tuple of ndarray
        ``(elapsed_h, air_temp_c, dew_point_c)``, each of length
        ``ceil(hours * 3600 / step_s) + 1`` starting at 0. Temperatures are NaN
        throughout for out-of-domain inputs, and from the point where the path
        leaves the tabulated range (40 K of cooling or -45 degC).

    Raises
    ------
    ValueError
        For a night length or a time step that is not a sensible number.

    Notes
    -----
    One effective surface-air medium, stepped in Brunt's square-root clock
    ``S = 2 sqrt(t) / sqrt(pi)`` so that a constant loss gives Brunt's law exactly:

    ``dT = -(Ln(T) - H(T)) dS / mu``, ``mu = mu_ground + mu_air``

    - ``Ln``: net longwave loss with the radiating surface at air temperature,
      ``eps_s (1 - eps_a) sigma T^4`` (``radiation.net_longwave_w_m2``).
    - ``H = rho c_p C_H u (T_aloft - T)``: wind mixing of warmer air from aloft, with
      the log-law neutral coefficient at 10 m (``NEUTRAL_TRANSFER_COEFF_FRAC``, about
      0.0075) times Louis's stable-side factor of the bulk Richardson number of the
      inversion (``stable_transfer_factor``): the evening wind mixes while the
      inversion is weak and decouples as it strengthens. Taken implicitly in each step.
    - Once the air reaches its dew or frost point its vapour pressure follows the
      saturation curve down and the dew point falls with the air. The latent heat of
      the deposit is *not* added to the layer's heat capacity: the deposit forms on
      the surfaces and in the lowest air, a small share of the cooling layer, and
      with the whole layer's capacity raised by ``1 + (L/c_p) dq_s/dT`` the model
      under-cooled humid clear nights (pvlib's Greensboro TMY3 clear calm nights by
      +1.5 K on average) and fitted the FAO-FP sample worse (MAE 1.25 against 1.06
      degC). FAO-FP ch. 2 says dew formation slows the fall; here it is left to the
      site calibration.
    - Constant wind, cloud and aloft temperature; no advection, fog or drainage.

    The local form ignores the memory of a varying flux in the conduction
    solution (exact only for a constant loss). The one-step map is monotone in
    the temperature for these step sizes, which keeps the projection monotone: a
    clearer sky, a lower dew point, less wind or a colder start never give a
    warmer minimum. Valid for radiation nights (clear to partly cloudy, wind below
    about 2.5 m s-1).

    References
    ----------
    Brunt, D. (1941). Physical and Dynamical Meteorology, 2nd ed. (from memory).
    Snyder, R.L. & de Melo-Abreu, J.P. (2005). Frost Protection, Vol. 1, FAO,
    ch. 2 (energy balance; dew deposition slows the fall) and ch. 5.
    Oke, T.R. (1987). Boundary Layer Climates, 2nd ed., Table 2.1.
    Louis, J.-F. (1979). Boundary-Layer Meteorology 17: 187-202.
    """
    _check_structure(hours, step_s)
    elapsed_s, temps = _project_path_c(
        float(start_temp_c),
        float(dew_point_c),
        float(hours),
        float(step_s),
        float(wind_speed_m_s),
        float(cloud_frac),
        float(pressure_hpa),
        float(thermal_admittance_j_m2_k_s05),
        float(air_admittance_j_m2_k_s05),
        None if aloft_temp_c is None else float(aloft_temp_c),
        float(onset_h_before_start),
        surface_emissivity,
        model,
        cloud_model,
    )
    if np.isnan(temps).all():
        return elapsed_s / SECONDS_PER_HOUR_S, temps, temps.copy()
    vp0_hpa = _start_vp_hpa(float(start_temp_c), float(dew_point_c))
    with np.errstate(all="ignore"):
        vp = np.minimum(vp0_hpa, _saturation_vp_hpa(temps))
        dew = np.where(np.isfinite(temps), _dew_point_from_vp_c(vp), np.nan)
    return elapsed_s / SECONDS_PER_HOUR_S, temps, dew


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
