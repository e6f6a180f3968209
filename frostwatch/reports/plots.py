"""PNG plots of a night, with matplotlib's Agg backend (no display needed on a Pi)."""

from __future__ import annotations

import datetime as dt
from pathlib import Path

import matplotlib

matplotlib.use("Agg")
import matplotlib.dates as mdates  # noqa: E402
import matplotlib.pyplot as plt  # noqa: E402
import numpy as np  # noqa: E402

from frostwatch.config import Block, Config  # noqa: E402
from frostwatch.display import Display  # noqa: E402
from frostwatch.forecast import Series  # noqa: E402
from frostwatch.night import Night  # noqa: E402
from frostwatch.physics import humidity  # noqa: E402
from frostwatch.units import c_to_f  # noqa: E402

CROP_COLORS = ("tab:blue", "tab:brown", "tab:gray", "black")  # never red: red is for T10/T90


def _conv(d: Display, v):
    return c_to_f(np.asarray(v)) if d.unit == "degF" else np.asarray(v)


def _times(t_s: np.ndarray, tz) -> list[dt.datetime]:
    return [dt.datetime.fromtimestamp(float(x), tz=dt.UTC).astimezone(tz) for x in t_s]


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
    nowcast band, dew point and wet bulb, protection runs shaded; wind and the inversion below."""
    tz = display.tz
    start = night.sunset_utc.timestamp() - 3 * 3600
    end = night.sunrise_utc.timestamp() + 3 * 3600
    fig, (ax, ax2) = plt.subplots(2, 1, figsize=(10, 7), sharex=True, gridspec_kw={"height_ratios": [3, 1.4]})
    crop_air = {}
    n_crop = 0
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
        ax.plot(_times(t[sel], tz), _conv(display, v[sel]), style, color=color, lw=1.5,
                label=f"{st.id} air ({st.height_m:g} m)")
        if st.role == "crop":
            crop_air[st.id] = (t[sel], v[sel])
        if st.role == "crop" and (st.id, "dew_point_temperature") in series:
            td_t, td_v = series[(st.id, "dew_point_temperature")]
            s2 = (td_t >= start) & (td_t <= end)
            if s2.any():
                ax.plot(_times(td_t[s2], tz), _conv(display, td_v[s2]), ":", color="tab:orange", lw=1.2,
                        label=f"{st.id} dew point")
                air_at = np.interp(td_t[s2], t, v)
                wb = humidity.wet_bulb_c_from_dew_point(air_at, np.minimum(td_v[s2], air_at))
                ax.plot(_times(td_t[s2], tz), _conv(display, wb), "-.", color="tab:olive", lw=1.2,
                        label=f"{st.id} wet bulb")
        if st.role == "crop" and (st.id, "relative_humidity") in series and (st.id, "dew_point_temperature") not in series:
            rh_t, rh_v = series[(st.id, "relative_humidity")]
            s2 = (rh_t >= start) & (rh_t <= end)
            if s2.any():
                air_at = np.interp(rh_t[s2], t, v)
                td = humidity.dew_point_c_from_rel_humidity(air_at, np.clip(rh_v[s2], 1, 100))
                ax.plot(_times(rh_t[s2], tz), _conv(display, td), ":", color="tab:orange", lw=1.2,
                        label=f"{st.id} dew point (from humidity)")
                wb = humidity.wet_bulb_c_from_dew_point(air_at, np.minimum(td, air_at))
                ax.plot(_times(rh_t[s2], tz), _conv(display, wb), "-.", color="tab:olive", lw=1.2,
                        label=f"{st.id} wet bulb")
    ax.axhline(_conv(display, block.kill_10pct_c), color="tab:red", lw=1.2, label=f"T10 {display.temp(block.kill_10pct_c)}")
    ax.axhline(_conv(display, block.kill_90pct_c), color="darkred", lw=1.2, ls="--", label=f"T90 {display.temp(block.kill_90pct_c)}")
    ax.axhline(_conv(display, block.kill_10pct_c + block.margin_c), color="salmon", lw=1, ls=":",
               label=f"T10 + margin {display.temp(block.kill_10pct_c + block.margin_c)} (act line)")
    for when, name in ((night.sunset_utc, "sunset"), (night.sunrise_utc, "sunrise")):
        for a in (ax, ax2):
            a.axvline(when.astimezone(tz), color="grey", lw=0.8)
        ax2.text(when.astimezone(tz), 0.02, f" {name} {display.time(when)}", transform=ax2.get_xaxis_transform(),
                 va="bottom", fontsize=8, color="dimgrey")
    for k, r in enumerate(runs or []):
        stop = r.stop_utc or night.sunrise_utc + dt.timedelta(hours=2)
        what = "protection ran" if r.source == "sensor" else "protection (from acknowledgement)"
        ax.axvspan(r.start_utc.astimezone(tz), stop.astimezone(tz), color="tab:cyan", alpha=0.12,
                   label=what if k == 0 else None)
    if dusk_forecast_c is not None:
        ax.plot([night.dusk_utc.astimezone(tz), night.sunrise_utc.astimezone(tz)],
                [_conv(display, dusk_forecast_c)] * 2, color="purple", lw=1, ls="--",
                label=f"dusk forecast of the minimum {display.temp(dusk_forecast_c)}")
    if projections:
        pt = [dt.datetime.fromisoformat(p["time"].replace("Z", "+00:00")).astimezone(tz) for p in projections]
        pm = np.array([p["predicted_min_c"] for p in projections], dtype=float)
        pb = np.array([p["band_c"] or 0.0 for p in projections], dtype=float)
        ax.fill_between(pt, _conv(display, pm - pb), _conv(display, pm + pb), color="purple", alpha=0.12,
                        label="nowcast: projected minimum +/- band, as projected at each time")
    ax.set_ylabel(f"temperature ({display.symbol})")
    ax.set_title(f"{cfg.site.name}: block {block.id} ({block.crop}, {block.stage}), night of {night.date}")
    ax.grid(alpha=0.3)
    ax.legend(fontsize=7, ncol=2, loc="upper right", framealpha=0.9)
    # lower panel: inversion and wind
    towers = cfg.stations_of(block.id, role="tower")
    if towers and crop_air and (towers[0].id, "air_temperature") in series:
        tt, tv = series[(towers[0].id, "air_temperature")]
        ct, cv = min(crop_air.values(), key=lambda x: float(np.min(x[1])))
        sel = (tt >= start) & (tt <= end)
        inv = tv[sel] - np.interp(tt[sel], ct, cv)
        k = 9.0 / 5.0 if display.unit == "degF" else 1.0
        ax2.plot(_times(tt[sel], tz), inv * k, color="tab:green", label="inversion (tower - crop)")
        ax2.axhline(1.5 * k, color="tab:green", lw=0.8, ls=":", label="useful inversion for fans (about 1.5 °C)")
    else:
        ax2.text(0.5, 0.5, "no tower sensor in this block: inversion not measured", transform=ax2.transAxes,
                 ha="center", va="center", fontsize=9, color="dimgrey")
        ax2.set_yticks([])
    ax2.set_ylabel(f"inversion ({display.symbol})")
    ax3 = ax2.twinx()
    for st in cfg.stations_of(block.id) + [s for s in cfg.stations if s.block is None]:
        if (st.id, "wind_speed") in series:
            wt, wv = series[(st.id, "wind_speed")]
            sel = (wt >= start) & (wt <= end)
            ax3.plot(_times(wt[sel], tz), wv[sel], color="tab:blue", lw=1, alpha=0.7, label=f"{st.id} wind")
    ax3.axhline(2.5, color="tab:blue", lw=0.8, ls=":", label="wind above this: little inversion (2.5 m/s)")
    ax3.set_ylabel("wind (m/s)")
    ax2.grid(alpha=0.3)
    h1, l1 = ax2.get_legend_handles_labels()
    h2, l2 = ax3.get_legend_handles_labels()
    if h1 or h2:
        ax2.legend(h1 + h2, l1 + l2, fontsize=7, loc="upper left")
    ax2.xaxis.set_major_formatter(mdates.DateFormatter("%H:%M", tz=tz))
    ax2.set_xlabel(f"local time ({cfg.site.timezone})")
    fig.tight_layout()
    fig.savefig(path, dpi=90)
    plt.close(fig)
    return path
