"""A generated spring for the season-scale replay: 60 nights, 20 sensors each minute, 1.7 million
readings (not a benchmark itself; bench/replay.py times it).

    python -m bench.spring OUT_DIR [--nights 60] [--blocks 5]      # writes spring.csv, spring.toml

An invented farm at the demo farm's place (46.4 N, 120.3 W, America/Los_Angeles) from 1 April:
five blocks (apple with wind machines, sweet cherry with over-tree sprinklers, pear, apple,
cherry), each with four sensors reporting every minute: two crop-height air temperatures and a
humidity sensor at 1.5 m (two stations), and the 10 m tower's air temperature. Nights vary with
a seeded draw: clear calm radiation nights (Reuter's square-root cooling after sunset, an
inversion at the tower), cloudy nights that barely cool, windy nights without an inversion; a
handful of clear nights fall below the crops' critical temperatures, so the replay issues alerts.
Times are written in local daylight time (-07:00) as a logger would. Twenty rows are broken on
purpose (one of each kind the row parser names), so the bulk path's fallback is exercised.
Everything is invented and deterministic.
"""

from __future__ import annotations

import datetime as dt
import sys
from pathlib import Path

import numpy as np

from bench import synth

FIRST_EVENING = dt.date(2027, 4, 1)
OFFSET = dt.timezone(dt.timedelta(hours=-7))  # PDT all April and May
CROPS = [("apple", "full bloom", "wind_machine"), ("sweet cherry", "full bloom", "overtree_sprinkler"),
         ("pear", "full bloom", "none"), ("apple", "post bloom", "wind_machine"), ("sweet cherry", "post bloom", "none")]
BROKEN = [  # (time text, station, quantity, value, unit): one of each kind of bad row
    ("twenty past eight", None, "air_temperature", "7.3", "degC"),
    ("2027-04-03T20:02:00", None, "air_temperature", "7.3", "degC"),
    (None, "nowhere-low", "air_temperature", "7.3", "degC"),
    (None, None, "air_temprature", "7.3", "degC"),
    (None, None, "air_temperature", "seven", "degC"),
    (None, None, "air_temperature", "", "degC"),
    (None, None, "air_temperature", "NaN", "degC"),
    (None, None, "air_temperature", "inf", "degC"),
    (None, None, "air_temperature", "85.0", "degC"),
    (None, None, "air_temperature", "7.3", "furlongs"),
    (None, None, "relative_humidity", "0.82", "%"),
    (None, None, "relative_humidity", "130", "%"),
    (None, None, "wind_speed", "-0.4", "m s-1"),
    (None, None, "air_temperature", "7.3", None),  # a short row
    (None, None, "air_temperature", "7.3", "mph"),
    (None, None, "wind_machine_running", "0.5", "1"),
    ("2027-04-03T20:61:00-07:00", None, "air_temperature", "7.3", "degC"),
    ("2027-02-30T20:00:00-07:00", None, "air_temperature", "7.3", "degC"),
    (None, "", "air_temperature", "7.3", "degC"),
    (None, None, "air_temperature", "1_0", "degC"),  # Python reads 1_0 as 10: the row parser keeps it
]


def site_raw(n_blocks: int, db_path: Path) -> dict:
    raw = synth.demo_raw()
    blocks, stations = [], []
    for i in range(n_blocks):
        crop, stage, prot = CROPS[i % len(CROPS)]
        b = {"id": f"block{i + 1}", "crop": crop, "stage": stage, "protection": prot, "margin_c": 2.0,
             "mobilisation_min": 30}
        if prot == "overtree_sprinkler":
            b.update(application_rate_mm_h=3.5, area_ha=4.0, water_supply_l_s=45, margin_c=1.0)
        if prot == "wind_machine":
            b["wind_machines"] = 2
        blocks.append(b)
        stations.append({"id": f"{b['id']}-low", "block": b["id"], "height_m": 1.5, "interval_s": 60})
        stations.append({"id": f"{b['id']}-low-b", "block": b["id"], "height_m": 1.5, "interval_s": 60})
        stations.append({"id": f"{b['id']}-tower", "block": b["id"], "height_m": 10.0, "interval_s": 60})
    raw["blocks"] = blocks
    raw["stations"] = stations
    raw["storage"]["path"] = str(db_path)
    raw.pop("contacts", None)
    raw["alerts"] = {"route": {"default": ["console"]}}
    raw["channels"] = [{"name": "console", "type": "console"}]
    raw.pop("daemon", None)
    return raw


def _night_weather(rng: np.random.Generator, n: int) -> dict[str, np.ndarray]:
    """Per night: cooling amplitude (K at sqrt(h)), afternoon maximum, dew point, wind, inversion."""
    kind = rng.choice(["clear", "cloudy", "windy"], size=n, p=[0.5, 0.3, 0.2])
    tmax = rng.normal(16.0, 4.0, n)
    b = np.where(kind == "clear", rng.uniform(3.0, 5.0, n), np.where(kind == "cloudy", rng.uniform(0.6, 1.4, n),
                                                                       rng.uniform(1.2, 2.0, n)))
    dew = tmax - rng.uniform(10.0, 16.0, n)
    wind = np.where(kind == "windy", rng.uniform(3.0, 6.0, n), rng.uniform(0.3, 1.2, n))
    inversion = np.where(kind == "clear", rng.uniform(1.5, 3.5, n), np.where(kind == "cloudy", 0.4, 0.1))
    return {"b": b, "tmax": tmax, "dew": dew, "wind": wind, "inversion": inversion}


def series(cfg, nights: int, seed: int = 19) -> tuple[np.ndarray, list[tuple[str, str, np.ndarray]]]:
    """(minute times in s, [(station, quantity, values)]) for `nights` nights from FIRST_EVENING 12:00 local."""
    from frostwatch.night import night_of_date

    s = cfg.site
    start = dt.datetime.combine(FIRST_EVENING, dt.time(12, 0), OFFSET).timestamp()
    t = start + 60.0 * np.arange(nights * 1440)
    rng = np.random.default_rng(seed)
    w = _night_weather(rng, nights)
    day = np.minimum((t - start) // 86400, nights - 1).astype(int)
    sunsets = np.array([night_of_date(s.latitude, s.longitude, s.tz, FIRST_EVENING + dt.timedelta(days=k)).sunset_utc.timestamp()
                        for k in range(nights)])
    sunrises = np.array([night_of_date(s.latitude, s.longitude, s.tz, FIRST_EVENING + dt.timedelta(days=k)).sunrise_utc.timestamp()
                         for k in range(nights)])
    ss, sr = sunsets[day], sunrises[day]
    h_after = np.clip((t - ss) / 3600.0, 0.0, None)
    # afternoon: down from the maximum toward sunset; night: square-root cooling; after sunrise: warming
    pre = w["tmax"][day] - 3.0 * np.clip((t - (ss - 4 * 3600.0)) / (4 * 3600.0), 0.0, 1.0)
    night_c = pre - w["b"][day] * np.sqrt(np.minimum(h_after, (sr - ss) / 3600.0))
    warm = np.clip((t - sr) / 3600.0, 0.0, None) * 2.5
    base = np.where(t < ss, pre, night_c + warm)
    base = np.minimum(base, w["tmax"][day])
    dew = np.minimum(w["dew"][day], base - 0.2)
    out = []
    for i, b in enumerate(cfg.blocks):
        off = -0.8 if b.crop == "pear" else 0.3 * (i % 3) - 0.3  # a cold pocket for the pears
        noise = rng.normal(0.0, 0.08, (3, len(t)))
        low = base + off + noise[0]
        night = (t > ss) & (t < sr + 1800.0)
        tower = base + off + np.where(night, w["inversion"][day] * np.minimum(h_after, 3.0) / 3.0, 0.0) + noise[1]
        out.append((f"{b.id}-low", "air_temperature", np.round(low, 2)))
        out.append((f"{b.id}-low", "relative_humidity", np.round(_rh(low, dew), 1)))
        out.append((f"{b.id}-low-b", "air_temperature", np.round(base + off + 0.3 + noise[2], 2)))
        out.append((f"{b.id}-tower", "air_temperature", np.round(tower, 2)))
    return t, out


def _rh(temp_c: np.ndarray, dew_c: np.ndarray) -> np.ndarray:
    """Magnus form (Alduchov & Eskridge 1996 coefficients), clipped to 1..100 %."""
    es = lambda x: np.exp(17.625 * x / (243.04 + x))  # noqa: E731
    return np.clip(100.0 * es(np.minimum(dew_c, temp_c)) / es(temp_c), 1.0, 100.0)


def write_spring(out_dir: Path, nights: int = 60, n_blocks: int = 5) -> tuple[Path, Path, int]:
    """Write spring.csv and spring.toml into `out_dir`; return their paths and the row count."""
    from frostwatch.config import config_from_dict

    out_dir.mkdir(parents=True, exist_ok=True)
    raw = site_raw(n_blocks, out_dir / "spring.db")
    cfg_path = out_dir / "spring.toml"
    cfg_path.write_text(synth.toml_of(raw), encoding="utf-8")
    cfg = config_from_dict(raw, cfg_path)
    t, cols = series(cfg, nights)
    stamps = np.array([dt.datetime.fromtimestamp(x, OFFSET).isoformat() for x in t])
    units = {"air_temperature": "degC", "relative_humidity": "%"}
    log = out_dir / "spring.csv"
    n = 0
    broken = iter(BROKEN)
    with log.open("w", encoding="utf-8", newline="\n") as f:
        f.write("time,station,quantity,value,unit\n")
        chunk = 1440
        for a in range(0, len(t), chunk):
            lines = []
            for i in range(a, min(a + chunk, len(t))):
                for sid, q, v in cols:
                    lines.append(f"{stamps[i]},{sid},{q},{v[i]:.6g},{units[q]}")
            n += len(lines)
            bad = next(broken, None)
            if bad is not None:  # one broken row a day, for the first twenty days
                tt, sid, q, v, u = bad
                row = [tt or stamps[a + 600], cols[0][0] if sid is None else sid, q, v]
                lines.insert(len(lines) // 2, ",".join(row + ([] if u is None else [u])))
            f.write("\n".join(lines) + "\n")
    return log, cfg_path, n


def main(argv: list[str]) -> int:
    import argparse

    ap = argparse.ArgumentParser(prog="python -m bench.spring")
    ap.add_argument("out", type=Path)
    ap.add_argument("--nights", type=int, default=60)
    ap.add_argument("--blocks", type=int, default=5)
    a = ap.parse_args(argv)
    log, cfg, n = write_spring(a.out, a.nights, a.blocks)
    print(f"{log}: {n:,} readings (+ {min(a.nights, len(BROKEN))} broken rows); config {cfg}")
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))
