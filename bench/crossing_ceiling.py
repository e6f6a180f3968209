"""How well can any curve place tonight's crossing of T10 + margin 3 h ahead, if it knew the minimum?

    python -m bench.crossing_ceiling [SITE ...]

Issue 15 asks for the crossing time projected 3 h before it within 30 min (median). The projection
draws a curve from the air now to the forecast minimum, so its crossing error has two parts: the
minimum's level and the curve's shape. This bench removes the first: on the same nights and at the
same instants as `bench.forecast_skill` scores (3 h before each observed crossing, never before
sunset; nights whose crop air is above the threshold at sunset and crosses it by sunrise + 1 h, hourly
rows without gaps), it draws each shape from the air then to the night's *observed* minimum and
reports the median and 90th percentile of the crossing error. Whatever a shape scores here is
a floor for a forecast that uses it; a shape that misses 30 min here cannot meet the target with a
real forecast of the minimum.

Shapes (t: time, now: the issue time, T_now the air then, T_min the observed minimum):
- "reuter_dusk_to_sunrise": what frostwatch draws, Reuter's square-root curve on the clock
  sqrt(hours since dusk = sunset + 2 h) through the air now, reaching T_min at sunrise
  (Reuter 1951, in Snyder & de Melo-Abreu 2005, FAO Frost Protection vol. 1, ch. 5);
- "reuter_sunset_to_sunrise": the same clock started at sunset;
- "linear_to_sunrise": straight in time from the air now to T_min at sunrise;
- "linear_to_observed_min_time": straight to T_min at the time it was observed (knows two
  things no forecast knows: a ceiling of ceilings);
- "recent_rate_1h", "recent_rate_2h": no minimum at all, the last 1 or 2 h's cooling rate carried
  on (a naive method; no crossing before sunrise + 1 h counts as sunrise + 1 h, as in
  forecast_skill).
Results go to bench/results/crossing_ceiling.json and are printed.
"""

from __future__ import annotations

import datetime as dt
import json
import math
import sys
import tempfile
from pathlib import Path

import numpy as np

from bench import tmy
from bench.forecast_skill import HourlyView

RESULTS = Path(__file__).resolve().parent / "results"
LEAD_S = 3 * 3600.0
GRID_STEP_S = 300.0
TARGET_MEDIAN_MIN = 30.0
SHAPES = ("reuter_dusk_to_sunrise", "reuter_sunset_to_sunrise", "linear_to_sunrise", "linear_to_observed_min_time",
          "recent_rate_1h", "recent_rate_2h")


def fraction_of_fall(shape: str, grid_s: np.ndarray, now_s: float, end_s: float, sunset_s: float, dusk_s: float) -> np.ndarray:
    """The share of the fall from the air now to the minimum done at each grid instant (0 now, 1 at
    `end_s` and after)."""
    if shape.startswith("reuter"):
        t0_s = dusk_s if shape == "reuter_dusk_to_sunrise" else sunset_s
        e = np.sqrt(np.maximum(0.0, (grid_s - t0_s) / 3600.0))
        e_now, e_end = math.sqrt(max(0.0, (now_s - t0_s) / 3600.0)), math.sqrt(max(0.0, (end_s - t0_s) / 3600.0))
        return np.clip((e - e_now) / max(e_end - e_now, 1e-6), 0.0, 1.0)
    return np.clip((grid_s - now_s) / max(end_s - now_s, 1.0), 0.0, 1.0)


def first_at_or_below_s(grid_s: np.ndarray, curve_c: np.ndarray, threshold_c: float) -> float | None:
    below = np.nonzero(curve_c <= threshold_c)[0]
    if not len(below):
        return None
    i = int(below[0])
    if i == 0:
        return float(grid_s[0])
    c0, c1 = curve_c[i - 1], curve_c[i]
    return float(grid_s[i - 1] + (c0 - threshold_c) / (c0 - c1) * (grid_s[i] - grid_s[i - 1]))


def projected_crossing_s(shape: str, view: HourlyView, now_s: float, sunset_s: float, sunrise_s: float,
                         min_c: float, min_s: float, threshold_c: float) -> float:
    """One shape's crossing time from the instant `now_s`; sunrise + 1 h where it does not cross."""
    t, v = view.t, view.f["temp_c"]
    air_c = float(np.interp(now_s, t, v))
    give_up_s = sunrise_s + 3600.0
    if shape.startswith("recent_rate"):
        hours = float(shape[-2])
        rate_c_s = (float(np.interp(now_s - hours * 3600.0, t, v)) - air_c) / (hours * 3600.0)
        return min(give_up_s, now_s + (air_c - threshold_c) / rate_c_s) if rate_c_s > 0 else give_up_s
    end_s = max(min_s, now_s + 600.0) if shape == "linear_to_observed_min_time" else sunrise_s
    grid_s = np.arange(now_s, sunrise_s + 1.0, GRID_STEP_S)
    f = fraction_of_fall(shape, grid_s, now_s, end_s, sunset_s, sunset_s + 7200.0)
    found = first_at_or_below_s(grid_s, air_c + (min(min_c, air_c) - air_c) * f, threshold_c)
    return give_up_s if found is None else found


def run_site(key: str, work: Path) -> dict:
    from frostwatch.config import load_config
    from frostwatch.night import night_of_date

    site = tmy.SITES[key]
    _, cfg_path, hourly = tmy.write_log_and_config(site, work)
    cfg = load_config(cfg_path)
    block = cfg.blocks[0]
    threshold_c = block.kill_10pct_c + block.margin_c
    view = HourlyView(hourly)
    tz = cfg.site.tz
    evenings = sorted({dt_.date() for dt_ in (dt.datetime.fromtimestamp(float(s), tz) for s in view.t)})
    errors: dict[str, list[float]] = {s: [] for s in SHAPES}
    for evening in evenings:
        night = night_of_date(cfg.site.latitude, cfg.site.longitude, tz, evening)
        sunset_s, sunrise_s = night.sunset_utc.timestamp(), night.sunrise_utc.timestamp()
        crossed_s = view.crossing_after(sunset_s, sunrise_s + 3600.0, threshold_c)
        if crossed_s is None or crossed_s - LEAD_S < sunset_s:
            continue
        sel = (view.t >= sunset_s) & (view.t <= sunrise_s + 1800.0)
        i = int(np.argmin(view.f["temp_c"][sel]))
        min_c, min_s = float(view.f["temp_c"][sel][i]), float(view.t[sel][i])
        for shape in SHAPES:
            at_s = projected_crossing_s(shape, view, crossed_s - LEAD_S, sunset_s, sunrise_s, min_c, min_s, threshold_c)
            errors[shape].append((at_s - crossed_s) / 60.0)
    out = {"site": key, "threshold_c": threshold_c, "lead_h": LEAD_S / 3600.0, "shapes": {}}
    for shape, e in errors.items():
        e = np.asarray(e)
        out["shapes"][shape] = {"n": len(e), "median_abs_min": round(float(np.median(np.abs(e))), 1),
                                "p90_abs_min": round(float(np.percentile(np.abs(e), 90)), 1),
                                "median_signed_min": round(float(np.median(e)), 1)} if len(e) else {"n": 0}
    return out


def main(argv: list[str] | None = None) -> int:
    sites = (argv if argv is not None else sys.argv[1:]) or ["greensboro", "sand_point", "miami"]
    results = []
    with tempfile.TemporaryDirectory() as d:
        for key in sites:
            r = run_site(key, Path(d) / key)
            results.append(r)
            print(f"{key}: crossing of T10 + margin ({r['threshold_c']:g} degC) projected 3 h ahead from the observed "
                  f"minimum (target: median within {TARGET_MEDIAN_MIN:g} min)")
            for shape, x in r["shapes"].items():
                if x["n"]:
                    print(f"  {shape:30s} n={x['n']:3d}  median |error| {x['median_abs_min']:6.1f} min  "
                          f"p90 {x['p90_abs_min']:6.1f}  median signed {x['median_signed_min']:+6.1f}")
    RESULTS.mkdir(exist_ok=True)
    (RESULTS / "crossing_ceiling.json").write_text(json.dumps({"about": __doc__.strip().splitlines()[0], "sites": results},
                                                              indent=1) + "\n")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
