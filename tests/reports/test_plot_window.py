"""The night plot of a block with no reading that night spans the night, not two years: with only
guide lines on it (T10, T90, sunset, sunrise) matplotlib fell back to its default of two years
either side, and drawing the 3-hour ticks of that took about a minute of CPU per block (the morning
report of a farm with one dead sensor, on a Pi)."""

from __future__ import annotations

import datetime as dt
from importlib import resources

import numpy as np

from frostwatch.config import load_config
from frostwatch.display import Display
from frostwatch.night import night_of_date
from frostwatch.reports import plots


def _drawn_axis(monkeypatch, tmp_path, block_id: str, series) -> tuple[tuple, tuple, object]:
    """Draw `block_id`'s plot of the demo farm's night of 2027-04-16 from `series`; the upper
    axis's (x range, y range) as drawn, read just before the figure is closed, and the night."""
    cfg_path = tmp_path / "demo-farm.toml"
    cfg_path.write_text(resources.files("frostwatch.sample_logs").joinpath("demo-farm.toml").read_text(encoding="utf-8"))
    cfg = load_config(cfg_path)
    night = night_of_date(cfg.site.latitude, cfg.site.longitude, cfg.site.tz, dt.date(2027, 4, 16))
    ranges = []
    close = plots.plt.close

    def keep(fig):
        ranges.append((fig.axes[0].get_xlim(), fig.axes[0].get_ylim()))
        close(fig)

    monkeypatch.setattr(plots.plt, "close", keep)
    plots.plot_block_night(tmp_path / f"{block_id}.png", cfg.block(block_id), cfg, series, night,
                           Display(cfg.site.display_unit, cfg.site.tz), [], None)
    (x_range, y_range), = ranges
    return x_range, y_range, night


def _drawn_x_span_days(monkeypatch, tmp_path, series) -> tuple[float, float]:
    (lo, hi), _, night = _drawn_axis(monkeypatch, tmp_path, "hill", series)
    window_days = (night.sunrise_utc - night.sunset_utc).total_seconds() / 86400 + 6 / 24  # 3 h either side
    return hi - lo, window_days


def test_a_block_without_readings_is_plotted_over_the_night_window(monkeypatch, tmp_path):
    span, window = _drawn_x_span_days(monkeypatch, tmp_path, {})
    assert abs(span - window) < 1e-6, (span, window)


def test_a_block_with_readings_keeps_its_own_range(monkeypatch, tmp_path):
    night = dt.datetime(2027, 4, 17, 3, 0, tzinfo=dt.UTC).timestamp()
    t = night + np.arange(-4, 5) * 3600.0
    span, window = _drawn_x_span_days(monkeypatch, tmp_path, {("hill-low", "air_temperature"): (t, np.full(9, 2.0))})
    assert 0.5 * window < span < 1.5 * window


def test_a_dry_nights_dew_point_and_wet_bulb_are_in_view(monkeypatch, tmp_path):
    """The legend names the crop-height sensor's dew point and wet bulb (the sprinklers' trigger):
    both are drawn inside the axis, however far below the air a dry night's dew point is (the
    demo's windy night: air near 0 °C, dew point -8.6 °C, below the axis before)."""
    night_start = dt.datetime(2027, 4, 17, 3, 0, tzinfo=dt.UTC).timestamp()  # the evening of 2027-04-16
    t = night_start + np.arange(0, 12) * 3600.0
    series = {("river-low", "air_temperature"): (t, np.linspace(6.0, -1.0, 12)),
              ("river-low", "dew_point_temperature"): (t, np.full(12, -12.0))}
    _, (lo, hi), _ = _drawn_axis(monkeypatch, tmp_path, "river", series)
    assert lo < -12.0 and hi > 6.0, (lo, hi)
