"""Reading a config: TOML in, every problem of every section collected, one `ConfigError` out, or a
`Config`. The sections other modules own ([alerts], [report], [status_page], [daemon], [fleet],
[[mappings]]) are checked by those modules, so that all problems are listed at once."""

from __future__ import annotations

import dataclasses
import math
import os
import tomllib
import zoneinfo
from pathlib import Path

from frostwatch.config.model import (
    DISPLAY_UNITS,
    PROTECTION_METHODS,
    SITE_ID_RE,
    SPRINKLER_METHODS,
    STATION_ROLES,
    Block,
    Broker,
    Config,
    Forecast,
    Site,
    Station,
    Storage,
    site_id_from_name,
)
from frostwatch.config.schema import (
    _ARRAY_SECTIONS,
    _NUM,
    _OPEN_SECTIONS,
    _SCHEMA,
    _check_table,
    _did_you_mean,
)
from frostwatch.errors import ConfigError


def load_config(path: str | os.PathLike) -> Config:
    """Read and validate the TOML config at `path`; raise `ConfigError` listing every problem."""
    p = Path(path)
    try:
        text = p.read_text(encoding="utf-8")
    except FileNotFoundError:
        raise ConfigError(str(p), ["the config file does not exist; write one with `frostwatch init PATH`"]) from None
    except (OSError, UnicodeDecodeError) as exc:
        raise ConfigError(str(p), [f"cannot read the file: {exc}"]) from None
    try:
        raw = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise ConfigError(str(p), [f"not valid TOML: {exc}"]) from None
    cfg = config_from_dict(raw, p)
    problems = check_open_sections(cfg)
    if problems:
        raise ConfigError(str(p), problems)
    return cfg


# The sections that belong to other parts of the product, each checked by its own module, so
# that loading a config lists every problem of every section at once.
_SECTION_VALIDATORS = (
    ("frostwatch.alerts.config", "load_alerts_config"),
    ("frostwatch.reports.settings", "report_settings"),
    ("frostwatch.reports.settings", "status_page_settings"),
    ("frostwatch.daemon_settings", "daemon_settings"),
    ("frostwatch.ingest.mappings", "mappings_from_config"),
    ("frostwatch.fleet.settings", "fleet_settings"),
)


def check_open_sections(cfg: Config) -> list[str]:
    """Every problem in [alerts], [[contacts]], [[channels]], [report], [status_page], [daemon],
    [[mappings]] and [fleet], as `section.key: ...` lines (empty when all is well)."""
    import importlib

    problems: list[str] = []
    for module, name in _SECTION_VALIDATORS:
        try:
            getattr(importlib.import_module(module), name)(cfg)
        except ConfigError as exc:
            problems.extend(p for p in exc.problems if p not in problems)
    return problems


def config_from_dict(raw: dict, path: Path | None = None) -> Config:
    """Validate a parsed config; relative storage paths are resolved against the config's folder."""
    problems: list[str] = []
    where_file = str(path) if path else "<config>"
    known_sections = list(_SCHEMA) + list(_OPEN_SECTIONS)
    for section in raw:
        if section not in known_sections:
            problems.append(
                f"{section}: unknown section{_did_you_mean(section, known_sections)}; "
                f"known sections are {', '.join(known_sections)}"
            )
    for section in ("site",):
        if section not in raw:
            problems.append(f"{section}: missing; the [{section}] table is required")

    site_v = _check_table("site", raw.get("site", {}), _SCHEMA["site"], problems) if "site" in raw else {}
    if site_v:
        lat, lon = site_v.get("latitude"), site_v.get("longitude")
        if isinstance(lat, _NUM) and not -90 <= lat <= 90:
            problems.append(f"site.latitude: {lat} is out of range; expected degrees north, -90..90")
        if isinstance(lon, _NUM) and not -180 <= lon <= 180:
            problems.append(f"site.longitude: {lon} is out of range; expected degrees east, -180..180 (west is negative)")
        tzname = site_v.get("timezone")
        if isinstance(tzname, str):
            try:
                if "/" not in tzname and tzname != "UTC":
                    raise zoneinfo.ZoneInfoNotFoundError(tzname)
                zoneinfo.ZoneInfo(tzname)
            except (zoneinfo.ZoneInfoNotFoundError, ValueError):
                zones = sorted(zoneinfo.available_timezones())
                problems.append(
                    f"site.timezone: {tzname!r} is not an IANA time zone name{_did_you_mean(tzname, zones)}; "
                    "expected for example \"America/Los_Angeles\""
                )
        sid = site_v.get("id")
        if sid is None and isinstance(site_v.get("name"), str):
            sid = site_id_from_name(site_v["name"])
            if not sid:
                problems.append(f"site.id: cannot make one from site.name {site_v['name']!r}; set [site] id, "
                                "e.g. id = \"north-ranch\" (letters, digits, '-' and '_')")
        elif isinstance(sid, str) and not SITE_ID_RE.fullmatch(sid):
            problems.append(f"site.id: {sid!r} is not valid; expected 1-64 letters, digits, '-' or '_', starting "
                            "with a letter or digit (it is one MQTT topic level: no '/', '+', '#' or spaces)")
        site_v["id"] = sid if isinstance(sid, str) else ""
        if site_v.get("display_unit") not in DISPLAY_UNITS:
            problems.append(f"site.display_unit: {site_v.get('display_unit')!r}; expected one of {', '.join(DISPLAY_UNITS)}")

    def array(section: str) -> list:
        v = raw.get(section, [])
        if not isinstance(v, list):
            problems.append(f"{section}: expected an array of tables ([[{section}]])")
            return []
        return v

    blocks_raw = array("blocks")
    if "blocks" in raw and not blocks_raw:
        problems.append("blocks: empty; declare at least one [[blocks]]")
    if "blocks" not in raw:
        problems.append("blocks: missing; declare at least one [[blocks]] with id, crop and stage")
    blocks: list[Block] = []
    seen: set[str] = set()
    for i, b in enumerate(blocks_raw):
        label = f"blocks[{i}]" if not (isinstance(b, dict) and isinstance(b.get("id"), str)) else f"blocks.{b['id']}"
        v = _check_table(label, b, _SCHEMA["blocks"], problems)
        if not v:
            continue
        if v["id"] in seen:
            problems.append(f"{label}.id: {v['id']!r} is declared twice; block ids must be unique")
        seen.add(v["id"])
        block = _build_block(label, v, problems)
        if block is not None:
            blocks.append(block)

    block_ids = [b.id for b in blocks] + [b.get("id") for b in blocks_raw if isinstance(b, dict)]
    stations: list[Station] = []
    seen_st: set[str] = set()
    for i, s in enumerate(array("stations")):
        label = f"stations[{i}]" if not (isinstance(s, dict) and isinstance(s.get("id"), str)) else f"stations.{s['id']}"
        v = _check_table(label, s, _SCHEMA["stations"], problems)
        if not v:
            continue
        if v["id"] in seen_st:
            problems.append(f"{label}.id: {v['id']!r} is declared twice; station ids must be unique")
        seen_st.add(v["id"])
        if v["block"] is not None and v["block"] not in block_ids:
            problems.append(
                f"{label}.block: {v['block']!r} is not a declared block{_did_you_mean(str(v['block']), [str(x) for x in block_ids])}; "
                f"expected one of {', '.join(str(x) for x in block_ids)}, or leave it out for a site-wide station"
            )
        h = v["height_m"]
        if isinstance(h, _NUM) and not 0 <= h <= 100:
            problems.append(f"{label}.height_m: {h} is out of range; expected metres above ground, 0..100")
        role = v["role"]
        if role is None and isinstance(h, _NUM):
            role = "crop" if h <= 3.0 else "tower"
        if role not in STATION_ROLES:
            problems.append(f"{label}.role: {role!r}; expected one of {', '.join(STATION_ROLES)}")
        if v["interval_s"] is not None and v["interval_s"] <= 0:
            problems.append(f"{label}.interval_s: {v['interval_s']} must be positive (seconds between readings)")
        if (v["x_m"] is None) != (v["y_m"] is None):
            problems.append(f"{label}: give both x_m and y_m (metres east and north of any point of your choosing), or neither")
        if role == "weather" and v["block"] is not None:
            problems.append(
                f"{label}.role: \"weather\" is the site's reference air outside any wetted area; leave `block` out for it "
                "(a block's own reference is named with the block's reference_station)"
            )
        if isinstance(h, _NUM):
            stations.append(Station(v["id"], v["block"], float(h), str(role), v["interval_s"], v["x_m"], v["y_m"]))
    if site_v.get("id") and site_v["id"] in seen_st:
        problems.append(f"site.id: {site_v['id']!r} is also a station id; the site's topics ({{prefix}}/{site_v['id']}/...) "
                        "would mix with that station's readings; set [site] id to another name")
    by_id = {s.id: s for s in stations}
    for b in blocks:
        if not any(s.block == b.id and s.role == "crop" for s in stations):
            problems.append(f"blocks.{b.id}: no crop-height station; declare a [[stations]] with block = {b.id!r} and height_m <= 3")
        ref = b.reference_station
        if ref is not None:
            st = by_id.get(ref)
            if st is None:
                problems.append(
                    f"blocks.{b.id}.reference_station: {ref!r} is not a declared station"
                    f"{_did_you_mean(ref, list(by_id))}; expected the id of a station outside the block's wetted area"
                )
            elif st.block == b.id:
                problems.append(
                    f"blocks.{b.id}.reference_station: {ref!r} is in the block itself, where the sprinklers wet the air; "
                    "expected a station outside the wetted area (a site-wide role = \"weather\" station or one of an "
                    "unsprinkled block)"
                )
            elif st.role not in ("crop", "weather"):
                problems.append(
                    f"blocks.{b.id}.reference_station: {ref!r} has role {st.role!r}; expected a station measuring air near "
                    "crop height (role crop or weather)"
                )

    storage_v = _check_table("storage", raw.get("storage", {}), _SCHEMA["storage"], problems)
    for k, what in (("rejection_retention_days", "days to keep rejected input"),
                    ("rejections_per_source_per_hour", "rejection rows per MQTT topic and hour")):
        v = storage_v.get(k)
        if isinstance(v, (int, float)) and not isinstance(v, bool) and not v > 0:
            problems.append(f"storage.{k}: {v!r} must be positive; expected {what}")
            storage_v[k] = _SCHEMA["storage"][k][1]
    base = path.parent if path else Path.cwd()
    raw_path = storage_v.get("path") or "frostwatch.db"
    if "\x00" in raw_path:
        problems.append("storage.path: contains a NUL character; expected a file path")
        raw_path = "frostwatch.db"
    storage_path = Path(os.path.expanduser(raw_path))
    if not storage_path.is_absolute():
        storage_path = (base / storage_path).resolve()
    broker_v = _check_table("broker", raw.get("broker", {}), _SCHEMA["broker"], problems)
    if isinstance(broker_v.get("port"), int) and not 0 < broker_v["port"] < 65536:
        problems.append(f"broker.port: {broker_v['port']} is out of range; expected 1..65535")
    forecast_v = _check_table("forecast", raw.get("forecast", {}), _SCHEMA["forecast"], problems)

    for section in _OPEN_SECTIONS:
        if section in raw:
            expected = list if section in _ARRAY_SECTIONS else dict
            if not isinstance(raw[section], expected):
                kind = f"an array of tables ([[{section}]])" if expected is list else f"a table ([{section}])"
                problems.append(f"{section}: expected {kind}")

    if problems:
        raise ConfigError(where_file, problems)
    return Config(
        path=path,
        site=Site(**{k: site_v[k] for k in _SCHEMA["site"]}),
        blocks=tuple(blocks),
        stations=tuple(stations),
        storage=Storage(path=storage_path, retention_days=float(storage_v["retention_days"]),
                        rejection_retention_days=float(storage_v["rejection_retention_days"]),
                        rejections_per_source_per_hour=int(storage_v["rejections_per_source_per_hour"]),
                        decisions_days=float(storage_v["decisions_days"])),
        broker=Broker(**broker_v),
        forecast=Forecast(**forecast_v),
        alerts=dict(raw.get("alerts", {})),
        contacts=tuple(raw.get("contacts", [])),
        report=dict(raw.get("report", {})),
        raw=raw,
    )


def _build_block(label: str, v: dict, problems: list[str]) -> Block | None:
    from frostwatch.physics import crops

    n_before = len(problems)
    t10, t90, source = v["kill_10pct_c"], v["kill_90pct_c"], "set in the config (manual override)"
    if not isinstance(v.get("crop"), str) or not isinstance(v.get("stage"), str):
        return None  # the missing or mistyped key is already reported
    try:
        ct = crops.critical_temps(v["crop"], v["stage"], hardiness_offset_c=float(v["hardiness_offset_c"]))
        crop, stage = ct.crop, ct.stage
        if t10 is None:
            t10, source = ct.kill_10pct_c, ct.source
        if t90 is None:
            t90 = ct.kill_90pct_c
    except ValueError as exc:
        if t10 is None or t90 is None:
            key = "crop" if isinstance(exc, crops.UnknownCropError) else "stage"
            problems.append(f"{label}.{key}: {exc}")
        crop, stage = v["crop"], v["stage"]
    if t90 is None or (isinstance(t90, float) and math.isnan(t90)):
        t90 = t10 - 5.0 if isinstance(t10, _NUM) else t90
    if isinstance(t10, _NUM) and isinstance(t90, _NUM) and t90 > t10:
        problems.append(f"{label}.kill_90pct_c: {t90} is warmer than kill_10pct_c {t10}; expected T90 <= T10")
    if v["protection"] not in PROTECTION_METHODS:
        problems.append(
            f"{label}.protection: {v['protection']!r} is not a method{_did_you_mean(v['protection'], list(PROTECTION_METHODS))}; "
            f"expected one of {', '.join(PROTECTION_METHODS)}"
        )
    if not 0 <= v["margin_c"] <= 10:
        problems.append(f"{label}.margin_c: {v['margin_c']} is out of range; expected 0..10 degC above T10 (common practice about 2)")
    if not 0 <= v["mobilisation_min"] <= 600:
        problems.append(f"{label}.mobilisation_min: {v['mobilisation_min']} is out of range; expected 0..600 minutes")
    if v["protection"] in SPRINKLER_METHODS:
        rate = v["application_rate_mm_h"]
        if rate is None:
            problems.append(f"{label}.application_rate_mm_h: missing; a sprinkler block needs its application rate in mm per hour")
        elif not 0 < rate < 50:
            problems.append(f"{label}.application_rate_mm_h: {rate} is out of range; expected 0..50 mm per hour")
    if not 0 <= v["wind_machine_gain_frac"] <= 1:
        problems.append(
            f"{label}.wind_machine_gain_frac: {v['wind_machine_gain_frac']} is out of range; expected a fraction "
            "0..1 of the inversion recovered at crop height (engineering assumption, default 0.4)"
        )
    if v["biofix_date"] is not None:
        import datetime as _dt

        try:
            _dt.date.fromisoformat(v["biofix_date"])
        except ValueError:
            problems.append(f"{label}.biofix_date: {v['biofix_date']!r} is not a date; expected YYYY-MM-DD")
    if v["heater_kw"] is not None and not 0 < v["heater_kw"] <= 1000:
        problems.append(f"{label}.heater_kw: {v['heater_kw']} is out of range; expected one heater's heat output in kW, > 0")
    if v["heaters_per_ha"] is not None and not 0 < v["heaters_per_ha"] <= 1000:
        problems.append(f"{label}.heaters_per_ha: {v['heaters_per_ha']} is out of range; expected heaters installed per hectare")
    if v["area_ha"] is not None and not 0 < v["area_ha"] < 10000:
        problems.append(f"{label}.area_ha: {v['area_ha']} is out of range; expected hectares, > 0")
    if len(problems) > n_before or not isinstance(t10, _NUM):
        return None
    fields = {f.name for f in dataclasses.fields(Block)}
    values = {k: v[k] for k in v if k in fields}
    values.update(crop=crop, stage=stage, kill_10pct_c=float(t10), kill_90pct_c=float(t90), critical_source=source)
    return Block(**values)
