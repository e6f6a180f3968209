"""Synthetic sites and stores for the benchmarks (not a benchmark itself).

An invented site at the demo farm's place (46.4 N, 120.3 W) with N blocks of four stations
each: three at crop height (1.5 m, air temperature and relative humidity) and one on a 10 m tower
(air temperature and wind speed). A night of 1-minute readings follows a radiation night: a mild
afternoon, then Reuter's square-root cooling after sunset (frost-physics.md), an inversion of
about 2 degC at the tower, dew point near 0 degC, a light wind. Values are deterministic
(seeded), so every run reads the same store.

Stores are generated fast: executemany in big transactions with synchronous=OFF for the
generation only; the store is then closed and reopened with frostwatch's own settings
(WAL, synchronous=FULL) before anything is timed.
"""

from __future__ import annotations

import datetime as dt
import math
import sqlite3
import tomllib
from collections.abc import Iterator
from importlib import resources
from pathlib import Path

import numpy as np

EVENING = dt.date(2027, 4, 14)  # the evening of the benchmark night (local date)
STEP_S = 60


def demo_raw() -> dict:
    text = resources.files("frostwatch.sample_logs").joinpath("demo-farm.toml").read_text(encoding="utf-8")
    return tomllib.loads(text)


def site_raw(n_blocks: int, db_path: Path, extra_stations: int = 0, broker_port: int = 1883) -> dict:
    """A config dict: `n_blocks` blocks of 4 stations, plus `extra_stations` site-wide ones."""
    raw = demo_raw()
    crops = [("apple", "full bloom", "wind_machine"), ("sweet cherry", "full bloom", "overtree_sprinkler"),
             ("pear", "tight cluster", "none")]
    blocks, stations = [], []
    for i in range(n_blocks):
        crop, stage, prot = crops[i % len(crops)]
        b = {"id": f"b{i:03d}", "crop": crop, "stage": stage, "protection": prot, "margin_c": 2.0,
             "mobilisation_min": 30}
        if prot == "overtree_sprinkler":
            b.update(application_rate_mm_h=3.5, area_ha=4.0, water_supply_l_s=45, margin_c=1.0)
        if prot == "wind_machine":
            b["wind_machines"] = 2
        blocks.append(b)
        for k in range(3):
            stations.append({"id": f"b{i:03d}-low{k}", "block": b["id"], "height_m": 1.5, "interval_s": 60})
        stations.append({"id": f"b{i:03d}-tower", "block": b["id"], "height_m": 10.0, "interval_s": 60})
    for k in range(extra_stations):
        stations.append({"id": f"site-{k:02d}", "height_m": 2.0, "interval_s": 60})
    raw["blocks"] = blocks
    raw["stations"] = stations
    raw["storage"]["path"] = str(db_path)
    raw["broker"]["port"] = broker_port
    raw.pop("contacts", None)
    raw["alerts"] = {"route": {"default": ["console"]}}
    raw["channels"] = [{"name": "console", "type": "console"}]
    return raw


def make_config(n_blocks: int, work: Path, extra_stations: int = 0, broker_port: int = 1883):
    from frostwatch.config import config_from_dict

    raw = site_raw(n_blocks, work / "bench.db", extra_stations, broker_port)
    return config_from_dict(raw, work / "bench.toml")


def toml_of(raw: dict) -> str:
    """A minimal TOML writer for the config dicts above (tables, arrays of tables, scalars)."""

    def val(v) -> str:
        if isinstance(v, bool):
            return "true" if v else "false"
        if isinstance(v, (int, float)):
            return repr(v)
        if isinstance(v, str):
            return '"' + v.replace("\\", "\\\\").replace('"', '\\"') + '"'
        if isinstance(v, list):
            return "[" + ", ".join(val(x) for x in v) + "]"
        if isinstance(v, dict):
            return "{ " + ", ".join(f"{k} = {val(x)}" for k, x in v.items()) + " }"
        raise TypeError(type(v))

    out: list[str] = []
    for sec, body in raw.items():
        if isinstance(body, list):
            for item in body:
                out.append(f"[[{sec}]]")
                out += [f"{k} = {val(v)}" for k, v in item.items()]
                out.append("")
        else:
            out.append(f"[{sec}]")
            subs = {k: v for k, v in body.items() if isinstance(v, dict)}
            arrs = {k: v for k, v in body.items() if isinstance(v, list) and v and isinstance(v[0], dict)}
            out += [f"{k} = {val(v)}" for k, v in body.items() if k not in subs and k not in arrs]
            out.append("")
            for k, v in subs.items():
                out.append(f"[{sec}.{k}]")
                out += [f"{kk} = {val(vv)}" for kk, vv in v.items()]
                out.append("")
            for k, v in arrs.items():
                for item in v:
                    out.append(f"[[{sec}.{k}]]")
                    out += [f"{kk} = {val(vv)}" for kk, vv in item.items()]
                    out.append("")
    return "\n".join(out) + "\n"


def night_bounds(cfg) -> tuple[dt.datetime, dt.datetime, dt.datetime]:
    """(window start = sunset - 6 h, sunset, the evaluation instant 02:00 local) of EVENING."""
    from frostwatch.night import night_of_date
    from frostwatch.pipeline import LOOKBACK

    s = cfg.site
    night = night_of_date(s.latitude, s.longitude, s.tz, EVENING)
    at = dt.datetime.combine(EVENING + dt.timedelta(days=1), dt.time(2, 0), s.tz).astimezone(dt.UTC)
    return night.sunset_utc - LOOKBACK, night.sunset_utc, at


def air_c(t_s: np.ndarray, sunset_s: float, offset_c: float) -> np.ndarray:
    """Afternoon near 15 degC, then square-root cooling after sunset (Reuter's curve form)."""
    h = np.clip((t_s - sunset_s) / 3600.0, 0.0, None)
    day = 15.0 + 2.0 * np.cos((t_s - sunset_s) / 3600.0 / 12.0 * math.pi) * (t_s < sunset_s)
    return day - 4.6 * np.sqrt(h) + offset_c


def rh_pct(temp_c: np.ndarray, dew_c: float = 0.0) -> np.ndarray:
    """Magnus form (Alduchov & Eskridge 1996 coefficients)."""
    es = lambda t: np.exp(17.625 * t / (243.04 + t))  # noqa: E731
    return np.clip(100.0 * es(np.minimum(dew_c, temp_c)) / es(temp_c), 1.0, 100.0)


def station_rows(cfg, start: dt.datetime, end: dt.datetime, step_s: int = STEP_S,
                 sunset: dt.datetime | None = None) -> Iterator[tuple]:
    """(time_ms, station, quantity, value, source) rows for every station, time-major."""
    t = np.arange(math.ceil(start.timestamp() / step_s) * step_s, end.timestamp() + 1e-6, step_s, dtype=float)
    if sunset is None:
        sunset_s = None
    else:
        sunset_s = sunset.timestamp()
    rng = np.random.default_rng(7)
    cols: list[tuple[str, str, np.ndarray]] = []
    for k, st in enumerate(cfg.stations):
        off = rng.normal(0.0, 0.6)
        if sunset_s is None:  # many days: a daily cycle around each local evening
            day = ((t - 2 * 3600.0) % 86400.0)
            temp = 8.0 + 6.0 * np.cos((day - 14 * 3600.0) / 86400.0 * 2 * math.pi) + off
        else:
            temp = air_c(t, sunset_s, off)
        temp = np.round(temp + rng.normal(0.0, 0.05, len(t)), 2)
        if st.height_m > 3.0:
            cols.append((st.id, "air_temperature", np.round(temp + 2.0 * (t > (sunset_s or 0)), 2)))
            cols.append((st.id, "wind_speed", np.round(1.0 + 0.2 * np.sin(t / 900.0 + k), 2)))
        else:
            cols.append((st.id, "air_temperature", temp))
            cols.append((st.id, "relative_humidity", np.round(rh_pct(temp), 1)))
    ms = (t * 1000).astype(np.int64).tolist()
    vals = [(sid, q, v.tolist()) for sid, q, v in cols]
    for i, m in enumerate(ms):
        for sid, q, v in vals:
            yield (m, sid, q, v[i], "bench")


def fill_store(db_path: Path, rows: Iterator[tuple], chunk: int = 200_000) -> int:
    """Insert rows fast (generation only: synchronous OFF, big transactions), then reopen normally."""
    from frostwatch.store import Store

    Store.open(db_path).close()  # schema by frostwatch's own migrations
    con = sqlite3.connect(str(db_path), isolation_level=None)
    con.execute("PRAGMA journal_mode=WAL")
    con.execute("PRAGMA synchronous=OFF")
    con.execute("PRAGMA cache_size=-200000")
    n = 0
    buf: list[tuple] = []
    sql = "INSERT OR IGNORE INTO readings(time_utc_ms, station, quantity, value, source) VALUES (?,?,?,?,?)"
    for r in rows:
        buf.append(r)
        if len(buf) >= chunk:
            con.execute("BEGIN")
            con.executemany(sql, buf)
            con.execute("COMMIT")
            n += len(buf)
            buf.clear()
    if buf:
        con.execute("BEGIN")
        con.executemany(sql, buf)
        con.execute("COMMIT")
        n += len(buf)
    con.execute("PRAGMA wal_checkpoint(TRUNCATE)")
    con.close()
    return n
