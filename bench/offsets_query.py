"""What the night report's thermometer check costs on a season-sized store: the one aggregate
(`store.reports.hourly_means`) over the last 14 days and over the whole season, and the pure
check (`forecast.offsets.sensor_offsets`) on its result.

    python -m bench.offsets_query [--quick]      (or: python -m bench offsets_query)

The store: 50 sensors each minute for 60 days (10 days with --quick), every one with an air
temperature and 10 of them (towers and site sensors) a wind speed too: 4.9 million readings
(60 days). Written straight into a store made by `Store.open` (its schema and primary key), in one
transaction, so the bench measures the read, not the ingest. The floor is a bare scan of the same
14 days (COUNT and SUM of the values over the primary key's time range), measured in the same run.
"""

from __future__ import annotations

import datetime as dt
import math
import random
import sys
import tempfile
import time
from pathlib import Path
from zoneinfo import ZoneInfo

from frostwatch.forecast.offsets import sensor_offsets
from frostwatch.store import Store
from frostwatch.store import reports as q

SENSORS, WIND_SENSORS = 50, 10
TARGET_S = 2.0  # the 14-day aggregate on this machine (a Pi 4 is a few times slower: from memory)
TZ = ZoneInfo("America/Los_Angeles")


def _fill(store: Store, days: int, start: dt.datetime) -> int:
    rnd = random.Random(7)
    t0 = int(start.timestamp() * 1000)
    n = 0
    with store.lock:
        c = store.conn
        c.execute("BEGIN")
        for minute in range(days * 24 * 60):
            ms = t0 + minute * 60_000
            base = 8.0 + 6.0 * math.sin(minute / 1440 * 2 * math.pi)
            rows = [(ms, f"s{i:02d}", "air_temperature", round(base + rnd.gauss(0, 0.2), 2), "bench")
                    for i in range(SENSORS)]
            rows += [(ms, f"s{i:02d}", "wind_speed", round(abs(3 + rnd.gauss(0, 2)), 1), "bench")
                     for i in range(WIND_SENSORS)]
            c.executemany("INSERT INTO readings(time_utc_ms, station, quantity, value, source) VALUES (?,?,?,?,?)", rows)
            n += len(rows)
        c.execute("COMMIT")
    return n


def _timed(fn, repeat: int = 3) -> tuple[float, object]:
    best, out = math.inf, None
    for _ in range(repeat):
        t = time.perf_counter()
        out = fn()
        best = min(best, time.perf_counter() - t)
    return best, out


def run(verbose: bool = True, quick: bool = False, out_dir: Path | None = None) -> dict:
    days = 10 if quick else 60
    start = dt.datetime(2027, 3, 1, 8, tzinfo=dt.UTC)
    end = start + dt.timedelta(days=days)
    with tempfile.TemporaryDirectory() as tmp:
        store = Store.open(Path(tmp) / "season.db")
        t = time.perf_counter()
        rows = _fill(store, days, start)
        fill_s = time.perf_counter() - t
        recent = end - dt.timedelta(days=14)

        def scan():
            with store.lock:
                return store.conn.execute("SELECT COUNT(*), SUM(value) FROM readings WHERE time_utc_ms >= ? AND "
                                          "time_utc_ms < ?", (int(recent.timestamp() * 1000),
                                                              int(end.timestamp() * 1000))).fetchone()

        floor_s, _ = _timed(scan)
        night_s, hourly = _timed(lambda: q.hourly_means(store, recent, end))
        roles = {f"s{i:02d}": "crop" for i in range(SENSORS)}
        check_s, check = _timed(lambda: sensor_offsets(hourly, roles, TZ, recent, end))
        season_s, season_rows = _timed(lambda: q.hourly_means(store, start, end), repeat=1)
        store.close()
    result = {
        "readings": rows, "days": days, "fill_s": round(fill_s, 1), "hourly_rows_14_days": len(hourly),
        "windy_hours_14_days": check.mixed_hours,
        "figures": [
            {"figure": "14-day hourly aggregate", "value": round(night_s, 3), "unit": "s", "target": TARGET_S,
             "floor": round(floor_s, 3), "floor_label": "bare scan of the same 14 days",
             "ratio": round(night_s / floor_s, 2), "pass": night_s <= TARGET_S},
            {"figure": "offset check on the 14-day means", "value": round(check_s, 3), "unit": "s", "target": None,
             "floor": None, "floor_label": "", "ratio": None, "pass": True},
            {"figure": f"{days}-day (season) hourly aggregate", "value": round(season_s, 3), "unit": "s",
             "target": None, "floor": None, "floor_label": "", "ratio": None, "pass": True},
        ],
        "season_hourly_rows": len(season_rows),
    }
    if verbose:
        print(f"{rows:,} readings over {days} days ({SENSORS} sensors each minute, {WIND_SENSORS} with wind), "
              f"written in {fill_s:.1f} s")
        for f in result["figures"]:
            extra = f" (floor {f['floor']} s, {f['floor_label']}; x{f['ratio']})" if f["floor"] else ""
            print(f"  {f['figure']}: {f['value']} s{extra}")
    return result


if __name__ == "__main__":
    run(quick="--quick" in sys.argv)
