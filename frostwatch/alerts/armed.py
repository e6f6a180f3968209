"""Armed for tonight: the dusk check of the whole alert path, ending in one message.

    ok, problems = armed_check(store, cfg, outbox, now_utc)

Checks that every station reported within `[alerts.armed] max_sensor_age_min`, that no
battery_voltage is below `min_battery_v`, that every channel answers (a connection and a polite
no-op, or a real test message with `test_channels = true`), that each block has someone on its
roster tonight, and that a projection exists for every block in the last hour. Then it submits
one alert: "all-set" (rank 0) or "check" (rank 2) listing what is wrong (grower-needs F2).
The daemon calls it once at dusk; the clock is the caller's.
"""

from __future__ import annotations

import datetime as dt
import logging
import os
import shutil
import smtplib
import socket

from frostwatch.alerts.levels import ALL_LEVELS, ALL_SET, CHECK
from frostwatch.models import Alert
from frostwatch.night import evening_date

log = logging.getLogger("frostwatch.alerts.armed")


def probe_channel(ch, base_dir=None) -> str | None:
    """None if the channel answers, else what is wrong. Bounded by the channel's timeout."""
    o, t = ch.options, ch.timeout_s
    try:
        if ch.type == "email":
            tls = o.get("tls", "starttls")
            port = int(o.get("port", 465 if tls == "ssl" else 587))
            cls = smtplib.SMTP_SSL if tls == "ssl" else smtplib.SMTP
            with cls(o["host"], port, timeout=t) as s:
                code, _ = s.noop()
                if code != 250:
                    return f"{ch.name}: SMTP server answers NOOP with {code}"
        elif ch.type == "webhook":
            from urllib.parse import urlsplit

            u = urlsplit(o["url"])
            port = u.port or (443 if u.scheme == "https" else 80)
            with socket.create_connection((u.hostname, port), timeout=t):
                pass
        elif ch.type == "mqtt":
            with socket.create_connection((o.get("host", "127.0.0.1"), int(o.get("port", 1883))), timeout=t):
                pass
        elif ch.type == "command":
            exe = o["argv"][0]
            if not (shutil.which(exe) or (os.path.isfile(exe) and os.access(exe, os.X_OK))):
                return f"{ch.name}: command {exe!r} not found or not executable"
    except (OSError, smtplib.SMTPException) as exc:
        return f"{ch.name}: does not answer ({type(exc).__name__}: {exc})"
    return None


def armed_check(store, cfg, outbox, now_utc: dt.datetime, send: bool = True) -> tuple[bool, list[str]]:
    ac = outbox.ac
    armed = ac.armed
    problems: list[str] = []
    since = now_utc - dt.timedelta(hours=6)
    series = store.readings_window(since, now_utc)
    latest: dict[str, float] = {}
    for (station, quantity), (t, v) in series.items():
        if len(t):
            latest[station] = max(latest.get(station, 0.0), float(t[-1]))
        if quantity == "battery_voltage" and len(v) and float(v[-1]) < armed["min_battery_v"]:
            problems.append(f"sensor {station}: battery {float(v[-1]):.2f} V, below {armed['min_battery_v']:.2f} V")
    max_age = armed["max_sensor_age_min"] * 60
    for s in cfg.stations:
        if s.id not in latest:
            problems.append(f"sensor {s.id}: no reading in the last 6 h")
        elif now_utc.timestamp() - latest[s.id] > max_age:
            problems.append(f"sensor {s.id}: last reading {(now_utc.timestamp() - latest[s.id]) / 60:.0f} min ago")
    for ch in ac.channels:
        why = probe_channel(ch, outbox.base_dir)
        if why:
            problems.append("channel " + why)
    night = evening_date(now_utc, cfg.site.tz)
    for b in cfg.blocks:
        if not ac.roster_for(b.id, night):
            problems.append(f"block {b.id}: nobody on the roster tonight ([[alerts.roster]], [[contacts]])")
    have = {p["block"] for p in store.projections(now_utc - dt.timedelta(hours=1), now_utc)}
    for b in cfg.blocks:
        if b.id not in have:
            problems.append(f"block {b.id}: no projection in the last hour")
    ok = not problems
    if send:
        level = ALL_SET if ok else CHECK
        text = (f"farm: ALL SET for tonight ({night}): {len(cfg.stations)} sensors fresh, "
                f"{len(ac.channels)} channels answer, roster set, projections made" if ok else
                f"farm: CHECK before tonight ({night}): " + "; ".join(problems))
        a = Alert(time_utc=now_utc, block="farm", level=level, rank=ALL_LEVELS[level],
                  advice="nothing to do" if ok else "fix what is listed before the night gets cold",
                  message=text, key=f"farm/{night}/armed-check")
        if armed.get("test_channels"):
            text += "\n(test message on every channel)"
            a = Alert(**{**a.__dict__, "message": text})
        outbox.submit([a], now_utc, exclude=())
        if armed.get("test_channels"):  # every channel carries it, whatever the route says
            from frostwatch.store import outbox as ob
            from frostwatch.store import to_ms

            people = ac.roster_for("farm", night)[:1] + ac.with_role("maintainer")
            rows = outbox._rows(level, people, seq=0, kind="notice", now_utc=now_utc, every_channel=True)
            with store.transaction() as c:
                ob.insert_deliveries(c, a.key, rows, to_ms(now_utc))
    log.warning("dusk check: %s", "all set" if ok else "check: " + "; ".join(problems))
    return ok, problems
