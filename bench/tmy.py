"""pvlib's typical-year weather files as frostwatch sensor logs (DESIGN.md 1.1), read two ways.

Three open sites ship with pvlib (pvlib/data): Greensboro NC and Sand Point AK as TMY3
(723170TYA.CSV, 703165TY.csv) and Miami FL as TMY2 (12839.tm2). Each becomes one screen-height
station in one block, with air temperature, dew point, wind speed, total cloud cover and pressure.

Conventions, from the user's manuals and checked on the files:

- Both formats stamp each row with the *end* of its hour in local *standard* time (no daylight
  saving; the header gives the UTC offset): TMY3 "Time (HH:MM)" runs 01:00..24:00, TMY2's hour
  field 01..24 (Wilcox & Marion 2008, NREL/TP-581-43156, sec. 1.3; Marion & Urban 1995, TMY2
  user's manual, Table 3-1). 24:00 is 00:00 of the next day.
- Radiation fields are totals over the hour *before* the stamp; the meteorological fields we use
  (dry bulb, dew point, wind, cloud cover, pressure) are observations *at* the stamp ("at the
  time indicated", both manuals). So a reading is written at the stamp itself, not at the middle
  of the hour, and a forecast issued at sunset + 2 h knows the last row at or before that time.
- Each month comes from a different source year. The real dates are kept, so a night that
  crosses a month boundary has a gap and is neither scored nor learned from (frostwatch drops a
  night whose readings do not cover it).
- The file's fixed UTC offset is the site's time zone (Etc/GMT+N), not the civil zone: a civil
  zone would put summer rows an hour off where daylight saving applies.

`read_raw` parses the files with the csv module and fixed columns from the manuals; `read_pvlib`
goes through pvlib.iotools.read_tmy3 / read_tmy2 and undoes two of pvlib's conventions that differ
from the manuals (see `PVLIB_DIFFERENCES`). tests/test_tmy_conversion.py shows the two agree
row for row, and that the raw columns are the right ones (relative humidity recomputed from the
dry bulb and dew point matches the file's own RH column).
"""

from __future__ import annotations

import csv
import dataclasses
import datetime as dt
import os
from pathlib import Path

import numpy as np

PVLIB_DIFFERENCES = (
    "read_tmy2 stamps hour HH of the file at HH-1:00 (hour-beginning), an hour before the "
    "manual's hour-ending time at which the dry bulb and dew point were observed",
    "read_tmy2 gives every row the year of the file's first row, splicing the months of "
    "different source years into one continuous year",
    "read_tmy3 moves a leap year's 28 Feb 24:00 (29 Feb 00:00) to 1 Mar 00:00",
)

QUANTITIES = {  # field -> (sensor-log quantity, unit)
    "temp_c": ("air_temperature", "degC"),
    "dew_c": ("dew_point_temperature", "degC"),
    "wind_m_s": ("wind_speed", "m s-1"),
    "cloud_frac": ("cloud_area_fraction", "1"),
    "pressure_hpa": ("air_pressure", "hPa"),
    "wind_dir_deg": ("wind_from_direction", "degree"),
}
# physically plausible ranges; a value outside is a missing-data code (-9900, 9999, 99 ...)
VALID = {
    "temp_c": (-60.0, 60.0), "dew_c": (-70.0, 40.0), "wind_m_s": (0.0, 60.0),
    "cloud_frac": (0.0, 1.0), "pressure_hpa": (500.0, 1100.0), "rh_pct": (0.0, 100.0),
    "wind_dir_deg": (0.0, 360.0), "ghi_wh_m2": (0.0, 1500.0),
}


@dataclasses.dataclass(frozen=True)
class Site:
    key: str
    file: str
    kind: str  # "tmy3" or "tmy2"
    station: str
    cold_below_c: float  # the site's "cold nights" class: observed minimum below this
    tuned_on: bool  # True where frostwatch's constants were tuned (the others are held out)


SITES = {
    "greensboro": Site("greensboro", "723170TYA.CSV", "tmy3", "gso-screen", 10.0, True),
    "sand_point": Site("sand_point", "703165TY.csv", "tmy3", "sdp-screen", 10.0, True),
    "miami": Site("miami", "12839.tm2", "tmy2", "mia-screen", 15.0, False),
}
BLOCK = "field"


@dataclasses.dataclass
class Hourly:
    """One site's hourly rows: UTC epoch seconds and the fields of `QUANTITIES` (NaN = missing)."""

    name: str
    latitude: float
    longitude: float
    elevation_m: float
    utc_offset_h: float
    time_s: np.ndarray
    fields: dict[str, np.ndarray]


def unknown_site(args: list[str]) -> str | None:
    """The message for the first of a bench's site arguments that is not one of `SITES`, or None."""
    unknown = [a for a in args if a not in SITES]
    return f"unknown site {unknown[0]!r}; expected one of {', '.join(SITES)}" if unknown else None


def data_dir() -> Path:
    import pvlib

    return Path(os.path.dirname(pvlib.__file__)) / "data"


def _clean(name: str, values) -> np.ndarray:
    v = np.asarray(values, dtype=float)
    lo, hi = VALID[name]
    return np.where((v >= lo) & (v <= hi), v, np.nan)


def _utc_s(local: list[dt.datetime], offset_h: float) -> np.ndarray:
    return np.array([(t - dt.timedelta(hours=offset_h)).replace(tzinfo=dt.UTC).timestamp() for t in local])


def _stamp(date: dt.date, hour: int) -> dt.datetime:
    """Local standard time of an hour-ending stamp (hour 24 is 00:00 of the next day)."""
    return dt.datetime(date.year, date.month, date.day) + dt.timedelta(hours=hour)


def read_raw(site: Site, folder: Path | None = None) -> Hourly:
    """The file parsed from its manual's layout, without pvlib."""
    path = (folder or data_dir()) / site.file
    if site.kind == "tmy3":
        with open(path, newline="", encoding="utf-8") as f:
            rows = list(csv.reader(f))
        head = rows[0]
        names = rows[1]
        col = {n: i for i, n in enumerate(names)}
        body = rows[2:]
        local = []
        for r in body:
            m, d, y = (int(x) for x in r[col["Date (MM/DD/YYYY)"]].split("/"))
            hh, mm = (int(x) for x in r[col["Time (HH:MM)"]].split(":"))
            local.append(_stamp(dt.date(y, m, d), hh) + dt.timedelta(minutes=mm))
        get = lambda name: [float(r[col[name]]) for r in body]  # noqa: E731
        fields = {
            "temp_c": _clean("temp_c", get("Dry-bulb (C)")),
            "dew_c": _clean("dew_c", get("Dew-point (C)")),
            "wind_m_s": _clean("wind_m_s", get("Wspd (m/s)")),
            "cloud_frac": _clean("cloud_frac", np.array(get("TotCld (tenths)")) / 10.0),
            "pressure_hpa": _clean("pressure_hpa", get("Pressure (mbar)")),
            "rh_pct": _clean("rh_pct", get("RHum (%)")),
            "wind_dir_deg": _clean("wind_dir_deg", get("Wdir (degrees)")),
            "ghi_wh_m2": _clean("ghi_wh_m2", get("GHI (W/m^2)")),
        }
        name, offset_h = head[1].strip('"'), float(head[3])
        lat, lon, elev = float(head[4]), float(head[5]), float(head[6])
    elif site.kind == "tmy2":
        lines = path.read_text(encoding="ascii").splitlines()
        h = lines[0].split()
        # header: WBAN city state tz N/S deg min E/W deg min elevation
        lat = (float(h[5]) + float(h[6]) / 60.0) * (1 if h[4] == "N" else -1)
        lon = (float(h[8]) + float(h[9]) / 60.0) * (1 if h[7] == "E" else -1)
        name, offset_h, elev = h[1], float(h[3]), float(h[10])
        # TMY2 user's manual, Table 3-1: 1-based character positions of each field
        pos = {"year": (2, 3), "month": (4, 5), "day": (6, 7), "hour": (8, 9), "totcld": (60, 61),
               "dry": (68, 71), "dew": (74, 77), "rh": (80, 82), "pres": (85, 88), "wdir": (91, 93), "ghi": (18, 21),
               "wspd": (96, 98)}
        cut = lambda ln, k: ln[pos[k][0] - 1:pos[k][1]]  # noqa: E731
        body = [ln for ln in lines[1:] if ln.strip()]
        local = []
        for ln in body:
            yy = int(cut(ln, "year"))
            local.append(_stamp(dt.date(1900 + yy, int(cut(ln, "month")), int(cut(ln, "day"))), int(cut(ln, "hour"))))
        num = lambda k: np.array([float(cut(ln, k)) for ln in body])  # noqa: E731
        fields = {
            "temp_c": _clean("temp_c", num("dry") / 10.0),
            "dew_c": _clean("dew_c", num("dew") / 10.0),
            "wind_m_s": _clean("wind_m_s", num("wspd") / 10.0),
            "cloud_frac": _clean("cloud_frac", num("totcld") / 10.0),
            "pressure_hpa": _clean("pressure_hpa", num("pres")),
            "rh_pct": _clean("rh_pct", num("rh")),
            "wind_dir_deg": _clean("wind_dir_deg", num("wdir")),
            "ghi_wh_m2": _clean("ghi_wh_m2", num("ghi")),
        }
    else:
        raise ValueError(f"{site.kind!r} is not a known file kind; expected tmy3 or tmy2")
    return Hourly(name.title(), lat, lon, elev, offset_h, _utc_s(local, offset_h), fields)


def read_pvlib(site: Site, folder: Path | None = None) -> Hourly:
    """The file through pvlib.iotools, with the conventions of `PVLIB_DIFFERENCES` undone."""
    import pvlib

    path = str((folder or data_dir()) / site.file)
    if site.kind == "tmy3":
        data, meta = pvlib.iotools.read_tmy3(path, map_variables=True)
        # undo the leap-day move: the file's own date and time say where each row belongs
        raw_dates = data["Date (MM/DD/YYYY)"].to_numpy()
        raw_times = data["Time (HH:MM)"].to_numpy()
        local = []
        for d_, t_ in zip(raw_dates, raw_times, strict=True):
            m, d, y = (int(x) for x in d_.split("/"))
            hh, mm = (int(x) for x in t_.split(":"))
            local.append(_stamp(dt.date(y, m, d), hh) + dt.timedelta(minutes=mm))
        moved = sum(1 for a, b in zip(local, data.index, strict=True) if a != b.tz_localize(None).to_pydatetime())
        assert moved <= 1, f"pvlib moved {moved} stamps; expected at most the leap-day one"
        fields = {
            "temp_c": _clean("temp_c", data["temp_air"]),
            "dew_c": _clean("dew_c", data["temp_dew"]),
            "wind_m_s": _clean("wind_m_s", data["wind_speed"]),
            "cloud_frac": _clean("cloud_frac", data["TotCld (tenths)"] / 10.0),
            "pressure_hpa": _clean("pressure_hpa", data["pressure"]),
            "rh_pct": _clean("rh_pct", data["relative_humidity"]),
            "wind_dir_deg": _clean("wind_dir_deg", data["wind_direction"]),
            "ghi_wh_m2": _clean("ghi_wh_m2", data["ghi"]),
        }
        name, offset_h = str(meta["Name"]).strip('"'), float(meta["TZ"])
        lat, lon, elev = float(meta["latitude"]), float(meta["longitude"]), float(meta["altitude"])
    else:
        data, meta = pvlib.iotools.read_tmy2(path)
        # pvlib's index is hour-beginning in the first row's year; the row's own year, month,
        # day and hour (hour-ending) say where it belongs
        local = [
            _stamp(dt.date(1900 + int(y), int(m), int(d)), int(h))
            for y, m, d, h in zip(data["year"], data["month"], data["day"], data["hour"], strict=True)
        ]
        fields = {
            "temp_c": _clean("temp_c", data["DryBulb"] / 10.0),
            "dew_c": _clean("dew_c", data["DewPoint"] / 10.0),
            "wind_m_s": _clean("wind_m_s", data["Wspd"] / 10.0),
            "cloud_frac": _clean("cloud_frac", data["TotCld"] / 10.0),
            "pressure_hpa": _clean("pressure_hpa", data["Pressure"]),
            "rh_pct": _clean("rh_pct", data["RHum"]),
            "wind_dir_deg": _clean("wind_dir_deg", data["Wdir"]),
            "ghi_wh_m2": _clean("ghi_wh_m2", data["GHI"]),
        }
        name, offset_h = str(meta["City"]), float(meta["TZ"])
        lat, lon, elev = float(meta["latitude"]), float(meta["longitude"]), float(meta["altitude"])
    return Hourly(name.title(), lat, lon, elev, offset_h, _utc_s(local, offset_h), fields)


def fixed_zone_name(offset_h: float) -> str:
    """An IANA fixed-offset zone for a whole-hour UTC offset (POSIX sign: Etc/GMT+5 is UTC-5)."""
    h = int(round(offset_h))
    return "Etc/UTC" if h == 0 else f"Etc/GMT{'+' if h < 0 else '-'}{abs(h)}"


def log_lines(site: Site, hourly: Hourly) -> list[str]:
    """Sensor-log rows (DESIGN.md 1.1), stamped in the file's local standard time, sorted by time."""
    off = dt.timedelta(hours=hourly.utc_offset_h)
    tz = dt.timezone(off)
    stamps = [dt.datetime.fromtimestamp(float(s), tz).isoformat() for s in hourly.time_s]
    out = []
    for i, ts in enumerate(stamps):
        for fld, (q, unit) in QUANTITIES.items():
            v = hourly.fields[fld][i]
            if v == v:
                out.append(f"{ts},{site.station},{q},{v:.6g},{unit}")
    return out


def write_log_and_config(site: Site, out_dir: Path, hourly: Hourly | None = None) -> tuple[Path, Path, Hourly]:
    """Write `<site>.csv` and `<site>.toml` into `out_dir`; return their paths and the rows."""
    hourly = hourly or read_pvlib(site)
    out_dir.mkdir(parents=True, exist_ok=True)
    log = out_dir / f"{site.key}.csv"
    log.write_text("time,station,quantity,value,unit\n" + "\n".join(log_lines(site, hourly)) + "\n", encoding="utf-8")
    cfg = out_dir / f"{site.key}.toml"
    cfg.write_text(
        f'''# frostwatch config for the typical-year benchmark: one open field, one screen-height station.
[site]
name = "{hourly.name} ({site.kind.upper()})"
latitude = {hourly.latitude}
longitude = {hourly.longitude}
elevation_m = {hourly.elevation_m}
timezone = "{fixed_zone_name(hourly.utc_offset_h)}"   # typical years are local standard time all year

[[blocks]]
id = "{BLOCK}"
crop = "apple"
stage = "full bloom"
protection = "none"

[[stations]]
id = "{site.station}"
block = "{BLOCK}"
height_m = 2.0
interval_s = 3600

[storage]
path = "{site.key}.db"

[broker]
host = "127.0.0.1"
port = 1883
prefix = "frostwatch"
''',
        encoding="utf-8",
    )
    return log, cfg, hourly


def compare_log(site: Site, path: Path) -> dict:
    """How another sensor log of the same file differs from ours: rows matched on (time,
    quantity), the time shift that matches most rows, and values that differ (for finding why
    two conversions disagree)."""
    import collections

    ours: dict[tuple[float, str], float] = {}
    for line in log_lines(site, read_raw(site)):
        ts, _st, q, v, _u = line.split(",")
        ours[(dt.datetime.fromisoformat(ts).timestamp(), q)] = float(v)
    theirs: dict[tuple[float, str], float] = {}
    with open(path, newline="", encoding="utf-8") as f:
        for row in csv.DictReader(f):
            t = dt.datetime.fromisoformat(row["time"].replace("Z", "+00:00")).timestamp()
            theirs[(t, row["quantity"])] = float(row["value"])
    shifts = collections.Counter()
    for s_h in range(-3, 4):
        shifts[s_h] = sum(1 for (t, q) in theirs if (t + s_h * 3600.0, q) in ours)
    same = [k for k in theirs if k in ours]
    differ = [k for k in same if abs(theirs[k] - ours[k]) > 0.051]
    return {
        "our_rows": len(ours), "their_rows": len(theirs), "matched": len(same),
        "rows_matched_by_shift_h": dict(sorted(shifts.items())),
        "values_differing": len(differ),
        "quantities_only_ours": sorted({q for _, q in ours} - {q for _, q in theirs}),
        "quantities_only_theirs": sorted({q for _, q in theirs} - {q for _, q in ours}),
        "first_differences": [
            {"time": dt.datetime.fromtimestamp(t, dt.UTC).isoformat(), "quantity": q, "ours": ours[(t, q)], "theirs": theirs[(t, q)]}
            for t, q in sorted(differ)[:10]
        ],
    }


if __name__ == "__main__":
    import json
    import sys

    if len(sys.argv) != 4 or sys.argv[1] != "--compare" or sys.argv[2] not in SITES:
        print(f"usage: python -m bench.tmy --compare SITE LOG.csv   (SITE: {', '.join(SITES)})", file=sys.stderr)
        sys.exit(2)
    print(json.dumps(compare_log(SITES[sys.argv[2]], Path(sys.argv[3])), indent=1))
