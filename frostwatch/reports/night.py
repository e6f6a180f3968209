"""The night log for a farm manager: an HTML page (no internet needed), PNG plots and CSVs.

`collect_night` gathers a night's figures from the store; `write_night_report` writes
`night-YYYY-MM-DD.html`, `-<block>.png`, `-blocks.csv`, `-water.csv` and `.json` (the night's
record, whose SHA-256 is printed in the page and written beside it as `.sha256`).

Raises `UsageError` when the night has no readings in the store.
"""

from __future__ import annotations

import csv
import datetime as dt
import hashlib
import json
from dataclasses import dataclass, field
from pathlib import Path

from frostwatch.config import Config
from frostwatch.decision import Decision
from frostwatch.display import Display
from frostwatch.errors import UsageError
from frostwatch.forecast.offsets import OffsetCheck
from frostwatch.night import Night, night_of_date
from frostwatch.pipeline import LOOKBACK
from frostwatch.reports.panels import lower_panel
from frostwatch.reports.plots import plot_block_night
from frostwatch.reports.settings import INSURANCE_NOTICE_H, ReportSettings, report_settings
from frostwatch.reports.summary import BlockNight, block_night, left_out_of, runs_from_acks
from frostwatch.reports.thermometers import recent_offset_check
from frostwatch.reports.thermometers import record as offsets_record
from frostwatch.store import Store, from_ms
from frostwatch.store import decisions as stored_decisions
from frostwatch.store import reports as q

SPRINKLERS = ("overtree_sprinkler", "undertree_sprinkler")
__all__ = ["INSURANCE_NOTICE_H", "NightData", "BlockSection", "collect_night", "write_night_report"]


@dataclass
class BlockSection:
    bn: BlockNight
    dusk_forecast_c: float | None
    projections: list[dict]
    png: str = ""
    lower_note: str = ""  # what the plot's lower panel leaves out, and why (frostwatch.reports.panels)
    lower_shown: bool = True

    @property
    def forecast_error_c(self) -> float | None:
        """Dusk forecast minus observed minimum: positive means the night came colder than forecast."""
        if self.dusk_forecast_c is None or self.bn.min_c is None:
            return None
        return self.dusk_forecast_c - self.bn.min_c


@dataclass
class NightData:
    cfg: Config
    settings: ReportSettings
    display: Display
    night: Night
    sections: list[BlockSection]
    alerts: list[dict]
    deliveries: dict[str, list[dict]]
    acks: dict[str, list[dict]]
    health: list[dict]
    stage_changes: list[dict]
    readings_count: int
    readings_sha256: str
    files: dict[str, str] = field(default_factory=dict)
    decisions: list[Decision] = field(default_factory=list)  # the changes of the stored decisions, in time order
    offsets: OffsetCheck | None = None  # thermometers against each other in windy hours, the last 14 days

    def loss_blocks(self) -> list[BlockSection]:
        return [s for s in self.sections if s.bn.min_c is not None and s.bn.min_c <= s.bn.kill_10pct_c]

    def notice_deadline_utc(self) -> dt.datetime:
        """The latest time for a crop-insurance notice: the notice period counted from sunrise
        (the earliest a loss can be discovered)."""
        return self.night.sunrise_utc + dt.timedelta(hours=self.settings.insurance_notice_h)


def _readings_sha256(rows: list[tuple]) -> str:
    h = hashlib.sha256()
    for ms, st, qty, v in rows:
        h.update(f"{ms},{st},{qty},{v!r}\n".encode())
    return h.hexdigest()


def collect_night(cfg: Config, store: Store, evening: dt.date) -> tuple[NightData, dict]:
    """The night's figures and the readings window they came from."""
    settings = report_settings(cfg)
    d = Display(cfg.site.display_unit, cfg.site.tz)
    night = night_of_date(cfg.site.latitude, cfg.site.longitude, cfg.site.tz, evening)
    start = night.sunset_utc - LOOKBACK
    end = night.sunrise_utc + dt.timedelta(hours=6)
    series = store.readings_window(start, end)
    if not series:
        raise UsageError(
            f"{store.path}: no readings stored for the night of {evening} "
            f"({d.datetime(start)} to {d.datetime(end)}); replay or ingest that night first"
        )
    alerts = store.alerts(night.sunset_utc - dt.timedelta(hours=2), end)
    keys = [a["key"] for a in alerts]
    deliveries = q.deliveries_for(store, keys)
    acks = q.acks_for(store, keys)
    changes = {b.id: stored_decisions.changes_between(store, night.sunset_utc - dt.timedelta(hours=1), end, b.id)
               for b in cfg.blocks}
    sections = []
    for block in cfg.blocks:
        block_alerts = [a for a in alerts if a["block"] == block.id]
        ack_runs = None
        if block.protection != "none":
            ack_runs = runs_from_acks(block_alerts, acks, night.sunrise_utc + dt.timedelta(hours=2))
        bn = block_night(block, cfg, series, night, ack_runs=ack_runs, energy_kw=settings.energy_kw.get(block.id),
                         left_out=left_out_of(changes[block.id]))
        projs = store.projections(night.sunset_utc, night.sunrise_utc, block.id)
        dusk_ms = int(night.dusk_utc.timestamp() * 1000)
        dusk = [p for p in projs if p["time_utc_ms"] >= dusk_ms and p["predicted_min_c"] is not None]
        dusk_c = dusk[0]["predicted_min_c"] if dusk else None
        proj_dicts = [
            {"time": from_ms(p["time_utc_ms"]).isoformat(), "predicted_min_c": p["predicted_min_c"], "band_c": p["band_c"]}
            for p in projs if p["predicted_min_c"] is not None
        ]
        lower = lower_panel(block, cfg, series, night.sunset_utc.timestamp() - 3 * 3600,
                            night.sunrise_utc.timestamp() + 3 * 3600)
        sections.append(BlockSection(bn, dusk_c, proj_dicts, lower_note=lower.note, lower_shown=lower.shown))
    rows = q.readings_digest_rows(store, start, end)
    changes = [c for b in cfg.blocks for c in changes[b.id]]
    return NightData(
        cfg=cfg, settings=settings, display=d, night=night, sections=sections, alerts=alerts,
        deliveries=deliveries, acks=acks,
        health=store.events(start, end, kind="health"),
        stage_changes=store.events(night.sunset_utc - dt.timedelta(days=1), end, kind="stage_change"),
        readings_count=len(rows), readings_sha256=_readings_sha256(rows),
        decisions=sorted(changes, key=lambda x: (x.as_of_utc, x.block)),
        offsets=recent_offset_check(cfg, store, end),
    ), series


def decision_changes(decisions: list[Decision]) -> list[Decision]:
    """The decisions where the level, the step or the monitoring state changed (and the last)."""
    out: list[Decision] = []
    for d in decisions:
        if not out or (d.level, d.step, d.monitored) != (out[-1].level, out[-1].step, out[-1].monitored):
            out.append(d)
    if decisions and out[-1] is not decisions[-1]:
        out.append(decisions[-1])
    return out


def _r(v, nd=2):
    return "" if v is None else round(v, nd)


def _local_iso(t: dt.datetime | None, d: Display) -> str:
    return "" if t is None else t.astimezone(d.tz).isoformat()


BLOCK_CSV_COLUMNS = [
    "night", "block", "name", "crop", "stage", "protection", "coldest_station", "kill_10pct_c", "kill_90pct_c",
    "min_c", "min_at_local", "minutes_below_t10", "minutes_below_t90", "dusk_forecast_c", "forecast_error_c",
    "protection_runs_local", "protection_source", "protection_hours", "water_m3", "peak_flow_l_s", "fuel_l",
    "energy_kwh",
]
WATER_CSV_COLUMNS = [
    "night", "zone", "block_name", "method", "start_local", "stop_local", "hours", "flow_rate_l_s",
    "application_rate_mm_h", "area_ha", "volume_m3", "volume_acre_ft", "peak_flow_l_s", "peak_flow_gpm",
    "run_known_from",
]
M3_PER_ACRE_FT = 1233.48  # 1 acre-foot = 43,560 ft3 = 1233.48 m3 (exact by definition of the units)
GPM_PER_L_S = 15.850323  # US gallons per minute in 1 L/s (1 US gal = 3.785411784 L)


def block_rows(data: NightData) -> list[dict]:
    d = data.display
    out = []
    for s in data.sections:
        bn = s.bn
        b = data.cfg.block(bn.block)
        runs = "; ".join(f"{_local_iso(r.start_utc, d)}/{_local_iso(r.stop_utc, d)}" for r in bn.runs)
        out.append({
            "night": data.night.date.isoformat(), "block": bn.block, "name": b.name, "crop": bn.crop,
            "stage": bn.stage, "protection": b.protection, "coldest_station": bn.station or "",
            "kill_10pct_c": _r(bn.kill_10pct_c), "kill_90pct_c": _r(bn.kill_90pct_c), "min_c": _r(bn.min_c),
            "min_at_local": _local_iso(bn.min_at_utc, d), "minutes_below_t10": bn.minutes_below_t10,
            "minutes_below_t90": bn.minutes_below_t90, "dusk_forecast_c": _r(s.dusk_forecast_c),
            "forecast_error_c": _r(s.forecast_error_c), "protection_runs_local": runs,
            "protection_source": bn.run_quantity or "", "protection_hours": round(bn.run_hours, 2),
            "water_m3": _r(bn.water_m3, 1), "peak_flow_l_s": _r(bn.peak_flow_l_s), "fuel_l": _r(bn.fuel_l, 1),
            "energy_kwh": _r(bn.energy_kwh, 1),
        })
    return out


def water_rows(data: NightData) -> list[dict]:
    """One row per sprinkler run per zone (block), shaped for a water-rights or demand program."""
    d = data.display
    out = []
    for s in data.sections:
        b = data.cfg.block(s.bn.block)
        if b.protection not in SPRINKLERS or not b.application_rate_mm_h or not b.area_ha:
            continue
        flow_m3_h = b.application_rate_mm_h * b.area_ha * 10.0  # 1 mm over 1 ha = 10 m3
        flow_l_s = flow_m3_h / 3.6
        for r in s.bn.runs:
            vol = flow_m3_h * r.hours
            out.append({
                "night": data.night.date.isoformat(), "zone": b.id, "block_name": b.name, "method": b.protection,
                "start_local": _local_iso(r.start_utc, d), "stop_local": _local_iso(r.stop_utc, d),
                "hours": round(r.hours, 3), "flow_rate_l_s": round(flow_l_s, 2),
                "application_rate_mm_h": b.application_rate_mm_h, "area_ha": b.area_ha,
                "volume_m3": round(vol, 1), "volume_acre_ft": round(vol / M3_PER_ACRE_FT, 3),
                "peak_flow_l_s": round(flow_l_s, 2), "peak_flow_gpm": round(flow_l_s * GPM_PER_L_S, 0),
                "run_known_from": "running sensor" if r.source == "sensor" else "acknowledgement (estimated)",
            })
    return out


def _write_csv(path: Path, columns: list[str], rows: list[dict]) -> None:
    with path.open("w", newline="", encoding="utf-8") as f:
        w = csv.DictWriter(f, fieldnames=columns)
        w.writeheader()
        w.writerows(rows)


def night_record(data: NightData) -> dict:
    """The night's record as stored in `.json`: what the page shows, in SI units and UTC."""
    iso = lambda t: None if t is None else t.isoformat().replace("+00:00", "Z")  # noqa: E731
    return {
        "site": data.cfg.site.name, "night": data.night.date.isoformat(),
        "sunset_utc": iso(data.night.sunset_utc), "sunrise_utc": iso(data.night.sunrise_utc),
        "readings": {"count": data.readings_count, "sha256": data.readings_sha256},
        "blocks": [{
            "block": s.bn.block, "station": s.bn.station, "kill_10pct_c": s.bn.kill_10pct_c,
            "kill_90pct_c": s.bn.kill_90pct_c, "min_c": s.bn.min_c, "min_at": iso(s.bn.min_at_utc),
            "minutes_below_t10": s.bn.minutes_below_t10, "minutes_below_t90": s.bn.minutes_below_t90,
            "dusk_forecast_c": s.dusk_forecast_c, "forecast_error_c": s.forecast_error_c,
            "runs": [{"start": iso(r.start_utc), "stop": iso(r.stop_utc), "source": r.source} for r in s.bn.runs],
            "protection_hours": round(s.bn.run_hours, 3), "water_m3": s.bn.water_m3,
            "peak_flow_l_s": s.bn.peak_flow_l_s, "fuel_l": s.bn.fuel_l, "energy_kwh": s.bn.energy_kwh,
        } for s in data.sections],
        "alerts": [{
            "key": a["key"], "time": iso(from_ms(a["time_utc_ms"])), "block": a["block"], "level": a["level"],
            "rank": a["rank"],
            "deliveries": [{"channel": r.get("channel"), "recipient": r.get("recipient"), "status": r.get("status"),
                            "attempt": r.get("attempt")} for r in data.deliveries.get(a["key"], [])],
            "acks": [{"who": r.get("who"), "via": r.get("via"), "time": iso(from_ms(r["time_utc_ms"]))}
                     for r in data.acks.get(a["key"], [])],
        } for a in data.alerts],
        "sensor_incidents": [{"time": iso(from_ms(e["time_utc_ms"])), "subject": e["subject"], "detail": e["detail"]}
                             for e in data.health],
        "decisions": [{
            "time": iso(x.as_of_utc), "block": x.block, "level": x.level, "rank": x.rank, "monitored": x.monitored,
            "step": x.step.value, "predicted_min_c": x.projection.predicted_min_c,
            "ready_by": iso(x.plan.ready_by_utc), "alert_key": x.alert_key,
        } for x in data.decisions],
        "thermometer_offsets": None if data.offsets is None else offsets_record(data.offsets),
        "possible_loss_blocks": [s.bn.block for s in data.loss_blocks()],
        "insurance_notice_due": iso(data.notice_deadline_utc()) if data.loss_blocks() else None,
    }


def write_night_report(cfg: Config, store: Store, evening: dt.date, out_dir: Path) -> Path:
    """Write the night's page, plots and CSVs into `out_dir`; return the HTML path."""
    from frostwatch.reports.render import night_html

    data, series = collect_night(cfg, store, evening)
    out_dir.mkdir(parents=True, exist_ok=True)
    stem = f"night-{evening.isoformat()}"
    for s in data.sections:
        png = out_dir / f"{stem}-{s.bn.block}.png"
        plot_block_night(png, cfg.block(s.bn.block), cfg, series, data.night, data.display, s.projections,
                         s.dusk_forecast_c, runs=list(s.bn.runs))
        s.png = png.name
    _write_csv(out_dir / f"{stem}-blocks.csv", BLOCK_CSV_COLUMNS, block_rows(data))
    _write_csv(out_dir / f"{stem}-water.csv", WATER_CSV_COLUMNS, water_rows(data))
    record = json.dumps(night_record(data), indent=2).encode("utf-8")
    (out_dir / f"{stem}.json").write_bytes(record)
    digest = hashlib.sha256(record).hexdigest()
    (out_dir / f"{stem}.sha256").write_text(f"{digest}  {stem}.json\n", encoding="utf-8")
    data.files = {"blocks_csv": f"{stem}-blocks.csv", "water_csv": f"{stem}-water.csv", "json": f"{stem}.json",
                  "json_sha256": digest}
    page = out_dir / f"{stem}.html"
    page.write_text(night_html(data), encoding="utf-8")
    return page
