"""The settings in force, defaults filled in and secrets masked (`frostwatch check-config`)."""

from __future__ import annotations

import dataclasses
from pathlib import Path
from typing import Any

from frostwatch.config.model import Config
from frostwatch.config.schema import SECRET_KEYS
from frostwatch.redact import redact


def masked(value: Any, key: str = "") -> Any:
    """A copy of a config value with secrets replaced by '***' (a secret not set stays null: '***'
    would say one is set) and a URL's query string (a gateway's api_key) cut out."""
    if isinstance(value, dict):
        return {k: masked(v, k) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [masked(v, key) for v in value]
    if any(s in key.lower() for s in SECRET_KEYS) and not key.lower().endswith("_file"):
        return None if value is None else "***"
    if key.lower() == "url" and isinstance(value, str):
        return redact(value)
    return value


def effective_settings(cfg: Config) -> dict:
    """Every setting in force (defaults filled in), secrets masked: for `frostwatch check-config`."""

    def plain(obj: Any) -> Any:
        if dataclasses.is_dataclass(obj):
            return {f.name: plain(getattr(obj, f.name)) for f in dataclasses.fields(obj)}
        if isinstance(obj, (list, tuple)):
            return [plain(x) for x in obj]
        if isinstance(obj, Path):
            return str(obj)
        return obj

    out = {
        "site": plain(cfg.site),
        "blocks": plain(cfg.blocks),
        "stations": plain(cfg.stations),
        "storage": plain(cfg.storage),
        "broker": plain(cfg.broker),
        "forecast": plain(cfg.forecast),
        "alerts": cfg.alerts,
        "contacts": list(cfg.contacts),
        "report": cfg.report,
        "channels": list((cfg.raw or {}).get("channels", [])),
    }
    # the sections other modules own, with their defaults filled in (a valid config: load_config
    # has checked them already)
    from frostwatch.daemon_settings import daemon_settings
    from frostwatch.fleet.settings import fleet_settings
    from frostwatch.reports.settings import status_page_settings

    out["daemon"] = plain(daemon_settings(cfg))
    out["status_page"] = plain(status_page_settings(cfg))
    out["fleet"] = plain(fleet_settings(cfg))
    return masked(out)
