"""PNG plots of a night, with matplotlib's Agg backend (no display needed on a Pi).

Drawn for a phone first: a narrow figure (it is shown about 400 px wide), large type, the legends
below the panels rather than over the curves, the site's units (`Display`). A lower panel with
nothing to draw (no tower and no anemometer in the block) is left out; the report's caption says
so (`frostwatch.reports.panels`).
"""

from __future__ import annotations

import datetime as dt
from pathlib import Path

import matplotlib

matplotlib.use("Agg")
import matplotlib.dates as mdates  # noqa: E402
import matplotlib.pyplot as plt  # noqa: E402
import numpy as np  # noqa: E402

from frostwatch.config import Block, Config  # noqa: E402
from frostwatch.display import MPH_PER_M_S, Display  # noqa: E402
from frostwatch.forecast import Series  # noqa: E402
from frostwatch.night import Night, sun_times_words  # noqa: E402
from frostwatch.physics import humidity, sprinklers, windmachine  # noqa: E402
from frostwatch.reports.panels import lower_panel  # noqa: E402
from frostwatch.units import c_to_f, delta_c_to_f  # noqa: E402

CROP_COLORS = ("tab:blue", "tab:brown", "tab:gray", "black")  # never red: red is for T10/T90
WIDTH_IN = 5.6  # at DPI about 560 px: shown at phone width, the type stays readable
DPI = 100
FONT = 12
FANS_USEFUL_INVERSION_C = windmachine.MIN_USEFUL_INVERSION_C  # drawn as a guide line
# the wind above which the block's method does not work, drawn as a guide (the advice's own limits)
WIND_LIMITS = {"wind_machine": (windmachine.MAX_WIND_FOR_FANS_M_S, "too windy for fans"),
               "overtree_sprinkler": (sprinklers.MAX_WIND_FOR_SPRINKLING_M_S, "too windy to sprinkle")}


def _conv(d: Display, v):
    return c_to_f(np.asarray(v)) if d.unit == "degF" else np.asarray(v)


def _times(t_s: np.ndarray, tz) -> list[dt.datetime]:
    return [dt.datetime.fromtimestamp(float(x), tz=dt.UTC).astimezone(tz) for x in t_s]


def _legend_below(ax, ncol: int = 2) -> None:
    h, labels = ax.get_legend_handles_labels()
    if h:
        ax.legend(h, labels, loc="upper left", bbox_to_anchor=(0.0, -0.16), ncol=ncol, fontsize=FONT - 1,
                  frameon=False, handlelength=1.8, columnspacing=1.0, borderaxespad=0.0)


def plot_block_night(
    path: Path,
    block: Block,
    cfg: Config,
    series: Series,
    night: Night,
    display: Display,
    projections: list[dict],
    dusk_forecast_c: float | None,
    runs: list | None = None,
) -> Path:
    """Crop-height and tower air against T10/T90 with sunset/sunrise, the dusk forecast and the
    projected minimum with its range as projected through the night, dew point and wet bulb,
    protection runs shaded; the inversion and the wind below (when the block measures either)."""
    tz = display.tz
    start = night.sunset_utc.timestamp() - 3 * 3600
    end = night.sunrise_utc.timestamp() + 3 * 3600
    lower = lower_panel(block, cfg, series, start, end)
    with plt.rc_context({"font.size": FONT, "axes.titlesize": FONT + 1, "axes.labelsize": FONT,
                         "xtick.labelsize": FONT - 1, "ytick.labelsize": FONT - 1}):
        if lower.shown:
            fig, (ax, ax2) = plt.subplots(2, 1, figsize=(WIDTH_IN, 10.5), sharex=True, layout="constrained",
                                          gridspec_kw={"height_ratios": [2.2, 1.0]})
        else:
            fig, ax = plt.subplots(1, 1, figsize=(WIDTH_IN, 7.5), layout="constrained")
            ax2 = None
        _upper(ax, block, cfg, series, night, display, projections, dusk_forecast_c, runs, start, end)
        if ax2 is not None:
            _lower(ax2, lower, block, cfg, series, night, display, start, end)
        _keep_the_night_in_view(ax, start, end, tz)
        last = ax2 if ax2 is not None else ax
        last.xaxis.set_major_locator(mdates.HourLocator(byhour=range(0, 24, 3), tz=tz))
        last.xaxis.set_major_formatter(mdates.DateFormatter("%H:%M", tz=tz))
        last.set_xlabel(f"local time ({cfg.site.timezone})")
        if ax2 is not None:  # the shared axis: the upper panel's ticks too
            ax.xaxis.set_tick_params(labelbottom=True)
        fig.savefig(path, dpi=DPI, bbox_inches="tight")
        plt.close(fig)
    return path


def _keep_the_night_in_view(ax, start_s: float, end_s: float, tz) -> None:
    """A block with no reading this night has only guide lines (T10, sunset, ...), which matplotlib
    does not scale to: it fell back to two years either side, and the 3-hour ticks of that took
    a minute to draw. Such an axis gets the night's window; one with readings keeps its own."""
    lo, hi = ax.get_xlim()
    if hi - lo > 2 * (end_s - start_s) / 86400.0:  # matplotlib's x unit here is the day
        ax.set_xlim(dt.datetime.fromtimestamp(start_s, dt.UTC).astimezone(tz),
                    dt.datetime.fromtimestamp(end_s, dt.UTC).astimezone(tz))


def _upper(ax, block, cfg, series, night, display, projections, dusk_forecast_c, runs, start, end) -> None:
    tz = display.tz
    n_crop = 0
    ys = [block.kill_10pct_c, block.kill_90pct_c, block.kill_10pct_c + block.margin_c]  # what must be in view
    for st in cfg.stations_of(block.id):
        key = (st.id, "air_temperature")
        if key not in series:
            continue
        t, v = series[key]
        sel = (t >= start) & (t <= end)
        if not sel.any():
            continue
        if st.role == "crop":
            style, color = "-", CROP_COLORS[n_crop % len(CROP_COLORS)]
            n_crop += 1
        else:
            style, color = "--", "tab:green"
        ax.plot(_times(t[sel], tz), _conv(display, v[sel]), style, color=color, lw=1.8,
                label=f"{st.id} air ({display.length(st.height_m)})")
        ys += [float(np.nanmin(v[sel])), float(np.nanmax(v[sel]))]
        if st.role != "crop":
            continue
        td = None
        if (st.id, "dew_point_temperature") in series:
            td_t, td_v = series[(st.id, "dew_point_temperature")]
            s2 = (td_t >= start) & (td_t <= end)
            td_t, td = td_t[s2], td_v[s2]
        elif (st.id, "relative_humidity") in series:
            rh_t, rh_v = series[(st.id, "relative_humidity")]
            s2 = (rh_t >= start) & (rh_t <= end)
            td_t = rh_t[s2]
            td = humidity.dew_point_c_from_rel_humidity(np.interp(td_t, t, v), np.clip(rh_v[s2], 1, 100))
        if td is not None and len(td_t):
            air_at = np.interp(td_t, t, v)
            wb = humidity.wet_bulb_c_from_dew_point(air_at, np.minimum(td, air_at))
            ax.plot(_times(td_t, tz), _conv(display, td), ":", color="tab:orange", lw=1.5, label=f"{st.id} dew point")
            ax.plot(_times(td_t, tz), _conv(display, wb), "-.", color="tab:olive", lw=1.5, label=f"{st.id} wet bulb")
            # in view too: the wet bulb is the sprinklers' trigger and the dew point sets it (a dry
            # night's dew point fell below the axis and was named in the legend but not drawn)
            both = np.concatenate([np.asarray(td, dtype=float), np.asarray(wb, dtype=float)])
            if np.isfinite(both).any():
                ys += [float(np.nanmin(both)), float(np.nanmax(both))]
    ax.axhline(_conv(display, block.kill_10pct_c), color="tab:red", lw=1.5, label=f"T10 {display.temp(block.kill_10pct_c)}")
    ax.axhline(_conv(display, block.kill_90pct_c), color="darkred", lw=1.5, ls="--",
               label=f"T90 {display.temp(block.kill_90pct_c)}")
    line_c = block.kill_10pct_c + block.margin_c
    ax.axhline(_conv(display, line_c), color="salmon", lw=1.2, ls=":", label=f"act line {display.temp(line_c)}")
    _sun_lines(ax, night, tz)
    for k, r in enumerate(runs or []):
        stop = r.stop_utc or night.sunrise_utc + dt.timedelta(hours=2)
        what = "protection ran" if r.source == "sensor" else "protection (from acknowledgement)"
        ax.axvspan(r.start_utc.astimezone(tz), stop.astimezone(tz), color="tab:cyan", alpha=0.15,
                   label=what if k == 0 else None)
    if dusk_forecast_c is not None:
        ax.plot([night.dusk_utc.astimezone(tz), night.sunrise_utc.astimezone(tz)],
                [_conv(display, dusk_forecast_c)] * 2, color="purple", lw=1.2, ls="--",
                label=f"dusk forecast {display.temp(dusk_forecast_c)}")
    if projections:
        pt = [dt.datetime.fromisoformat(p["time"].replace("Z", "+00:00")).astimezone(tz) for p in projections]
        pm = np.array([p["predicted_min_c"] for p in projections], dtype=float)
        pb = np.array([p["band_c"] or 0.0 for p in projections], dtype=float)
        ax.fill_between(pt, _conv(display, pm - pb), _conv(display, pm + pb), color="purple", alpha=0.15,
                        label="projected minimum and its range")
    if dusk_forecast_c is not None:
        ys.append(dusk_forecast_c)
    lo, hi = _conv(display, min(ys)), _conv(display, max(ys))
    pad = 0.08 * (hi - lo) + (1.0 if display.unit == "degC" else 2.0)
    ax.set_ylim(lo - pad, hi + pad)  # an early, wide range right after sunset does not squash the night
    ax.set_ylabel(f"temperature ({display.symbol})")
    ax.set_title(f"{block.id}: night of {night.date}\n{sun_times_words(night, display.time)}")
    ax.grid(alpha=0.3)
    _legend_below(ax)


def _sun_lines(ax, night: Night, tz) -> None:
    """Grey lines at sunset and sunrise; none at a stand-in where the Sun does not set or rise."""
    for when, missing in ((night.sunset_utc, night.no_sunset), (night.sunrise_utc, night.no_sunrise)):
        if not missing:
            ax.axvline(when.astimezone(tz), color="grey", lw=0.8)


def _lower(ax2, lower, block, cfg, series, night, display, start, end) -> None:
    tz = display.tz
    k = delta_c_to_f(1.0) if display.unit == "degF" else 1.0  # a difference: no 32-degree offset
    _sun_lines(ax2, night, tz)
    if lower.tower is not None:
        crop = [s.id for s in cfg.stations if s.block == cfg.station(lower.tower).block and s.role == "crop"
                and (s.id, "air_temperature") in series]
        tt, tv = series[(lower.tower, "air_temperature")]
        sel = (tt >= start) & (tt <= end)
        if crop:
            ct, cv = min((series[(c, "air_temperature")] for c in crop), key=lambda x: float(np.min(x[1])))
            inv = tv[sel] - np.interp(tt[sel], ct, cv)
            ax2.plot(_times(tt[sel], tz), inv * k, color="tab:green", lw=1.5, label="inversion (tower minus crop)")
            ax2.axhline(FANS_USEFUL_INVERSION_C * k, color="tab:green", lw=0.8, ls=":",
                        label=f"enough for fans ({display.delta(FANS_USEFUL_INVERSION_C)})")
        ax2.set_ylabel(f"inversion ({display.symbol})")
    ax3 = ax2.twinx() if lower.tower is not None else ax2
    wk = MPH_PER_M_S if display.us else 1.0
    for sid in lower.wind_stations:
        wt, wv = series[(sid, "wind_speed")]
        sel = (wt >= start) & (wt <= end)
        ax3.plot(_times(wt[sel], tz), wv[sel] * wk, color="tab:blue", lw=1.2, alpha=0.8, label=f"{sid} wind")
    limit = WIND_LIMITS.get(block.protection)
    if lower.wind_stations and limit is not None:
        ax3.axhline(limit[0] * wk, color="tab:blue", lw=0.8, ls=":",
                    label=f"{limit[1]} ({display.wind_limit(limit[0])})")
    if lower.wind_stations:
        ax3.set_ylabel(f"wind ({'mph' if display.us else 'm/s'})")
    ax2.grid(alpha=0.3)
    h1, l1 = ax2.get_legend_handles_labels()
    h2, l2 = (ax3.get_legend_handles_labels() if ax3 is not ax2 else ([], []))
    if h1 or h2:
        ax2.legend(h1 + h2, l1 + l2, loc="upper left", bbox_to_anchor=(0.0, -0.3), ncol=1, fontsize=FONT - 1,
                   frameon=False, borderaxespad=0.0)
