#!/usr/bin/env python3
"""Write the bundled demo sensor logs for Cedar Bench Orchard (an invented farm).

Run as ``python sample_sensor_logs/generate.py``; it rewrites the CSV files
next to this script. The output is deterministic: numpy with a fixed seed,
and the standard library ``csv`` module for writing.

Three nights, each file running from 12:00 local time on the evening's date
up to (not including) 12:00 the next day. Together they make one continuous
record from 2027-04-14 12:00 to 2027-04-17 12:00 PDT (UTC-07:00):

* 2027-04-14  clear, calm radiation frost with a strong inversion; wind
              machines in block "east", over-tree sprinklers in block "river".
* 2027-04-15  windy, dry, well-mixed advective cold night; no protection runs.
* 2027-04-16  low overcast, mild; no protection runs.

plus ``broken-rows.csv``, a short log with one of each kind of bad row, and then the scenario
nights of ``scenarios/`` (see "scenario nights" below; a seed of their own).

Times in this script are hours after 12:00 local on the evening's date, so
21.75 is 21:45 and 18.25 is 06:15 the next morning.
"""

import csv
import datetime as dt
from pathlib import Path

import numpy as np

HERE = Path(__file__).resolve().parent
SEED = 20270414
PDT = dt.timezone(dt.timedelta(hours=-7))
HEADER = ["time", "station", "quantity", "value", "unit"]

STEP_T = 2          # minutes between temperature readings
STEP_SLOW = 10      # minutes between humidity, wind, sky and flag readings
N_T = 24 * 60 // STEP_T
T_H = np.arange(N_T) * STEP_T / 60.0        # hours after 12:00, 2-minute grid
SLOW = slice(None, None, STEP_SLOW // STEP_T)  # 10-minute subset of that grid

SUNSET = 7.75       # 19:45 PDT
T0_FROST = 9.75     # sunset + 2 h = 21:45, start of the square-root cooling
SUNRISE = 18.25     # 06:15 PDT


def clock(hhmm):
    """'21:45' -> 9.75, '06:15' -> 18.25 (hours after 12:00 on the evening's date)."""
    h, m = (int(x) for x in hhmm.split(":"))
    hours = h + m / 60.0 - 12.0
    return hours if hours >= 0 else hours + 24.0


# ---------------------------------------------------------------- helpers

def hermite(t, knots):
    """Piecewise cubic Hermite curve through (time, value, slope per hour) knots."""
    ts, ys, ms = (np.array(k, dtype=float) for k in zip(*knots))
    i = np.clip(np.searchsorted(ts, t, side="right") - 1, 0, len(ts) - 2)
    h = ts[i + 1] - ts[i]
    s = np.clip((t - ts[i]) / h, 0.0, 1.0)
    return ((2 * s**3 - 3 * s**2 + 1) * ys[i] + (s**3 - 2 * s**2 + s) * h * ms[i]
            + (-2 * s**3 + 3 * s**2) * ys[i + 1] + (s**3 - s**2) * h * ms[i + 1])


def e_water(t_c):
    """Saturation vapour pressure over water, hPa (Magnus, WMO coefficients)."""
    return 6.112 * np.exp(17.62 * t_c / (243.12 + t_c))


def rel_humidity(t_c, td_c):
    """Relative humidity over water, %, from air temperature and dew point."""
    return 100.0 * e_water(td_c) / e_water(t_c)


def frost_point(td_c):
    """Frost point, degC: ei(Tf) = ew(Td), Magnus over ice (6.112/22.46/272.62)."""
    g = np.log(e_water(td_c) / 6.112)
    return 272.62 * g / (22.46 - g)


def softplus(x, width=1.0):
    return width * np.log1p(np.exp(x / width))


def sigmoid(x):
    return 1.0 / (1.0 + np.exp(-x))


def red_noise(rng, n, sd, phi):
    """AR(1) noise with stationary standard deviation sd and lag-1 correlation phi."""
    shocks = rng.normal(0.0, sd * np.sqrt(1 - phi**2), n)
    out = np.empty(n)
    out[0] = rng.normal(0.0, sd)
    for k in range(1, n):
        out[k] = phi * out[k - 1] + shocks[k]
    return out


def temp_noise(rng, white=0.05, red=0.07, phi=0.85):
    """Sensor noise plus minute-scale turbulent variation, on the 2-minute grid."""
    return rng.normal(0.0, white, N_T) + red_noise(rng, N_T, red, phi)


def ramp_on(t, t_on, tau):
    return np.where(t >= t_on, 1.0 - np.exp(-(t - t_on) / tau), 0.0)


def morning_shape(t, t_start, t_end=24.0):
    """0 at t_start with zero slope, rising fastest 1-3 h after sunrise, 1 at t_end."""
    s = np.clip((t - t_start) / (t_end - t_start), 0.0, 1.0)
    return 0.5 * (1.0 - np.cos(np.pi * s**0.7))


# ------------------------------------------------------ radiation frost night

def frost_dew_point(temp, td0, knee):
    """Night dew point: steady at td0, then falling slowly with the air below `knee`."""
    return td0 - 0.25 * softplus(knee - temp, 0.5)


def cooling_factor(temp, td0, knee):
    """1 while the air is well above the frost point; about 0.4 close to it."""
    gap = temp - frost_point(frost_dew_point(temp, td0, knee))
    return 0.4 + 0.6 * sigmoid((gap - 1.4) / 0.3)


def sqrt_cooling(t, t0, temp0, b, td0, knee):
    """T(t) = T0 + b*sqrt(t - t0), slowed near the frost point.

    Written in u = sqrt(t - t0) the law is dT/du = b, so integrate
    dT/du = b * cooling_factor(T) with RK4 on a fine u grid.
    """
    u_end = np.sqrt(max(t.max() - t0, 0.0)) + 1e-9
    u = np.linspace(0.0, u_end, 1500)
    du = u[1] - u[0]
    temps = np.empty_like(u)
    temps[0] = temp0
    f = lambda x: b * cooling_factor(x, td0, knee)  # noqa: E731
    for k in range(1, len(u)):
        x = temps[k - 1]
        k1 = f(x)
        k2 = f(x + 0.5 * du * k1)
        k3 = f(x + 0.5 * du * k2)
        k4 = f(x + du * k3)
        temps[k] = x + du * (k1 + 2 * k2 + 2 * k3 + k4) / 6.0
    return np.interp(np.sqrt(np.clip(t - t0, 0.0, None)), u, temps), u, temps


def radiation_night(p, b):
    """Undisturbed crop-height air temperature for one station on the frost night."""
    temp = np.empty(N_T)
    day = T_H < T0_FROST
    temp[day] = hermite(T_H[day], [
        (0.0, p["t12"], 1.4), (clock("15:30"), p["tmax"], 0.0),
        (clock("18:30"), p["t1830"], -1.5), (SUNSET, p["tss"], -2.8),
        (T0_FROST, p["t0"], -3.2)])
    night = (T_H >= T0_FROST) & (T_H <= SUNRISE)
    temp[night], u, ut = sqrt_cooling(T_H[night], T0_FROST, p["t0"], b, p["td0"], p["knee"])
    # carry the cooling a little past sunrise, then the morning warming
    t_sr = ut[-1]
    slope_sr = b * cooling_factor(t_sr, p["td0"], p["knee"]) / (2 * u[-1])
    morning = T_H > SUNRISE
    dt_h = T_H[morning] - SUNRISE
    temp[morning] = (t_sr + slope_sr * dt_h * np.exp(-dt_h / 0.25)
                     + (p["tend"] - t_sr) * morning_shape(T_H[morning], SUNRISE))
    return temp


def radiation_dew_point(p, temp):
    td = np.empty(N_T)
    day = T_H < T0_FROST
    td[day] = hermite(T_H[day], [(0.0, -2.0, 0.0), (clock("15:30"), -2.8, -0.2),
                                 (SUNSET, -4.0, -0.4), (T0_FROST, p["td0"], -0.3)])
    night = (T_H >= T0_FROST) & (T_H <= SUNRISE)
    td[night] = frost_dew_point(temp[night], p["td0"], p["knee"])
    td_sr = td[night][-1]
    morning = T_H > SUNRISE
    td[morning] = td_sr + (-2.5 - td_sr) * morning_shape(T_H[morning], SUNRISE)
    return td


def calibrate(p, noise, target):
    """Choose b so the noisy, rounded night minimum equals `target` (bisection)."""
    lo, hi = -6.0, -0.5
    night = T_H >= T0_FROST
    for _ in range(60):
        b = 0.5 * (lo + hi)
        tmin = np.round(radiation_night(p, b) + noise, 2)[night].min()
        if tmin < target:
            lo = b
        else:
            hi = b
    return hi


# ------------------------------------------------------------- CSV writing

class Log:
    """Collects rows; writes them sorted by time."""

    def __init__(self, date):
        self.start = dt.datetime(date.year, date.month, date.day, 12, 0, tzinfo=PDT)
        self.rows = []

    def stamp(self, hours):
        return (self.start + dt.timedelta(minutes=round(hours * 60))).isoformat()

    def add(self, station, quantity, times, values, unit, fmt="{:.2f}"):
        for t, v in zip(times, values):
            self.rows.append((round(t * 60), station, quantity, fmt.format(v), unit))

    def write(self, path):
        self.rows.sort(key=lambda r: (r[0], r[1], r[2]))
        with open(path, "w", newline="") as fh:
            w = csv.writer(fh, lineterminator="\n")
            w.writerow(HEADER)
            for minutes, station, quantity, value, unit in self.rows:
                w.writerow([self.stamp(minutes / 60.0), station, quantity, value, unit])
        return len(self.rows)


def add_flag(log, station, quantity, on_off):
    """A 0/1 flag every 10 minutes; `on_off` is a list of (start, stop) hours."""
    t = T_H[SLOW]
    running = np.zeros_like(t)
    for start, stop in on_off:
        running[(t >= start) & (t < stop)] = 1
    log.add(station, quantity, t, running, "1", fmt="{:.0f}")


def wind_series(rng, profile, sd, lo, hi):
    t = T_H[SLOW]
    w = profile(t) * (1 + red_noise(rng, len(t), sd, 0.6))
    return np.clip(w, lo, hi)


# ------------------------------------------------------------------ nights

def frost_night(rng):
    """2027-04-14: clear, calm radiation frost with a strong inversion."""
    log = Log(dt.date(2027, 4, 14))
    stations = {
        "east-low":  dict(t12=10.8, tmax=14.0, t1830=12.0, tss=9.6, t0=3.0, td0=-5.0,
                          knee=-2.5, tend=8.5, tmin=-4.0),
        "river-low": dict(t12=10.9, tmax=14.1, t1830=12.1, tss=9.8, t0=3.3, td0=-4.6,
                          knee=-2.1, tend=8.6, tmin=-3.4),
        "hill-low":  dict(t12=10.5, tmax=13.7, t1830=11.9, tss=9.9, t0=3.9, td0=-5.6,
                          knee=-3.1, tend=8.3, tmin=-2.4),
    }
    base, noise, dew = {}, {}, {}
    for sid, p in stations.items():
        noise[sid] = temp_noise(rng)
        b = calibrate(p, noise[sid], p["tmin"])
        base[sid] = radiation_night(p, b)
        dew[sid] = radiation_dew_point(p, base[sid])
    t = T_H

    # east: two wind machines 01:40-07:30 mix the warm inversion air down
    fan_on, fan_off = clock("01:40"), clock("07:30")
    gain = np.interp(t, [fan_on, SUNRISE, fan_off], [1.55, 1.4, 1.1])
    fan = ramp_on(t, fan_on, 0.08) * np.where(t < fan_off, 1.0, np.exp(-(t - fan_off) / 0.1))
    east_low = base["east-low"] + gain * fan + noise["east-low"]
    inversion = hermite(t, [
        (0.0, -0.8, 0.0), (clock("19:15"), -0.2, 0.6), (SUNSET, 0.6, 2.0),
        (clock("21:30"), 4.0, 0.8), (clock("01:00"), 5.2, 0.2), (clock("05:00"), 6.0, 0.0),
        (clock("06:30"), 5.2, -1.5), (clock("09:30"), -0.5, -0.4), (24.0, -0.8, 0.0)])
    east_tower = (base["east-low"] + inversion - 0.5 * ramp_on(t, fan_on, 0.15) * (t < fan_off)
                  + temp_noise(rng, white=0.04, red=0.05))

    # river: over-tree sprinklers 00:50-08:10 hold the air near -1 C (latent heat)
    spr_on, spr_off = clock("00:50"), clock("08:10")
    river = base["river-low"]
    level = np.clip(-1.05 + 0.12 * (river + 0.9), -1.35, -1.05)
    held = level + softplus(river - level, 0.3)
    x = np.clip((t - spr_on) / 0.1, 0.0, None)
    dip = -0.25 * x * np.exp(1 - x)              # brief evaporative dip at start-up
    running = river + (held - river) * ramp_on(t, spr_on, 0.12) + dip * (t >= spr_on)
    at_stop = np.interp(spr_off, t, running)
    after = river + (at_stop - river) * np.exp(-(t - spr_off) / 0.25)
    river_air = np.where(t < spr_on, river, np.where(t < spr_off, running, after))
    damp = np.where((t >= spr_on) & (t < spr_off + 0.5), 0.6, 1.0)
    river_low = river_air + damp * noise["river-low"]
    offset_b = 0.4 + 0.07 * np.sin(2 * np.pi * t / 7.0)
    river_low_b = river_air + offset_b + damp * temp_noise(rng)
    wet = (ramp_on(t, spr_on, 0.3) * (t < spr_off)
           + np.where(t >= spr_off, np.exp(-(t - spr_off) / 0.5), 0.0))
    river_dew = dew["river-low"] + (np.minimum(river_air - 0.6, 0.0) - dew["river-low"]).clip(0) * wet
    river_dew = np.minimum(river_dew + rng.normal(0, 0.08, N_T), river_low - 0.3)

    hill_low = base["hill-low"] + noise["hill-low"]

    log.add("east-low", "air_temperature", t, east_low, "degC")
    log.add("east-tower", "air_temperature", t, east_tower, "degC")
    log.add("river-low", "air_temperature", t, river_low, "degC")
    log.add("river-low-b", "air_temperature", t, river_low_b, "degC")
    log.add("hill-low", "air_temperature", t, hill_low, "degC")

    ts = t[SLOW]
    rh_east = rel_humidity(east_low[SLOW], dew["east-low"][SLOW]) + rng.normal(0, 0.6, len(ts))
    rh_hill = rel_humidity(hill_low[SLOW], dew["hill-low"][SLOW]) + rng.normal(0, 0.6, len(ts))
    log.add("east-low", "relative_humidity", ts, np.clip(rh_east, 1, 100), "%", fmt="{:.1f}")
    log.add("hill-low", "relative_humidity", ts, np.clip(rh_hill, 1, 100), "%", fmt="{:.1f}")
    log.add("river-low", "dew_point_temperature", ts, river_dew[SLOW], "degC")

    calm = lambda h: np.interp(h, [0, 5, 8.5, 20, 24], [2.6, 2.2, 0.6, 0.6, 2.0])  # noqa: E731
    for sid in ("east-low", "river-low"):
        w = wind_series(rng, calm, 0.35, 0.3, 3.5)
        night = (ts >= 8.5) & (ts <= 20)
        w[night] = np.clip(w[night], 0.3, 1.0)
        log.add(sid, "wind_speed", ts, w, "m s-1", fmt="{:.1f}")

    depression = np.interp(ts, [0, 7, 10, 18, 24], [27.0, 26.0, 27.5, 27.0, 26.0])
    sky = base["east-low"][SLOW] - depression + red_noise(rng, len(ts), 0.6, 0.7)
    log.add("shed-sky", "surface_temperature", ts, sky, "degC")

    add_flag(log, "east-low", "wind_machine_running", [(fan_on, fan_off)])
    add_flag(log, "river-low", "sprinkler_running", [(spr_on, spr_off)])
    # the same stations as they would have read with no protection running
    summary = {"east-low": base["east-low"] + noise["east-low"],
               "river-low": base["river-low"] + noise["river-low"]}
    return log, summary


def windy_night(rng):
    """2027-04-15: windy, dry, well-mixed advective cold night (north wind)."""
    log = Log(dt.date(2027, 4, 15))
    t = T_H
    air = hermite(t, [(0.0, 8.5, 0.8), (clock("14:00"), 9.3, 0.0), (clock("17:00"), 7.4, -0.9),
                      (SUNSET, 4.0, -0.55), (SUNRISE, -1.4, -0.25), (clock("07:30"), -0.9, 1.2),
                      (24.0, 5.0, 0.6)])
    night = np.interp(t, [0, 7, 9, 19, 21, 24], [0, 0, 1, 1, 0, 0])   # 1 at night, 0 by day
    mixed = lambda: temp_noise(rng, white=0.04, red=0.05, phi=0.6)  # noqa: E731
    east_low = air + mixed()
    river_low = air + 0.1 + mixed()
    river_low_b = air + 0.1 + 0.35 + 0.05 * np.sin(t) + mixed()
    hill_low = air - 0.4 * night - 0.1 + mixed()        # exposed slope: coldest in advection
    east_tower = air + np.interp(t, [0, 6, SUNSET, 19, 21, 24], [-0.8, -0.5, 0.25, 0.25, -0.5, -0.8]) \
        + 0.1 * np.sin(t * 1.3) * night + mixed()
    log.add("east-low", "air_temperature", t, east_low, "degC")
    log.add("east-tower", "air_temperature", t, east_tower, "degC")
    log.add("river-low", "air_temperature", t, river_low, "degC")
    log.add("river-low-b", "air_temperature", t, river_low_b, "degC")
    # hill-low's logger reports Fahrenheit in this file (converted at ingest)
    log.add("hill-low", "air_temperature", t, hill_low * 9 / 5 + 32, "degF")

    ts = t[SLOW]
    td = np.interp(ts, [0, 4, SUNSET, 20, 24], [-3.0, -7.0, -9.0, -9.0, -8.5]) \
        + red_noise(rng, len(ts), 0.25, 0.7)
    log.add("river-low", "dew_point_temperature", ts, td, "degC")
    log.add("east-low", "relative_humidity", ts,
            np.clip(rel_humidity(east_low[SLOW], td) + rng.normal(0, 0.6, len(ts)), 1, 100),
            "%", fmt="{:.1f}")
    log.add("hill-low", "relative_humidity", ts,
            np.clip(rel_humidity(hill_low[SLOW], td - 0.1) + rng.normal(0, 0.6, len(ts)), 1, 100),
            "%", fmt="{:.1f}")
    gusty = lambda h: np.interp(h, [0, 2, 8, 18, 24], [3.0, 6.0, 5.5, 5.5, 4.5])  # noqa: E731
    east_wind = wind_series(rng, gusty, 0.12, 4.0, 7.0)
    east_wind[:12] = np.clip(east_wind[:12], 2.5, 7.0)
    # east-low's anemometer reports km/h in this file
    log.add("east-low", "wind_speed", ts, east_wind * 3.6, "km h-1", fmt="{:.1f}")
    log.add("river-low", "wind_speed", ts, wind_series(rng, gusty, 0.12, 2.5, 7.0), "m s-1",
            fmt="{:.1f}")
    direction = (350 + red_noise(rng, len(ts), 8.0, 0.6)) % 360
    log.add("east-low", "wind_from_direction", ts, direction, "", fmt="{:.0f}")
    sky = air[SLOW] - np.interp(ts, [0, 24], [26.0, 27.0]) + red_noise(rng, len(ts), 0.8, 0.7)
    log.add("shed-sky", "surface_temperature", ts, sky, "degC")
    add_flag(log, "east-low", "wind_machine_running", [])
    add_flag(log, "river-low", "sprinkler_running", [])
    return log


def cloudy_night(rng):
    """2027-04-16: low overcast all night; mild, a tiny fall, nothing runs."""
    log = Log(dt.date(2027, 4, 16))
    t = T_H
    air = hermite(t, [(0.0, 5.0, 1.0), (clock("15:00"), 7.6, 0.0), (clock("18:00"), 6.6, -0.5),
                      (SUNSET, 5.5, -0.25), (clock("01:00"), 5.0, -0.1), (SUNRISE, 4.55, -0.05),
                      (clock("08:00"), 5.0, 0.6), (24.0, 7.8, 0.5)])
    quiet = lambda: temp_noise(rng, white=0.04, red=0.05, phi=0.8)  # noqa: E731
    east_low = air + quiet()
    river_low = air + 0.05 + quiet()
    river_low_b = air + 0.05 + 0.32 + 0.04 * np.sin(t) + quiet()
    hill_low = air + 0.1 + quiet()
    east_tower = air + np.interp(t, [0, 6, SUNSET, 19, 22, 24], [-0.6, -0.4, 0.2, 0.3, -0.4, -0.6]) \
        + 0.08 * np.sin(t * 0.9) + quiet()
    for sid, v in [("east-low", east_low), ("east-tower", east_tower), ("river-low", river_low),
                   ("river-low-b", river_low_b), ("hill-low", hill_low)]:
        log.add(sid, "air_temperature", t, v, "degC")

    ts = t[SLOW]
    td = np.interp(ts, [0, 5, 8, 20, 24], [-8.0, -1.0, 2.0, 2.0, 2.6]) \
        + red_noise(rng, len(ts), 0.15, 0.7)
    td = np.minimum(td, east_low[SLOW] - 1.0)
    log.add("river-low", "dew_point_temperature", ts, td, "degC")
    log.add("east-low", "relative_humidity", ts,
            np.clip(rel_humidity(east_low[SLOW], td) + rng.normal(0, 0.6, len(ts)), 1, 100),
            "%", fmt="{:.1f}")
    log.add("hill-low", "relative_humidity", ts,
            np.clip(rel_humidity(hill_low[SLOW], td) + rng.normal(0, 0.6, len(ts)), 1, 100),
            "%", fmt="{:.1f}")
    breeze = lambda h: np.interp(h, [0, 4, 8, 20, 24], [3.5, 2.2, 1.5, 1.5, 2.2])  # noqa: E731
    for sid in ("east-low", "river-low"):
        w = wind_series(rng, breeze, 0.15, 0.6, 4.0)
        night = (ts >= 8) & (ts <= 20)
        w[night] = np.clip(w[night], 1.0, 2.0)
        log.add(sid, "wind_speed", ts, w, "m s-1", fmt="{:.1f}")
    # the overcast moves in during the afternoon: sky depression 26 C -> 2 C
    depression = np.interp(ts, [0, 3, 6, 24], [26.0, 18.0, 2.0, 2.0]) \
        + np.clip(red_noise(rng, len(ts), 0.35, 0.7), -0.9, 0.9)
    log.add("shed-sky", "surface_temperature", ts, air[SLOW] - depression, "degC")
    add_flag(log, "east-low", "wind_machine_running", [])
    add_flag(log, "river-low", "sprinkler_running", [])
    return log


# ------------------------------------------------------------- broken rows

# (row, what is wrong or "" for a good row); line numbers count the header as line 1.
BROKEN_ROWS = [
    ("2027-04-14T20:00:00-07:00,east-low,air_temperature,7.41,degC", ""),
    ("2027-04-14T20:00:00-07:00,east-tower,air_temperature,7.95,degC", ""),
    ("2027-04-14T20:00:00-07:00,east-low,relative_humidity,48.2,%", ""),
    ("2027-04-14T20:00:00-07:00,river-low,air_temperature,7.62,degC", ""),
    ("2027-04-14T20:00:00-07:00,hill-low,air_temperature,8.10,degC", ""),
    ("2027-04-14T20:02:00,east-low,air_temperature,7.30,degC", "time without a UTC offset"),
    ("2027-04-14T20:02:00-07:00,east-tower,air_temperature,7.98,degC", ""),
    ("twenty past eight,east-low,air_temperature,7.28,degC", "unparseable time"),
    ("2027-04-14T20:02:00-07:00,river-low,air_temperature,7.51,degC", ""),
    ("2027-04-14T20:02:00-07:00,hill-low,air_temperature,8.02,furlongs",
     "unknown unit (furlongs)"),
    ("2027-04-14T20:02:00-07:00,west-low,air_temperature,7.20,degC",
     "unknown station (west-low)"),
    ("2027-04-14T20:02:00-07:00,east-low,air_temprature,7.30,degC",
     "unknown quantity (air_temprature)"),
    ("2027-04-14T20:04:00-07:00,east-low,air_temperature,7.18,", ""),
    ("2027-04-14T20:04:00-07:00,east-tower,air_temperature,seven,degC",
     "value is not a number (seven)"),
    ("2027-04-14T20:04:00-07:00,river-low,air_temperature,,degC", "empty value"),
    ("2027-04-14T20:04:00-07:00,hill-low,air_temperature,NaN,degC", "value is NaN"),
    ("2027-04-14T20:04:00-07:00,river-low-b,air_temperature,inf,degC", "value is inf"),
    ("2027-04-14T20:06:00-07:00,east-low,air_temperature,85.0,degC",
     "air temperature out of range (85 degC)"),
    ("2027-04-14T20:06:00-07:00,river-low,air_temperature,45.68,degF", ""),
    ("2027-04-14T20:10:00-07:00,east-low,relative_humidity,0.82,%",
     "relative humidity given as a fraction (0.82 with unit %)"),
    ("2027-04-14T20:10:00-07:00,hill-low,relative_humidity,130,%",
     "relative humidity above 100 % (130)"),
    ("2027-04-14T20:10:00-07:00,river-low,wind_speed,-0.4,m s-1", "negative wind speed"),
    ("2027-04-14T20:10:00-07:00,east-low,wind_speed", "too few columns (3 of 5)"),
    ("2027-04-14T20:10:00-07:00,river-low,dew_point_temperature,-4.12,degC", ""),
    ("2027-04-14T20:10:00-07:00,shed-sky,surface_temperature,-19.4,degC", ""),
    ("2027-04-14T20:10:00-07:00,east-low,wind_machine_running,0,1", ""),
    ("2027-04-15T03:08:00Z,east-low,air_temperature,6.95,degC", ""),
    ("2027-04-14T20:06:00-07:00,east-tower,air_temperature,8.02,degC", ""),
    ("2027-04-14T20:00:00-07:00,river-low,wind_speed,0.6,m s-1", ""),
    ("2027-04-14T20:00:00-07:00,east-low,air_temperature,7.41,degC",
     "exact duplicate of line 2 (not an error: stored once)"),
    ("2027-04-14T20:00:00-07:00,east-tower,air_temperature,8.60,degC",
     "conflicting duplicate of line 3 (same time/station/quantity, different value)"),
]


def write_broken_rows(path):
    with open(path, "w", newline="") as fh:
        fh.write(",".join(HEADER) + "\n")
        for row, _ in BROKEN_ROWS:
            fh.write(row + "\n")


# ================================================================ scenario nights (scenarios/)
#
# Alder Flat, an invented farm, on nights when protection runs; each night has a config and an
# expected-advice table worked by hand (.md) beside it in scenarios/:
#
# * 2027-04-20  sprinklers through sunrise: the sprinkled block's own air is wetted, a dry
#               reference station outside it (scenario A; a second config, A', has no reference).
# * 2027-04-21  a site-wide tower with a 4 C inversion and a wind-machine block with no tower of
#               its own; a second fan block whose own tower shows 3 C, holding T10 but not
#               T10 + margin (scenario B).
# * 2027-04-22  a drying night (the dew point falls 0.75 C/h), with a heater block and an
#               under-tree sprinkler block (scenario C).

SCENARIOS = HERE / "scenarios"

SCENARIO_SEED = 20270420  # the scenario nights have a seed of their own: the demo files stay as they were


def night_air(t0_h, sunrise_h, t_day, t_sunset, t0_c, tmin_c, tend_c, sunset_h):
    """Crop-height air on a clear night: the afternoon, Reuter's square-root fall from t0 to
    `tmin_c` at sunrise, then the morning warming to `tend_c` at noon."""
    temp = np.empty(N_T)
    day = T_H < t0_h
    temp[day] = hermite(T_H[day], [(0.0, t_day - 2.5, 1.2), (clock("15:30"), t_day, 0.0),
                                   (sunset_h, t_sunset, -2.6), (t0_h, t0_c, -1.2)])
    b = (tmin_c - t0_c) / np.sqrt(sunrise_h - t0_h)
    night = (T_H >= t0_h) & (T_H <= sunrise_h)
    temp[night] = t0_c + b * np.sqrt(T_H[night] - t0_h)
    morning = T_H > sunrise_h
    temp[morning] = tmin_c + (tend_c - tmin_c) * morning_shape(T_H[morning], sunrise_h, 24.0)
    return temp


def flag_times(on_h, off_h):
    return [(on_h, off_h)] if on_h is not None else []


def first_at_or_below(values, level, after_h=0.0):
    idx = np.nonzero((values <= level) & (T_H >= after_h))[0]
    return float(T_H[idx[0]]) if len(idx) else None


def wet_bulb_magnus(t_c, td_c, p_hpa=975.0):
    """A psychrometer-equation wet bulb (WMO ice-bulb coefficient, Magnus over ice below 0 C),
    solved by bisection: only used here to place the sprinkler start in the invented data; the
    tests check against psychrolib."""
    e = e_water(td_c)
    lo, hi = np.minimum(td_c, t_c) - 1.0, np.asarray(t_c, dtype=float) + 0.0
    for _ in range(40):
        mid = 0.5 * (lo + hi)
        ei = np.where(mid < 0, 6.112 * np.exp(22.46 * mid / (272.62 + mid)), e_water(mid))
        f = ei - 5.75e-4 * p_hpa * (t_c - mid) - e
        hi = np.where(f > 0, mid, hi)
        lo = np.where(f > 0, lo, mid)
    return 0.5 * (lo + hi)


# ------------------------------------------------------------ A: sprinklers through sunrise

def sprinklers_sunrise(rng):
    """2027-04-20: over-tree sprinklers in block vale through sunrise; `met` is a dry reference
    station outside the sprinkled area."""
    log = Log(dt.date(2027, 4, 20))
    sunset, t0, sunrise = clock("19:56"), clock("21:56"), clock("06:04")
    met_air = night_air(t0, sunrise, 13.5, 8.8, 3.0, -4.0, 9.0, sunset)
    unprot = met_air - 0.2  # the block a little colder than the station outside it
    td_dry = np.interp(T_H, [0, sunset, t0, sunrise, clock("09:00"), 24], [-3.0, -5.5, -6.5, -7.0, -6.0, -4.5])
    td_dry = np.minimum(td_dry, met_air - 0.3)
    wb = wet_bulb_magnus(unprot, np.minimum(td_dry, unprot))
    cross = first_at_or_below(wb, -1.2, after_h=sunset)  # T10 + margin of sweet cherry, full bloom
    spr_on = np.floor((cross - 0.25) * 6) / 6  # on the 10-minute grid, about 15-25 min before
    spr_off = clock("09:30")
    # running: latent heat holds the air near -1 C; after sunrise it follows the warming air
    level = np.clip(-1.05 + 0.12 * (unprot + 0.9), -1.35, -1.05)
    held = level + softplus(unprot - level, 0.3)
    running = unprot + (held - unprot) * ramp_on(T_H, spr_on, 0.12)
    after = unprot + (np.interp(spr_off, T_H, running) - unprot) * np.exp(-(T_H - spr_off) / 0.25)
    vale = np.where(T_H < spr_on, unprot, np.where(T_H < spr_off, running, after))
    wet = ramp_on(T_H, spr_on, 0.3) * (T_H < spr_off) + np.where(T_H >= spr_off, np.exp(-(T_H - spr_off) / 0.5), 0.0)
    vale_td = td_dry + (np.minimum(vale - 0.6, 0.0) - td_dry).clip(0) * wet  # the spray moistens the block's air
    vale_td = np.minimum(vale_td + rng.normal(0, 0.06, N_T), vale - 0.2)

    vale_obs = vale + 0.6 * temp_noise(rng, white=0.03, red=0.04)
    met_obs = met_air + temp_noise(rng, white=0.03, red=0.04)
    log.add("vale-low", "air_temperature", T_H, vale_obs, "degC")
    log.add("met", "air_temperature", T_H, met_obs, "degC")
    ts = T_H[SLOW]
    log.add("vale-low", "dew_point_temperature", ts, vale_td[SLOW], "degC")
    log.add("met", "dew_point_temperature", ts, td_dry[SLOW] + rng.normal(0, 0.05, len(ts)), "degC")
    calm = np.clip(np.interp(ts, [0, 6, 8.5, 20, 24], [2.4, 2.0, 0.7, 0.7, 2.2]) * (1 + red_noise(rng, len(ts), 0.25, 0.6)), 0.2, 3.5)
    log.add("met", "wind_speed", ts, calm, "m s-1", fmt="{:.1f}")
    add_flag(log, "vale-low", "sprinkler_running", [(spr_on, spr_off)])
    return log, {"sprinklers_on": log.stamp(spr_on), "sprinklers_off": log.stamp(spr_off)}


# -------------------------------------------------- B: a site-wide tower, and a margin case

def site_tower(rng):
    """2027-04-21: `mast`, a tower with no block, 4 C above block ridge (no tower of its own,
    350 m away); block knoll's own tower 3 C above it."""
    log = Log(dt.date(2027, 4, 21))
    sunset, t0, sunrise = clock("19:57"), clock("21:57"), clock("06:02")
    ridge = night_air(t0, sunrise, 14.0, 9.0, 3.2, -1.2, 9.5, sunset)
    knoll = night_air(t0, sunrise, 13.8, 8.8, 2.8, -3.0, 9.3, sunset)
    inv4 = hermite(T_H, [(0.0, -0.8, 0.0), (sunset, 0.5, 1.5), (clock("21:00"), 3.2, 0.9), (clock("22:30"), 4.0, 0.0),
                         (clock("05:30"), 4.0, 0.0), (clock("07:30"), 1.0, -1.5), (clock("09:30"), -0.6, 0.0),
                         (24.0, -0.8, 0.0)])
    inv3 = inv4 * 0.75
    td = np.interp(T_H, [0, sunset, t0, sunrise, 24], [-2.0, -4.5, -5.5, -6.0, -3.5])
    for sid, air in (("ridge-low", ridge), ("knoll-low", knoll)):
        log.add(sid, "air_temperature", T_H, air + temp_noise(rng, white=0.03, red=0.04), "degC")
    log.add("mast", "air_temperature", T_H, ridge + inv4 + temp_noise(rng, white=0.03, red=0.04), "degC")
    log.add("knoll-tower", "air_temperature", T_H, knoll + inv3 + temp_noise(rng, white=0.03, red=0.04), "degC")
    ts = T_H[SLOW]
    for sid, air in (("ridge-low", ridge), ("knoll-low", knoll)):
        rh = rel_humidity(air[SLOW], np.minimum(td[SLOW], air[SLOW] - 0.3)) + rng.normal(0, 0.5, len(ts))
        log.add(sid, "relative_humidity", ts, np.clip(rh, 1, 100), "%", fmt="{:.1f}")
    calm = np.clip(np.interp(ts, [0, 6, 8.5, 20, 24], [2.2, 1.8, 0.6, 0.6, 2.0]) * (1 + red_noise(rng, len(ts), 0.25, 0.6)), 0.2, 2.3)
    log.add("ridge-low", "wind_speed", ts, calm, "m s-1", fmt="{:.1f}")
    add_flag(log, "ridge-low", "wind_machine_running", [])
    add_flag(log, "knoll-low", "wind_machine_running", [])
    return log, {}


# --------------------------------------------- C: a drying night, heaters and under-tree water

def drying_night(rng):
    """2027-04-22: dry air moves in; block south (over-tree sprinklers, not yet running) sees its
    dew point fall 0.75 C/h; block north has heaters; block flat has under-tree sprinklers that
    run from 01:00 to 07:40; `met` is the site's dry reference station."""
    log = Log(dt.date(2027, 4, 22))
    sunset, t0, sunrise = clock("19:58"), clock("21:58"), clock("06:00")
    south = night_air(t0, sunrise, 14.5, 9.5, 3.6, -2.0, 10.0, sunset)
    north = night_air(t0, sunrise, 14.2, 9.2, 3.2, -2.5, 9.8, sunset)
    flat = night_air(t0, sunrise, 14.0, 9.0, 2.8, -2.6, 9.6, sunset)
    met = night_air(t0, sunrise, 14.3, 9.3, 3.4, -2.3, 9.9, sunset)
    # the dew point: -1 C at 20:00, falling 0.75 C/h to -7 C at 04:00, then steady, rising by day
    td = np.interp(T_H, [0, clock("20:00"), clock("04:00"), clock("08:00"), 24], [1.0, -1.0, -7.0, -7.0, -5.0])
    under_on, under_off = clock("01:00"), clock("07:40")
    flat_run = flat + 0.8 * ramp_on(T_H, under_on, 0.3) * (T_H < under_off) \
        + np.where(T_H >= under_off, 0.8 * np.exp(-(T_H - under_off) / 0.3), 0.0)
    inv_n = hermite(T_H, [(0.0, -0.8, 0.0), (sunset, 0.5, 1.5), (clock("22:30"), 3.5, 0.0), (clock("05:30"), 3.5, 0.0),
                          (clock("08:00"), 0.0, -1.0), (24.0, -0.8, 0.0)])
    inv_f = inv_n * (2.5 / 3.5)
    blocks = (("south-low", south), ("north-low", north), ("flat-low", flat_run), ("met", met))
    for sid, air in blocks:
        log.add(sid, "air_temperature", T_H, air + temp_noise(rng, white=0.03, red=0.04), "degC")
    log.add("north-tower", "air_temperature", T_H, north + inv_n + temp_noise(rng, white=0.03, red=0.04), "degC")
    log.add("flat-tower", "air_temperature", T_H, flat + inv_f + temp_noise(rng, white=0.03, red=0.04), "degC")
    ts = T_H[SLOW]
    flat_td = td + (np.minimum(flat_run - 1.0, 0.0) - td).clip(0) * 0.5 * ramp_on(T_H, under_on, 0.3) * (T_H < under_off)
    for sid, air, dew in (("south-low", south, td), ("north-low", north, td - 0.2), ("flat-low", flat_run, flat_td),
                          ("met", met, td - 0.3)):
        dew = np.minimum(dew, air - 0.3)
        log.add(sid, "dew_point_temperature", ts, dew[SLOW] + rng.normal(0, 0.05, len(ts)), "degC")
    calm = np.clip(np.interp(ts, [0, 6, 8.5, 20, 24], [2.5, 2.0, 0.8, 0.8, 2.0]) * (1 + red_noise(rng, len(ts), 0.25, 0.6)), 0.2, 2.4)
    log.add("met", "wind_speed", ts, calm, "m s-1", fmt="{:.1f}")
    add_flag(log, "south-low", "sprinkler_running", [])
    add_flag(log, "flat-low", "sprinkler_running", [(under_on, under_off)])
    return log, {"undertree_on": log.stamp(under_on), "undertree_off": log.stamp(under_off)}


# ------------------------------------- D: warm air aloft that builds after dusk, or never does

INVERSION_NIGHTS = (  # (evening, T0, minimum, tower minus crop at its peak on bench, on gap)
    (dt.date(2027, 4, 23), 1.8, -4.2, 4.0, 0.6),  # frost; no past night known yet
    (dt.date(2027, 4, 24), 6.5, 1.5, 3.6, 0.5),   # clear, calm, no frost
    (dt.date(2027, 4, 25), 6.0, 1.0, 4.4, 0.7),   # clear, calm, no frost
    (dt.date(2027, 4, 26), 1.6, -4.4, 4.0, 0.6),  # frost again, three clear calm nights known
)


def inversion_nights(rng):
    """2027-04-23 to 27: four clear calm nights at Alder Flat, no protection running. Block bench's
    own tower is 0.3 C above the crop at sunset and about 4 C above it from 23:00 (the warm air
    aloft builds after dusk); block gap's own tower stays 0.3-0.7 C above its crop all night
    (a site whose inversion stays weak). Nights 1 and 4 are frost nights."""
    log = Log(INVERSION_NIGHTS[0][0])
    sunset, t0, sunrise = clock("19:59"), clock("21:59"), clock("05:59")
    for k, (_, t0_c, tmin_c, peak_bench, peak_gap) in enumerate(INVERSION_NIGHTS):
        hours = T_H + 24.0 * k
        bench = night_air(t0, sunrise, t0_c + 11.0, t0_c + 5.5, t0_c, tmin_c, t0_c + 8.0, sunset)
        gap = bench - 0.3
        build = hermite(T_H, [(0.0, -0.8, 0.0), (sunset, 0.3, 0.4), (t0, 1.0, 1.0), (clock("23:00"), peak_bench, 0.0),
                              (clock("05:30"), peak_bench, 0.0), (clock("07:30"), 1.0, -1.5), (clock("09:30"), -0.6, 0.0),
                              (24.0, -0.8, 0.0)])
        weak = np.interp(T_H, [0.0, sunset, t0, clock("23:00"), clock("05:30"), clock("08:00"), 24.0],
                         [-0.8, 0.3, 0.4, peak_gap, peak_gap, -0.3, -0.8])
        td = np.interp(T_H, [0, sunset, t0, sunrise, 24], [t0_c - 4.0, t0_c - 5.5, t0_c - 6.5, t0_c - 7.0, t0_c - 5.0])
        for sid, air in (("bench-low", bench), ("gap-low", gap)):
            log.add(sid, "air_temperature", hours, air + temp_noise(rng, white=0.03, red=0.04), "degC")
        log.add("bench-tower", "air_temperature", hours, bench + build + temp_noise(rng, white=0.03, red=0.04), "degC")
        log.add("gap-tower", "air_temperature", hours, gap + weak + temp_noise(rng, white=0.03, red=0.04), "degC")
        ts = T_H[SLOW]
        for sid, air in (("bench-low", bench), ("gap-low", gap)):
            dew = np.minimum(td, air - 0.3)
            log.add(sid, "dew_point_temperature", ts + 24.0 * k, dew[SLOW] + rng.normal(0, 0.05, len(ts)), "degC")
        calm = np.clip(np.interp(ts, [0, 6, 8.5, 20, 24], [2.0, 1.6, 0.6, 0.6, 1.8])
                       * (1 + red_noise(rng, len(ts), 0.25, 0.6)), 0.2, 2.0)
        log.add("bench-low", "wind_speed", ts + 24.0 * k, calm, "m s-1", fmt="{:.1f}")
        for sid in ("bench-low", "gap-low"):
            log.add(sid, "wind_machine_running", ts + 24.0 * k, np.zeros(len(ts)), "1", fmt="{:.0f}")
    return log, {}


def write_scenarios():
    rng = np.random.default_rng(SCENARIO_SEED)
    for name, make in (("2027-04-20-sprinklers-sunrise.csv", sprinklers_sunrise),
                       ("2027-04-21-site-tower.csv", site_tower),
                       ("2027-04-22-drying-night.csv", drying_night),
                       ("2027-04-23-inversion-builds.csv", inversion_nights)):
        log, facts = make(rng)
        n = log.write(SCENARIOS / name)
        print(f"scenarios/{name}: {n} readings" + "".join(f"; {k} {v}" for k, v in facts.items()))


# -------------------------------------------------------------------- main

def crossing(times, values, level):
    """First time (hours) the series goes at or below `level`, or None."""
    below = np.nonzero(values <= level)[0]
    return times[below[0]] if len(below) else None


def main():
    rng = np.random.default_rng(SEED)
    frost, summary = frost_night(rng)
    counts = {
        "2027-04-14-radiation-frost.csv": frost.write(HERE / "2027-04-14-radiation-frost.csv"),
        "2027-04-15-windy-advective.csv": windy_night(rng).write(HERE / "2027-04-15-windy-advective.csv"),
        "2027-04-16-cloudy-safe.csv": cloudy_night(rng).write(HERE / "2027-04-16-cloudy-safe.csv"),
    }
    write_broken_rows(HERE / "broken-rows.csv")
    for name, n in counts.items():
        print(f"{name}: {n} readings")
    print(f"broken-rows.csv: {len(BROKEN_ROWS)} rows after the header")
    night = T_H >= T0_FROST
    for sid, series in summary.items():
        unprotected = np.round(series, 2)
        print(f"{sid} with no protection: minimum {unprotected[night].min():.2f} C")
        for level in (-0.2, -2.2):
            hit = crossing(T_H, unprotected, level)
            print(f"  first <= {level} C at {frost.stamp(hit)}")
    write_scenarios()  # with a seed of their own: the files above are unchanged


if __name__ == "__main__":
    main()
