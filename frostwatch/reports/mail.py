"""The morning email: the night's key table in the body (plain text and HTML), the night page
attached with its plots and CSVs (grower-needs H3, J).

    msg = build_report_email(cfg, html_path, to=["manager@example.org"])
    send_report_email(cfg, store, evening, out_dir, now_utc)   # write the report, then mail it

Sending goes over the first `[[channels]]` entry of type "email" (host, port, tls, username,
password_file, from: the alerts issue's channel settings). Recipients: `[report] managers`, else
the contacts whose roles include "manager". Raises `UsageError` when no recipient or no email
channel is configured, `DeliveryError` when the server refuses or cannot be reached.
"""

from __future__ import annotations

import csv
import datetime as dt
import email.utils
import json
import mimetypes
from email.message import EmailMessage
from pathlib import Path

from frostwatch.advice.render import GENERAL_CAUTIONS as CAUTIONS
from frostwatch.config import Config
from frostwatch.display import Display
from frostwatch.errors import DeliveryError, UsageError
from frostwatch.reports.settings import report_settings

MAX_ATTACHMENTS_BYTES = 15 * 1024 * 1024  # most mail servers refuse messages above 20-25 MB


def _key_rows(html_path: Path) -> tuple[dict, list[dict]]:
    stem = html_path.with_suffix("")
    record = json.loads(stem.with_suffix(".json").read_text(encoding="utf-8"))
    with open(f"{stem}-blocks.csv", newline="", encoding="utf-8") as f:
        rows = list(csv.DictReader(f))
    return record, rows


def _fmt_c(d: Display, v: str) -> str:
    return d.temp(float(v)) if v not in ("", None) else "no reading"


def build_report_email(
    cfg: Config,
    html_path: Path,
    to: list[str] | None = None,
    sender: str | None = None,
    attach_all: bool | None = None,
) -> EmailMessage:
    """The morning email for the night page at `html_path` (written by `write_night_report`)."""
    html_path = Path(html_path)
    settings = report_settings(cfg)
    d = Display(cfg.site.display_unit, cfg.site.tz)
    record, rows = _key_rows(html_path)
    night = record["night"]
    loss = record.get("possible_loss_blocks") or []
    m = EmailMessage()
    subject = f"[frostwatch] {cfg.site.name}: night of {night}"
    subject += f": POSSIBLE LOSS in {', '.join(loss)}" if loss else ": no block below T10"
    m["Subject"] = subject
    m["From"] = sender or settings.mail_from or "frostwatch@localhost"
    m["To"] = ", ".join(to or settings.managers or ["root@localhost"])
    m["Date"] = email.utils.formatdate(localtime=False)
    m["Message-ID"] = email.utils.make_msgid(idstring=f"report.{night}", domain="frostwatch.local")
    lines = [f"{cfg.site.name}, night of {night} (local times, {cfg.site.timezone}; temperatures in {d.symbol})", ""]
    head = ["block", "minimum", "at", "min<=T10", "min<=T90", "ran (h)", "water"]
    table = [head]
    for r in rows:
        at = dt.datetime.fromisoformat(r["min_at_local"]).strftime("%H:%M") if r["min_at_local"] else "-"
        water = d.water(float(r["water_m3"])) if r["water_m3"] not in ("", None) else "-"
        table.append([r["block"], _fmt_c(d, r["min_c"]), at, f"{float(r['minutes_below_t10']):.0f}",
                      f"{float(r['minutes_below_t90']):.0f}", r["protection_hours"], water])
    widths = [max(len(str(row[i])) for row in table) for i in range(len(head))]
    lines += ["  ".join(str(c).ljust(w) for c, w in zip(row, widths, strict=True)) for row in table]
    lines.append("")
    if loss:
        due = dt.datetime.fromisoformat(record["insurance_notice_due"].replace("Z", "+00:00"))
        lines += [f"POSSIBLE LOSS in block(s) {', '.join(loss)}: if you carry crop insurance, notice is usually due "
                  f"within {settings.insurance_notice_h:g} h of discovery: by {d.datetime(due)} at the latest.",
                  "Assess the buds today: about 100 buds per block, warmed at room temperature for 2 h or more, "
                  "cut across; count brown (dead) pistils.", ""]
    lines += [f"The full night log is attached ({html_path.name}), with plots and CSV files.", "",
              *CAUTIONS, "", f"Record SHA-256: {record['readings']['sha256']}"]
    text = "\n".join(lines)
    m.set_content(text)
    cells = "".join(
        "<tr>" + "".join(f"<{'th' if i == 0 else 'td'} style='border:1px solid #bbb;padding:3px 6px'>"
                         f"{_esc(c)}</{'th' if i == 0 else 'td'}>"
                         for c in row) + "</tr>"
        for i, row in enumerate(table)
    )
    notes = "".join(f"<p>{_esc(x)}</p>" for x in lines[len(table) + 2:] if x)
    m.add_alternative(
        f"<html><body style='font-family:sans-serif'><h2>{_esc(cfg.site.name)}: night of {night}</h2>"
        f"<table style='border-collapse:collapse'>{cells}</table>{notes}</body></html>", subtype="html")
    attach = settings.attach_plots if attach_all is None else attach_all
    files = [html_path]
    if attach:
        stem = html_path.with_suffix("").name
        files += sorted(p for p in html_path.parent.glob(f"{stem}*") if p.suffix in (".png", ".csv", ".json", ".sha256"))
    total = 0
    for p in files:
        data = p.read_bytes()
        total += len(data)
        if total > MAX_ATTACHMENTS_BYTES and p != html_path:
            continue
        ctype = mimetypes.guess_type(p.name)[0] or "application/octet-stream"
        if p.suffix == ".sha256":
            ctype = "text/plain"
        main, sub = ctype.split("/", 1)
        m.add_attachment(data, maintype=main, subtype=sub, filename=p.name)
    return m


def _esc(v) -> str:
    import html

    return html.escape(str(v))


def _email_channel(cfg: Config):
    from frostwatch.alerts.config import load_alerts_config

    ac = load_alerts_config(cfg)
    ch = next((c for c in ac.channels if c.type == "email"), None)
    if ch is None:
        raise UsageError(f"{cfg.path}: the morning email needs a [[channels]] entry with type = \"email\"")
    managers = list(report_settings(cfg).managers)
    if not managers:
        for c in ac.contacts:
            if "manager" in c.roles and c.addresses.get("email"):
                managers.append(c.addresses["email"])
    if not managers:
        raise UsageError(f"{cfg.path}: report.managers: no recipient for the morning email; "
                         "expected a list of addresses, or a contact with roles = [\"manager\"] and an email")
    return ch, managers


def send_report_email(cfg: Config, store, evening: dt.date, out_dir: Path, now_utc: dt.datetime) -> Path:
    """Write the night report of `evening` into `out_dir` and email it to the managers; returns the
    page. Uses the alerts issue's email channel settings (see the module docstring)."""
    from frostwatch.alerts.channels.email import send_message
    from frostwatch.reports.night import write_night_report

    ch, managers = _email_channel(cfg)
    page = write_night_report(cfg, store, evening, Path(out_dir))
    o = ch.options
    msg = build_report_email(cfg, page, to=managers, sender=o.get("from"))
    msg.replace_header("Date", email.utils.format_datetime(now_utc))
    try:
        send_message(ch, msg, cfg.path.parent if cfg.path else None)
    except DeliveryError as exc:  # Permanent or Transient from the channel
        raise DeliveryError(f"morning report email: {exc}") from None
    return page
