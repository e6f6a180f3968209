"""The fixed sections' schema (section -> key -> (types, default, required)) and the checks every
table goes through: unknown keys with a did-you-mean, wrong types, missing required keys."""

from __future__ import annotations

import difflib
import math
from typing import Any

_NUM = (int, float)

_SCHEMA: dict[str, dict[str, tuple[tuple[type, ...], Any, bool]]] = {
    "site": {
        "name": ((str,), None, True),
        "latitude": (_NUM, None, True),
        "longitude": (_NUM, None, True),
        "elevation_m": (_NUM, 0.0, False),
        "timezone": ((str,), None, True),
        "display_unit": ((str,), "degC", False),
        "id": ((str,), None, False),
    },
    "blocks": {
        "id": ((str,), None, True),
        "name": ((str,), "", False),
        "crop": ((str,), None, True),
        "stage": ((str,), None, True),
        "hardiness_offset_c": (_NUM, 0.0, False),
        "kill_10pct_c": (_NUM, None, False),
        "kill_90pct_c": (_NUM, None, False),
        "protection": ((str,), "none", False),
        "margin_c": (_NUM, 2.0, False),
        "mobilisation_min": (_NUM, 30.0, False),
        "wind_machines": ((int,), 0, False),
        "application_rate_mm_h": (_NUM, None, False),
        "area_ha": (_NUM, None, False),
        "water_supply_l_s": (_NUM, None, False),
        "fuel_l_per_h": (_NUM, None, False),
        "biofix_date": ((str,), None, False),
        "wind_machine_gain_frac": (_NUM, 0.4, False),
        "reference_station": ((str,), None, False),
        "heater_kw": (_NUM, None, False),
        "heaters_per_ha": (_NUM, None, False),
    },
    "stations": {
        "id": ((str,), None, True),
        "block": ((str,), None, False),
        "height_m": (_NUM, None, True),
        "role": ((str,), None, False),
        "interval_s": (_NUM, None, False),
        "x_m": (_NUM, None, False),
        "y_m": (_NUM, None, False),
    },
    "storage": {
        "path": ((str,), "frostwatch.db", False),
        "retention_days": (_NUM, 400.0, False),
        "rejection_retention_days": (_NUM, 30.0, False),
        "rejections_per_source_per_hour": ((int,), 60, False),
        "decisions_days": (_NUM, 60.0, False),
    },
    "broker": {
        "host": ((str,), "127.0.0.1", False),
        "port": ((int,), 1883, False),
        "prefix": ((str,), "frostwatch", False),
        "client_id": ((str,), "frostwatch-daemon", False),
        "username": ((str,), None, False),
        "password_file": ((str,), None, False),
        "keepalive_s": ((int,), 15, False),
        "tls": ((dict,), {}, False),
        "max_payload_bytes": ((int,), 8192, False),
    },
    "forecast": {
        "calibration_nights": ((int,), 10, False),
        "emissivity_model": ((str,), "brutsaert_1975", False),
        "radiation_wind_limit_m_s": (_NUM, 2.5, False),
        "stale_after_intervals": (_NUM, 3.0, False),
        "evaluation_interval_min": (_NUM, 2.0, False),
    },
}

# Sections whose keys belong to later parts of the product; accepted as tables, checked there.
_OPEN_SECTIONS = ("alerts", "contacts", "report", "channels", "mappings", "status_page", "daemon", "fleet")

_ARRAY_SECTIONS = ("blocks", "stations", "contacts", "channels", "mappings")

SECRET_KEYS = ("password", "token", "secret", "api_key")


def _did_you_mean(word: str, options: list[str]) -> str:
    close = difflib.get_close_matches(word, options, n=1, cutoff=0.6)
    return f" (did you mean {close[0]!r}?)" if close else ""


def _type_name(types: tuple[type, ...]) -> str:
    if types == _NUM:
        return "a number"
    return {str: "a string", int: "a whole number", dict: "a table", bool: "true or false"}[types[0]]


def _check_table(where: str, table: Any, schema: dict, problems: list[str]) -> dict:
    """Check one table against its schema; return its values with defaults filled in."""
    out: dict[str, Any] = {}
    if not isinstance(table, dict):
        problems.append(f"{where}: expected a table, got {type(table).__name__}")
        return out
    for key, value in table.items():
        if key not in schema:
            problems.append(
                f"{where}.{key}: unknown key{_did_you_mean(key, list(schema))}; "
                f"known keys are {', '.join(schema)}"
            )
            continue
        types = schema[key][0]
        ok = isinstance(value, types) and not isinstance(value, bool)
        if ok and types == _NUM and not math.isfinite(float(value)):
            ok = False
        if not ok:
            problems.append(f"{where}.{key}: {value!r} is not valid; expected {_type_name(types)}")
            continue
        out[key] = value
    for key, (_types, default, required) in schema.items():
        if key not in out and key not in table:
            if required:
                problems.append(f"{where}.{key}: missing; this key is required")
            out[key] = default
        elif key not in out:
            out[key] = default
    return out
