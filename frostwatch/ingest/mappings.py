"""The config's [[mappings]] (payload layouts of other devices' topics) and [broker] tls keys,
validated without importing paho: `load_config` checks them for every command.
"""

from __future__ import annotations

from frostwatch.config import Config
from frostwatch.errors import ConfigError
from frostwatch.ingest.layouts import Mapping
from frostwatch.ingest.values import TIME_FORMATS
from frostwatch.units import QUANTITIES

TLS_KEYS = ("ca_file", "cert_file", "key_file", "ciphers")
MAPPING_KEYS = ("topic", "station", "fields", "units", "time_field", "time_format", "station_map")


def mappings_from_config(cfg: Config) -> tuple[Mapping, ...]:
    """Validate the config's [[mappings]]; raise ConfigError with `mappings[i].key: ...` lines."""
    raw = cfg.raw.get("mappings", [])
    problems: list[str] = []
    out: list[Mapping] = []
    if not isinstance(raw, list):
        raise ConfigError(str(cfg.path or "<config>"), ["mappings: expected an array of tables ([[mappings]])"])
    for i, m in enumerate(raw):
        w = f"mappings[{i}]"
        if not isinstance(m, dict):
            problems.append(f"{w}: expected a table")
            continue
        n0 = len(problems)
        for k in m:
            if k not in MAPPING_KEYS:
                problems.append(f"{w}.{k}: unknown key; known keys are {', '.join(MAPPING_KEYS)}")
        topic = m.get("topic")
        if not isinstance(topic, str) or not topic.strip("/"):
            problems.append(f"{w}.topic: missing or empty; expected a topic filter such as \"lora/{{station}}/up\"")
            topic = ""
        levels = topic.split("/")
        if any(("{" in lv or "}" in lv) and lv != "{station}" for lv in levels) or levels.count("{station}") > 1:
            problems.append(f"{w}.topic: {topic!r}; only one whole level may be {{station}}")
        if "#" in levels[:-1] or any("#" in lv and lv != "#" for lv in levels) or any("+" in lv and lv != "+" for lv in levels):
            problems.append(f"{w}.topic: {topic!r}; '+' and '#' must fill a whole level, '#' only the last")
        station = m.get("station")
        if station is not None and not isinstance(station, str):
            problems.append(f"{w}.station: {station!r}; expected a station id")
        if "{station}" not in levels and not station:
            problems.append(f"{w}.station: missing; the topic has no {{station}} level, so name the station here")
        fields = m.get("fields")
        if not isinstance(fields, dict) or not fields:
            problems.append(f"{w}.fields: missing; expected a table of payload field = quantity, e.g. {{ temp = \"air_temperature\" }}")
            fields = {}
        for path, q in fields.items():
            if q not in QUANTITIES:
                problems.append(f"{w}.fields.{path}: {q!r} is not a quantity; expected one of {', '.join(QUANTITIES)}")
        units = m.get("units", {})
        if not isinstance(units, dict):
            problems.append(f"{w}.units: expected a table of payload field = unit")
            units = {}
        for path, u in units.items():
            if path not in fields:
                problems.append(f"{w}.units.{path}: not one of this mapping's fields ({', '.join(fields)})")
            elif fields[path] not in QUANTITIES:
                continue  # already reported under fields
            elif not isinstance(u, str):
                problems.append(f"{w}.units.{path}: {u!r}; expected a unit such as \"degF\"")
            else:
                from frostwatch.units import to_canonical

                try:
                    to_canonical(fields[path], 0.0 if fields[path] != "air_pressure" else 1000.0, u)
                except Exception as exc:  # noqa: BLE001 - any unit problem is a config problem here
                    problems.append(f"{w}.units.{path}: {exc}")
        tf = m.get("time_field")
        if tf is not None and not isinstance(tf, str):
            problems.append(f"{w}.time_field: {tf!r}; expected a payload field name")
        fmt = m.get("time_format", "iso8601")
        if fmt not in TIME_FORMATS:
            problems.append(f"{w}.time_format: {fmt!r}; expected one of {', '.join(TIME_FORMATS)}")
        smap = m.get("station_map", {})
        if not isinstance(smap, dict) or not all(isinstance(v, str) for v in smap.values()):
            problems.append(f"{w}.station_map: expected a table of device id = station id")
            smap = {}
        known = {s.id for s in cfg.stations}
        for dev, sid in smap.items():
            if sid not in known:
                problems.append(f"{w}.station_map.{dev}: {sid!r} is not a declared station")
        if isinstance(station, str) and station and station not in known:
            problems.append(f"{w}.station: {station!r} is not a declared station")
        if len(problems) == n0:
            out.append(Mapping(topic, dict(fields), dict(units), station, tf, fmt, dict(smap)))
    bt = cfg.broker.tls or {}
    for k, v in bt.items():
        if k not in TLS_KEYS:
            problems.append(f"broker.tls.{k}: unknown key; known keys are {', '.join(TLS_KEYS)}")
        elif not isinstance(v, str):
            problems.append(f"broker.tls.{k}: {v!r}; expected a file path or cipher string")
    if problems:
        raise ConfigError(str(cfg.path or "<config>"), problems)
    return tuple(out)
