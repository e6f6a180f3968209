"""The validated config as frozen dataclasses: the site, its blocks and stations, storage, the
broker, the forecast settings; the words a config may use for protection methods, station roles
and display units."""

from __future__ import annotations

import re
import unicodedata
import zoneinfo
from dataclasses import dataclass, field
from pathlib import Path

PROTECTION_METHODS = ("wind_machine", "overtree_sprinkler", "undertree_sprinkler", "heaters", "none")
SPRINKLER_METHODS = ("overtree_sprinkler", "undertree_sprinkler")  # the protections that wet the block

STATION_ROLES = ("crop", "tower", "sky", "weather")

DISPLAY_UNITS = ("degC", "degF")

SITE_ID_RE = re.compile(r"[A-Za-z0-9][A-Za-z0-9_-]{0,63}")


def site_id_from_name(name: str) -> str:
    """The default [site] id: the name in lower case, accents dropped, every run of other
    characters made one '-', at most 64 characters ("Cedar Bench Orchard" -> "cedar-bench-orchard").
    Empty when the name has no letter or digit in the Latin alphabet."""
    ascii_text = unicodedata.normalize("NFKD", name).encode("ascii", "ignore").decode("ascii")
    return re.sub(r"[^a-z0-9]+", "-", ascii_text.lower()).strip("-")[:64].strip("-")


@dataclass(frozen=True)
class Site:
    name: str
    latitude: float
    longitude: float
    elevation_m: float
    timezone: str
    display_unit: str = "degC"
    # the site's name on a broker network (topics `{prefix}/{id}/...`): [site] id, or a slug of
    # the name (site_id_from_name); one topic level of letters, digits, '-' and '_'
    id: str = ""

    @property
    def tz(self) -> zoneinfo.ZoneInfo:
        return zoneinfo.ZoneInfo(self.timezone)


@dataclass(frozen=True)
class Block:
    id: str
    crop: str
    stage: str
    kill_10pct_c: float
    kill_90pct_c: float
    critical_source: str
    hardiness_offset_c: float = 0.0
    protection: str = "none"
    margin_c: float = 2.0
    mobilisation_min: float = 30.0
    wind_machines: int = 0
    application_rate_mm_h: float | None = None
    area_ha: float | None = None
    water_supply_l_s: float | None = None
    fuel_l_per_h: float | None = None
    biofix_date: str | None = None
    name: str = ""
    wind_machine_gain_frac: float = 0.4
    reference_station: str | None = None
    heater_kw: float | None = None
    heaters_per_ha: float | None = None


@dataclass(frozen=True)
class Station:
    id: str
    block: str | None
    height_m: float
    role: str
    interval_s: float | None = None
    x_m: float | None = None
    y_m: float | None = None

    @property
    def position_m(self) -> tuple[float, float] | None:
        """(east, north) of the station in metres from the site's own origin, when configured."""
        return None if self.x_m is None or self.y_m is None else (self.x_m, self.y_m)


@dataclass(frozen=True)
class Storage:
    path: Path
    retention_days: float = 400.0
    # rejected input is kept for this long, apart from readings (bad input must not fill the card)
    rejection_retention_days: float = 30.0
    # rejection rows (and log lines) per MQTT topic and hour; beyond it they are counted in one row
    rejections_per_source_per_hour: int = 60
    decisions_days: float = 60.0  # stored decisions (about 1.2 KB per block and evaluation) are kept this long


@dataclass(frozen=True)
class Broker:
    host: str = "127.0.0.1"
    port: int = 1883
    prefix: str = "frostwatch"
    client_id: str = "frostwatch-daemon"
    username: str | None = None
    password_file: str | None = None
    keepalive_s: int = 15
    tls: dict = field(default_factory=dict)
    max_payload_bytes: int = 8192  # as deploy/mosquitto/frostwatch.conf's max_packet_size


@dataclass(frozen=True)
class Forecast:
    calibration_nights: int = 10
    emissivity_model: str = "brutsaert_1975"
    radiation_wind_limit_m_s: float = 2.5
    stale_after_intervals: float = 3.0
    evaluation_interval_min: float = 2.0


@dataclass(frozen=True)
class Config:
    path: Path | None
    site: Site
    blocks: tuple[Block, ...]
    stations: tuple[Station, ...]
    storage: Storage
    broker: Broker
    forecast: Forecast
    alerts: dict = field(default_factory=dict)
    contacts: tuple[dict, ...] = ()
    report: dict = field(default_factory=dict)
    raw: dict = field(default_factory=dict)

    def block(self, block_id: str) -> Block:
        # asked for every block at every evaluation: a lookup, not a scan of the farm's blocks
        got = self._kept("_blocks_by_id", lambda: {b.id: b for b in reversed(self.blocks)}).get(block_id)
        if got is None:
            raise KeyError(block_id)
        return got

    def station(self, station_id: str) -> Station | None:
        return self._stations_by_id().get(station_id)

    def _stations_by_id(self) -> dict[str, Station]:
        return {s.id: s for s in self.stations}

    def _kept(self, name: str, make):
        # a value worked out from the (frozen) config once, kept on the instance
        kept = self.__dict__.get(name)
        if kept is None:
            kept = make()
            object.__setattr__(self, name, kept)
        return kept

    def stations_with_role(self, role: str) -> tuple[Station, ...]:
        """Every station of `role` on the farm, in the config's order (worked out once: each
        block's evaluation asks for the towers and sky sensors)."""
        kept = self._kept("_stations_with_role", dict)
        got = kept.get(role)
        if got is None:
            got = kept[role] = tuple(s for s in self.stations if s.role == role)
        return got

    def stations_of(self, block_id: str | None, role: str | None = None) -> list[Station]:
        """The stations of `block_id` (None: the site-wide ones), of `role` if given, in the
        config's order, as a new list."""
        # looked up for every block at every evaluation: each answer worked out once (a new list each time)
        kept = self._kept("_stations_of", dict)
        got = kept.get((block_id, role))
        if got is None:
            got = kept[(block_id, role)] = tuple(
                s for s in self.stations if s.block == block_id and (role is None or s.role == role))
        return list(got)
