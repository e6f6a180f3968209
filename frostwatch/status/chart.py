"""A block's night on the status page: observed crop-height air and the stored projection against
T10, T90 and the act line, as inline SVG (no script, no image file: the page's CSP allows neither).
"""

from __future__ import annotations

import datetime as dt
import html

from frostwatch.units import c_to_f

e = html.escape


def svg_chart(item: dict, snap: dict) -> str:
    """Tonight's observed crop-height air and the stored projected curve against T10/T90, as inline SVG."""
    b, dcs, obs, night, d = item["block"], item["decision"], item["observed"], snap["night"], snap["display"]
    w, h, left, right, top, bottom = 360, 210, 30, 8, 10, 24
    t0 = (night.sunset_utc - dt.timedelta(hours=1)).timestamp()
    t1 = (night.sunrise_utc + dt.timedelta(hours=1)).timestamp()
    conv = c_to_f if d.us else (lambda c: c)
    ys_c = [b.kill_10pct_c, b.kill_90pct_c, b.kill_10pct_c + b.margin_c]
    pts_obs: list[tuple[float, float]] = []
    if obs is not None:
        t, v = obs
        sel = t >= night.sunset_utc.timestamp()
        pts_obs = [(float(a), float(c)) for a, c in zip(t[sel], v[sel], strict=True)]
        ys_c += [c for _, c in pts_obs]
    pts_proj: list[tuple[float, float]] = []
    if dcs is not None and dcs.projection.curve_time_utc:
        p = dcs.projection
        pts_proj = [(x.timestamp(), float(c)) for x, c in zip(p.curve_time_utc, p.curve_air_temp_c, strict=True)
                    if x.timestamp() <= t1]
        ys_c += [c for _, c in pts_proj]
    lo = conv(min(ys_c)) - 1.0
    hi = min(conv(max(ys_c)) + 1.0, conv(b.kill_10pct_c + b.margin_c + 10.0))  # the cold end matters
    X = lambda ts: left + (w - left - right) * (ts - t0) / (t1 - t0)  # noqa: E731
    Y = lambda c: top + (h - top - bottom) * (hi - conv(c)) / (hi - lo)  # noqa: E731

    def line(pts, cls):
        if len(pts) < 2:
            return ""
        step = max(1, len(pts) // 150)
        path = " ".join(f"{X(a):.1f},{max(top, Y(c)):.1f}" for a, c in pts[::step] + [pts[-1]])
        return f'<polyline class="{cls}" points="{path}"/>'

    parts = [f'<svg viewBox="0 0 {w} {h}" class="chart" role="img" aria-label="block {e(b.id)} tonight">']
    label_y: list[float] = []
    for c_val, cls, label in ((b.kill_10pct_c + b.margin_c, "act", "act"), (b.kill_10pct_c, "t10", "T10"),
                              (b.kill_90pct_c, "t90", "T90")):
        y = Y(c_val)
        ly = y - 2
        while any(abs(ly - o) < 10 for o in label_y):  # keep the labels apart when the lines are close
            ly += 10
        label_y.append(ly)
        parts.append(f'<line class="{cls}" x1="{left}" x2="{w - right}" y1="{y:.1f}" y2="{y:.1f}"/>'
                     f'<text x="{left + 3}" y="{ly:.1f}" class="lbl">{label} {d.temp(c_val)}</text>')
    for k in range(int(lo) + 1, int(hi) + 1):
        if k % (2 if hi - lo < 14 else 5) == 0:
            y = top + (h - top - bottom) * (hi - k) / (hi - lo)
            parts.append(f'<text x="{left - 3}" y="{y + 4:.1f}" text-anchor="end" class="ax">{k}</text>')
    start_hour = dt.datetime.fromtimestamp(t0, dt.UTC).astimezone(d.tz).replace(minute=0, second=0, microsecond=0)
    hour = start_hour + dt.timedelta(hours=1)
    while hour.timestamp() < t1:
        if hour.hour % 3 == 0:
            parts.append(f'<text x="{X(hour.timestamp()):.1f}" y="{h - 6}" text-anchor="middle" class="ax">{hour:%H}:00</text>')
        hour += dt.timedelta(hours=1)
    parts.append(line(pts_obs, "obs"))
    parts.append(line(pts_proj, "proj"))
    now_x = X(snap["now_utc"].timestamp())
    if left <= now_x <= w - right:
        parts.append(f'<line class="now" x1="{now_x:.1f}" x2="{now_x:.1f}" y1="{top}" y2="{h - bottom}"/>')
    parts.append("</svg>")
    return "".join(parts)
