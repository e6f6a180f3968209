"""The `[report]` and `[status_page]` sections of the config, validated here (config.py passes them
through as raw tables). Raises `ConfigError` listing every problem as `section.key: ...`.

    [report]
    insurance_notice_h = 72        # crop-insurance notice period after discovering a loss (grower-needs I1)
    managers = ["manager@example.org"]   # who gets the morning email
    mail_from = "frostwatch@farm.example"
    attach_plots = true            # attach the PNGs and CSVs to the morning email
    energy_kw = { east = 90 }      # electric draw per block while protecting, for kWh in the report

    [status_page]
    bind = "127.0.0.1"             # any other address needs a token
    port = 8470
    token_file = "/etc/frostwatch/status-token"   # or token = "..."
    refresh_s = 60
"""

from __future__ import annotations

import difflib
from dataclasses import dataclass, field
from pathlib import Path
from typing import TYPE_CHECKING

from frostwatch.errors import ConfigError

if TYPE_CHECKING:  # frostwatch.config imports this module to validate its section
    from frostwatch.config import Config

INSURANCE_NOTICE_H = 72  # usual crop-insurance notice period after discovering a loss (grower-needs I1)
STATUS_PORT = 8470
_REPORT_KEYS = ("insurance_notice_h", "managers", "mail_from", "attach_plots", "energy_kw", "out_dir")
_STATUS_KEYS = ("bind", "port", "token", "token_file", "refresh_s", "public_url")


@dataclass(frozen=True)
class ReportSettings:
    insurance_notice_h: float = INSURANCE_NOTICE_H
    managers: tuple[str, ...] = ()
    mail_from: str | None = None
    attach_plots: bool = True
    energy_kw: dict[str, float] = field(default_factory=dict)
    out_dir: Path | None = None


@dataclass(frozen=True)
class StatusPageSettings:
    bind: str = "127.0.0.1"
    port: int = STATUS_PORT
    token: str | None = None
    refresh_s: int = 60
    public_url: str | None = None


def _where(cfg: Config) -> str:
    return str(cfg.path) if cfg.path else "config"


def _unknown(section: str, raw: dict, known: tuple[str, ...], problems: list[str]) -> None:
    for k in raw:
        if k not in known:
            close = difflib.get_close_matches(k, known, n=1, cutoff=0.6)
            hint = f" (did you mean {close[0]!r}?)" if close else ""
            problems.append(f"{section}.{k}: unknown key{hint}; expected one of {', '.join(known)}")


def report_settings(cfg: Config) -> ReportSettings:
    raw = dict(cfg.report or {})
    problems: list[str] = []
    _unknown("report", raw, _REPORT_KEYS, problems)
    h = raw.get("insurance_notice_h", INSURANCE_NOTICE_H)
    if isinstance(h, bool) or not isinstance(h, int | float) or not 0 < h <= 24 * 60:
        problems.append(f"report.insurance_notice_h: {h!r} is not a number of hours; expected e.g. 72")
        h = INSURANCE_NOTICE_H
    managers = raw.get("managers", [])
    if isinstance(managers, str):
        managers = [managers]
    if not isinstance(managers, list) or not all(isinstance(m, str) and "@" in m for m in managers):
        problems.append(f"report.managers: {managers!r}; expected a list of email addresses")
        managers = []
    mail_from = raw.get("mail_from")
    if mail_from is not None and (not isinstance(mail_from, str) or "@" not in mail_from):
        problems.append(f"report.mail_from: {mail_from!r}; expected an email address")
        mail_from = None
    attach = raw.get("attach_plots", True)
    if not isinstance(attach, bool):
        problems.append(f"report.attach_plots: {attach!r}; expected true or false")
        attach = True
    energy = raw.get("energy_kw", {})
    block_ids = [b.id for b in cfg.blocks]
    if not isinstance(energy, dict):
        problems.append(f"report.energy_kw: {energy!r}; expected a table of block id = kW, e.g. {{ east = 90 }}")
        energy = {}
    for k, v in list(energy.items()):
        if k not in block_ids:
            problems.append(f"report.energy_kw.{k}: no such block; expected one of {', '.join(block_ids)}")
        if isinstance(v, bool) or not isinstance(v, int | float) or v < 0:
            problems.append(f"report.energy_kw.{k}: {v!r}; expected kilowatts >= 0")
    out_dir = raw.get("out_dir")
    if out_dir is not None and not isinstance(out_dir, str):
        problems.append(f"report.out_dir: {out_dir!r}; expected a folder path")
        out_dir = None
    if problems:
        raise ConfigError(_where(cfg), problems)
    base = cfg.path.parent if cfg.path else Path(".")
    return ReportSettings(
        insurance_notice_h=float(h), managers=tuple(managers), mail_from=mail_from, attach_plots=attach,
        energy_kw={k: float(v) for k, v in energy.items()},
        out_dir=(base / out_dir) if out_dir else None,
    )


def status_page_settings(cfg: Config) -> StatusPageSettings:
    raw = dict(cfg.raw.get("status_page", {}) or {})
    problems: list[str] = []
    _unknown("status_page", raw, _STATUS_KEYS, problems)
    bind = raw.get("bind", "127.0.0.1")
    if not isinstance(bind, str) or not bind:
        problems.append(f"status_page.bind: {bind!r}; expected an address such as 127.0.0.1")
        bind = "127.0.0.1"
    port = raw.get("port", STATUS_PORT)
    if isinstance(port, bool) or not isinstance(port, int) or not 0 <= port <= 65535:
        problems.append(f"status_page.port: {port!r}; expected a TCP port 1-65535")
        port = STATUS_PORT
    refresh = raw.get("refresh_s", 60)
    if isinstance(refresh, bool) or not isinstance(refresh, int) or not 5 <= refresh <= 3600:
        problems.append(f"status_page.refresh_s: {refresh!r}; expected whole seconds 5-3600")
        refresh = 60
    token = raw.get("token")
    if token is not None and (not isinstance(token, str) or len(token) < 16):
        problems.append("status_page.token: too short; expected at least 16 characters (e.g. `openssl rand -hex 16`)")
        token = None
    tf = raw.get("token_file")
    if tf is not None:
        from frostwatch.secrets import SecretError, read_secret_file, secret_path

        base = cfg.path.parent if cfg.path else Path(".")
        try:
            text = read_secret_file(tf, "status_page.token_file", base)
        except SecretError as exc:
            problems.append(str(exc))
        else:
            if len(text) < 16:
                problems.append(f"status_page.token_file: {secret_path(tf, base)} holds fewer than 16 characters; "
                                "expected a long random token")
            else:
                token = text
    public_url = raw.get("public_url")
    if public_url is not None and not (isinstance(public_url, str) and public_url.startswith(("http://", "https://"))):
        problems.append(f"status_page.public_url: {public_url!r}; expected http://... or https://...")
        public_url = None
    if problems:
        raise ConfigError(_where(cfg), problems)
    return StatusPageSettings(bind=bind, port=port, token=token, refresh_s=refresh, public_url=public_url)
