"""Load and validate a frostwatch config (TOML).

Validation collects every problem before raising one `ConfigError`; each problem reads
`section.key: what is wrong, what is expected`, with a did-you-mean for unknown keys.
The keys of DESIGN.md 1.3 are fixed; everything else has a default shown by `frostwatch check-config`.

    model.py      the validated config: Config, Site, Block, Station, Storage, Broker, Forecast
    schema.py     the fixed sections' keys, types and defaults; the checks of one table
    load.py       load_config and config_from_dict: every problem at once, then a Config
    effective.py  effective_settings and masked: what check-config shows

The sections other parts own are validated beside them: frostwatch.alerts.config, frostwatch.daemon_settings,
frostwatch.reports.settings, frostwatch.fleet.settings, frostwatch.ingest.mappings.
"""


from frostwatch.config.effective import effective_settings, masked
from frostwatch.config.load import check_open_sections, config_from_dict, load_config
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
from frostwatch.config.schema import _ARRAY_SECTIONS, _OPEN_SECTIONS, _SCHEMA, SECRET_KEYS

__all__ = [
    "DISPLAY_UNITS", "PROTECTION_METHODS", "SECRET_KEYS", "SITE_ID_RE", "SPRINKLER_METHODS", "STATION_ROLES", "_ARRAY_SECTIONS",
    "_OPEN_SECTIONS", "_SCHEMA", "Block", "Broker", "Config", "Forecast", "Site", "Station", "Storage",
    "check_open_sections", "config_from_dict", "effective_settings", "load_config", "masked", "site_id_from_name",
]
