"""A night's figures per block, computed from stored readings (pure given the series).

Minimum and its time, minutes below T10 and T90 (time-weighted with linear interpolation between
readings), protection run times from `wind_machine_running` / `sprinkler_running` readings.
"""

from __future__ import annotations

import datetime as dt
from dataclasses import dataclass

import numpy as np

from frostwatch.config import Block, Config
from frostwatch.forecast import Series
from frostwatch.night import Night

MAX_GAP_S = 1800.0  # a gap longer than this between readings is not counted as time below


def minutes_below(t_s: np.ndarray, v_c: np.ndarray, threshold_c: float, max_gap_s: float = MAX_GAP_S) -> float:
    """Minutes the series spent at or below `threshold_c`, interpolating linearly between readings.

    A segment longer than `max_gap_s` (a sensor gap) is not counted.
    """
    if len(t_s) < 2:
        return 0.0
    total = 0.0
    for t0, t1, a, b in zip(t_s[:-1], t_s[1:], v_c[:-1], v_c[1:], strict=True):
        dt_s = t1 - t0
        if dt_s <= 0 or dt_s > max_gap_s:
            continue
        if a <= threshold_c and b <= threshold_c:
            total += dt_s
        elif a <= threshold_c < b or b <= threshold_c < a:
            f = (threshold_c - a) / (b - a)  # where along the segment the line is crossed
            total += dt_s * (f if a <= threshold_c else 1.0 - f)
    return total / 60.0


@dataclass(frozen=True)
class Run:
    """One protection run. `source` says how it is known: "sensor" (a running flag) or "ack"
    (estimated from the first acknowledged alert to the next stop/all-clear alert)."""

    start_utc: dt.datetime
    stop_utc: dt.datetime | None
    source: str = "sensor"

    @property
    def hours(self) -> float:
        return 0.0 if self.stop_utc is None else (self.stop_utc - self.start_utc).total_seconds() / 3600.0


def runs_from_flags(t_s: np.ndarray, flag: np.ndarray, end_s: float | None = None) -> list[Run]:
    """Protection runs from a 0/1 running series: a run starts at a 1 after a 0 (or at the start)."""
    runs: list[Run] = []
    start = None
    for t, f in zip(t_s, flag, strict=True):
        if f >= 0.5 and start is None:
            start = t
        elif f < 0.5 and start is not None:
            runs.append(Run(_utc(start), _utc(t)))
            start = None
    if start is not None:
        runs.append(Run(_utc(start), _utc(end_s) if end_s is not None else None))
    return runs


def runs_from_acks(
    alerts: list[dict], acks: dict[str, list[dict]], end_utc: dt.datetime, min_rank: int = 3
) -> list[Run]:
    """Estimated runs for a block without a running sensor: from the first acknowledgement of an
    alert of rank >= `min_rank` (standby and up) to the next alert of rank <= 1 (safe-to-stop or
    all-clear), or `end_utc` when none came. `alerts` are the block's rows, oldest first."""
    runs: list[Run] = []
    start = None
    for a in alerts:
        if start is None and a["rank"] >= min_rank and acks.get(a["key"]):
            start = min(r["time_utc_ms"] for r in acks[a["key"]])
        elif start is not None and a["rank"] <= 1 and a["time_utc_ms"] > start:
            runs.append(Run(_utc(start / 1000.0), _utc(a["time_utc_ms"] / 1000.0), "ack"))
            start = None
    if start is not None:
        runs.append(Run(_utc(start / 1000.0), end_utc, "ack"))
    return runs


def _utc(t: float) -> dt.datetime:
    return dt.datetime.fromtimestamp(float(t), tz=dt.UTC)


@dataclass(frozen=True)
class BlockNight:
    block: str
    crop: str
    stage: str
    station: str | None
    kill_10pct_c: float
    kill_90pct_c: float
    min_c: float | None
    min_at_utc: dt.datetime | None
    minutes_below_t10: float
    minutes_below_t90: float
    runs: tuple[Run, ...]
    run_quantity: str | None
    water_m3: float | None
    peak_flow_l_s: float | None
    fuel_l: float | None
    energy_kwh: float | None = None
    left_out: tuple[str, ...] = ()  # its crop-height stations the night's decisions did not trust (forecast.crosscheck)

    @property
    def run_hours(self) -> float:
        return sum(r.hours for r in self.runs)


def block_night(
    block: Block,
    cfg: Config,
    series: Series,
    night: Night,
    ack_runs: list[Run] | None = None,
    energy_kw: float | None = None,
    left_out: frozenset[str] = frozenset(),
) -> BlockNight:
    """The night's figures for a block at its coldest crop-height station (sunset to sunrise + 2 h).

    Protection runs come from `sprinkler_running` / `wind_machine_running` readings; where the
    block has no such sensor, from `ack_runs` (estimated from acknowledgements) if given.
    Fuel = block.fuel_l_per_h x run hours; energy = `energy_kw` x run hours. A station in
    `left_out` (the night's decisions did not trust it: `left_out_of`) gives no minimum: its
    readings are not the air's (a sensor sending °F).
    """
    start, end = night.sunset_utc.timestamp(), night.sunrise_utc.timestamp() + 7200.0
    best = None
    skipped = tuple(st.id for st in cfg.stations_of(block.id, role="crop") if st.id in left_out)
    for st in cfg.stations_of(block.id, role="crop"):
        key = (st.id, "air_temperature")
        if st.id in left_out:
            continue
        if key not in series:
            continue
        t, v = series[key]
        sel = (t >= start) & (t <= end)
        if not sel.any():
            continue
        i = int(np.argmin(v[sel]))
        cand = (float(v[sel][i]), st.id, t[sel], v[sel], i)
        if best is None or cand[0] < best[0]:
            best = cand
    runs: list[Run] = []
    run_q = None
    for q in ("sprinkler_running", "wind_machine_running"):
        for st in cfg.stations_of(block.id):
            if (st.id, q) in series:
                t, f = series[(st.id, q)]
                sel = (t >= start - 6 * 3600) & (t <= end)
                runs += runs_from_flags(t[sel], f[sel], end_s=float(t[sel][-1]) if sel.any() else None)
                run_q = q
    if run_q is None and ack_runs:
        runs = list(ack_runs)
        run_q = "acknowledgements"
    hours = sum(r.hours for r in runs)
    water = peak = fuel = None
    if block.protection in ("overtree_sprinkler", "undertree_sprinkler") and block.application_rate_mm_h and block.area_ha:
        water = block.application_rate_mm_h * block.area_ha * 10.0 * hours  # 1 mm on 1 ha = 10 m3
        peak = block.application_rate_mm_h * block.area_ha * 10.0 / 3.6 if runs else 0.0  # m3/h -> L/s
    if block.fuel_l_per_h:
        fuel = block.fuel_l_per_h * hours
    energy = energy_kw * hours if energy_kw else None
    if best is None:
        return BlockNight(block.id, block.crop, block.stage, None, block.kill_10pct_c, block.kill_90pct_c,
                          None, None, 0.0, 0.0, tuple(runs), run_q, water, peak, fuel, energy, skipped)
    mn, sid, t, v, i = best
    return BlockNight(
        block.id, block.crop, block.stage, sid, block.kill_10pct_c, block.kill_90pct_c, mn, _utc(t[i]),
        round(minutes_below(t, v, block.kill_10pct_c), 1), round(minutes_below(t, v, block.kill_90pct_c), 1),
        tuple(runs), run_q, water, peak, fuel, energy, skipped,
    )


def left_out_of(decisions) -> frozenset[str]:
    """The stations that any of these decisions left out (`Monitoring.doubts`, forecast.crosscheck)."""
    return frozenset(x.station for d in decisions for x in d.monitoring.doubts if x.left_out)


def no_minimum_words(bn: BlockNight) -> str:
    """Why a block's night has no minimum, in one clause."""
    if bn.left_out:
        return (f"no trusted crop-height reading this night ({', '.join(bn.left_out)} out of line with the farm's "
                "other thermometers: see the decisions)")
    return "no crop-height reading this night"
