"""Sensor health rules (pure): silent, stuck, out of range, low battery, out of line with the farm
(the evaluation's cross-check, `doubt_problems`), for a maintainer. Whether a
block is left unwatched is each evaluation's decision (`frostwatch.monitoring`, raised by the alert
rules as the block's `unmonitored` alert), not a health problem.

No clock and no I/O: `now_s` and the readings window are passed in. The silence and stuck rules
are the forecast's own (`forecast.usual_interval_s`, STUCK_*), so a sensor the projection leaves
out is exactly a sensor reported here. Thresholds are common practice, not from a standard:
three missed intervals for silence (reliability.md 6.3 "no data"); a 3.3 V default battery floor
suits the usual single-cell lithium or 3 x AA sensor nodes (from memory; set yours in the config).
"""

from __future__ import annotations

import json
from dataclasses import asdict, dataclass, field

import numpy as np

from frostwatch.config import Config, Station
from frostwatch.forecast import STUCK_MIN_READINGS, STUCK_WINDOW_S, Series, usual_interval_s


@dataclass(frozen=True)
class HealthRules:
    silent_after_intervals: float = 3.0
    battery_low_v: float = 3.3
    out_of_range_per_hour: int = 3  # this many implausible values in an hour make a faulty sensor


@dataclass(frozen=True)
class Problem:
    """One health problem; `key` identifies it so that it is raised once and cleared once."""

    key: str
    subject: str
    detail: str
    urgent: bool = False


@dataclass(frozen=True)
class HealthReport:
    problems: tuple[Problem, ...] = ()
    healthy_stations: frozenset[str] = field(default_factory=frozenset)


def station_problems(
    st: Station, series: Series, now_s: float, out_of_range_count: int, rules: HealthRules,
    heard_s: float | None = None,
    judge_silence: bool = True,
    rejected: tuple[float, str] | None = None,
) -> list[Problem]:
    """What is wrong with one station now. `heard_s` is the receipt time (epoch s) of its latest
    valid reading whether or not the store could keep it: a sensor that is reporting is never
    called silent because the store cannot write. `judge_silence=False` (the store cannot write,
    so what is stored says nothing about the sensors) skips the silence rule. `rejected`: (epoch s,
    why) of the station's latest rejected message; a silent station whose messages still arrive
    but are refused is reported with the reason (a new firmware's decimal comma, a wrong unit),
    not as a dead sensor."""
    out: list[Problem] = []
    times = [t for (sid, _q), (t, _v) in series.items() if sid == st.id and len(t)]
    air = series.get((st.id, "air_temperature"))
    ref_t = air[0] if air is not None and len(air[0]) else (max(times, key=lambda t: t[-1]) if times else None)
    heard_age = now_s - heard_s if heard_s is not None else float("inf")
    if not judge_silence:
        pass
    elif ref_t is None:
        if heard_age > rules.silent_after_intervals * usual_interval_s(np.empty(0), st.interval_s):
            why = _refused(rejected, heard_s)
            out.append(Problem(f"{st.id}:silent", st.id,
                               f"no valid reading: its messages arrive but are rejected: {why}" if why else
                               "no reading in the window looked at; the sensor is silent"))
    else:
        upto = ref_t[ref_t <= now_s]
        interval = usual_interval_s(upto, st.interval_s)
        age = min(now_s - float(upto[-1]) if len(upto) else float("inf"), heard_age)
        if age > rules.silent_after_intervals * interval:
            why = _refused(rejected, max(float(upto[-1]) if len(upto) else -np.inf, heard_s or -np.inf))
            out.append(Problem(
                f"{st.id}:silent", st.id,
                f"no valid reading for {age / 60:.0f} min: its messages arrive but are rejected: {why}" if why else
                f"silent for {age / 60:.0f} min (usual interval {interval / 60:.0f} min, "
                f"limit {rules.silent_after_intervals:g} intervals)",
            ))
    if air is not None and len(air[0]):
        t, v = air
        recent = v[(t >= now_s - STUCK_WINDOW_S) & (t <= now_s)]
        if len(recent) >= STUCK_MIN_READINGS and np.all(recent == recent[0]):
            out.append(Problem(f"{st.id}:stuck", st.id, f"air temperature stuck at {recent[0]:g} degC for an hour"))
    if out_of_range_count >= rules.out_of_range_per_hour:
        out.append(Problem(
            f"{st.id}:range", st.id, f"{out_of_range_count} implausible values in the last hour (kept aside); check the sensor",
        ))
    batt = series.get((st.id, "battery_voltage"))
    if batt is not None and len(batt[0]):
        t, v = batt
        upto = v[t <= now_s]
        if len(upto) and float(upto[-1]) < rules.battery_low_v:
            out.append(Problem(f"{st.id}:battery", st.id, f"battery low: {float(upto[-1]):.2f} V (limit {rules.battery_low_v:g} V)"))
    return out


def _refused(rejected: tuple[float, str] | None, last_valid_s: float | None) -> str:
    """Why the station's latest message was rejected, when that came after its last valid reading
    (its messages arrive but are refused: not a dead sensor); "" otherwise."""
    if rejected is None or (last_valid_s is not None and rejected[0] <= last_valid_s):
        return ""
    return rejected[1]


def assess(
    cfg: Config,
    series: Series,
    now_s: float,
    out_of_range: dict[str, int],
    rules: HealthRules,
    heard_s: dict[str, float] | None = None,
    judge_silence: bool = True,
    rejected: dict[str, tuple[float, str]] | None = None,
) -> HealthReport:
    """Every station's problems (for a maintainer). A block left with no healthy crop-height
    sensor is not reported here: each evaluation decides that (`frostwatch.monitoring`) and the
    alert rules raise it as an `unmonitored` alert of the block. `heard_s`: station -> receipt
    time of its latest valid reading, stored or not (see `station_problems`)."""
    problems: list[Problem] = []
    healthy: set[str] = set()
    heard_s = heard_s or {}
    for st in cfg.stations:
        ps = station_problems(st, series, now_s, out_of_range.get(st.id, 0), rules, heard_s.get(st.id), judge_silence,
                              (rejected or {}).get(st.id))
        problems.extend(ps)
        if not any(p.key.endswith((":silent", ":stuck", ":range")) for p in ps):
            healthy.add(st.id)
    return HealthReport(tuple(problems), frozenset(healthy))


SENSOR_KINDS = ("silent", "stuck", "range", "battery", "implausible")  # the problems of one station (key "STATION:kind")


def problems_to_json(active: dict[str, Problem]) -> str:
    """The open problems as JSON text (the daemon keeps them in the store across a restart)."""
    return json.dumps({k: asdict(p) for k, p in sorted(active.items())}, sort_keys=True)


def problems_from_json(text: str, station_ids: set[str]) -> dict[str, Problem]:
    """`problems_to_json` read back: key -> Problem. A sensor problem of a station no longer in
    the config is left out (it would "recover" at the first check). Raises ValueError when the
    text is not such a document."""
    doc = json.loads(text)
    if not isinstance(doc, dict):
        raise ValueError("not an object of problems")
    out: dict[str, Problem] = {}
    for k, v in doc.items():
        p = Problem(key=str(v["key"]), subject=str(v["subject"]), detail=str(v["detail"]), urgent=bool(v.get("urgent")))
        station, _, kind = k.partition(":")
        if kind in SENSOR_KINDS and station not in station_ids:
            continue
        out[k] = p
    return out


def doubt_problems(doubts: dict, display) -> list[Problem]:
    """The thermometers the last evaluation's cross-check doubts (`forecast.crosscheck`, through
    `pipeline.Evaluation.doubts`), as problems for a maintainer: the same decision the blocks
    were judged by, worded as the block's own alert words it (`advice.message.doubt_words`)."""
    from frostwatch.advice.message import doubt_words

    return [Problem(f"{sid}:implausible", sid, doubt_words(x, display)) for sid, x in sorted(doubts.items())]


def transitions(active: dict[str, Problem], report: HealthReport) -> tuple[list[Problem], list[Problem], dict[str, Problem]]:
    """(newly raised, cleared, new active set): each problem is announced once and cleared once;
    a problem that turns urgent is raised again."""
    now = {p.key: p for p in report.problems}
    raised = [p for k, p in now.items() if k not in active or (p.urgent and not active[k].urgent)]
    cleared = [p for k, p in active.items() if k not in now]
    return raised, cleared, now
