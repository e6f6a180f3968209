"""The daemon's dusk job runs the "armed for tonight" check once a night, through the outbox."""

from __future__ import annotations

import datetime as dt

from alert_helpers import SmtpServer, make_cfg

from frostwatch.alerts.outbox import Outbox
from frostwatch.daemon import Core, daemon_settings
from frostwatch.models import Reading
from frostwatch.store import Store

PEOPLE = [{"name": "ana", "roles": ["grower", "maintainer"], "email": "ana@example.org"}]


def test_dusk_job_sends_one_armed_message_per_night_through_the_outbox(tmp_path):
    """Pass: ticking the daemon's Core through a night's dusk (sunset + 2 h) with every sensor
    fresh and a working mail channel queues exactly one "all-set" alert for that night (key
    farm/<night>/armed-check), the outbox delivers it to the SMTP server, and further ticks the
    same night add no second one; a sensor left silent the next night makes that night's message
    "check" and names the sensor."""
    smtp = SmtpServer().start()
    try:
        channels = [{"name": "mail", "type": "email", "host": "127.0.0.1", "port": smtp.port, "tls": "none",
                     "from": "fw@example.org", "timeout_s": 3}]
        cfg = make_cfg(tmp_path, {"roster": [{"blocks": ["*"], "order": ["ana"]}], "route": {"default": ["mail"]}},
                       PEOPLE, channels)
        with Store.open(cfg.storage.path) as store:
            box = Outbox(store, cfg)
            core = Core(cfg, daemon_settings(cfg), store, box)
            night = core.evaluator.night(dt.date(2027, 4, 14))
            t = night.sunset_utc
            silent = None
            keys = []
            for _ in range(2):  # two nights
                while t < night.dusk_utc + dt.timedelta(minutes=20):
                    fresh = [Reading(t, s.id, "air_temperature", 9.0) for s in cfg.stations if s.id != silent]
                    store.add_readings(fresh, "test")
                    core.readings_committed(fresh)
                    core.tick(t)
                    t += dt.timedelta(minutes=5)
                keys.append(f"farm/{night.date}/armed-check")
                silent = cfg.stations[0].id
                night = core.evaluator.night(night.date + dt.timedelta(days=1))
                t = night.sunset_utc
            box.deliver_due(t, wait=True)
            alerts = [a for a in store.alerts(t - dt.timedelta(days=3), t) if a["key"].endswith("armed-check")]
            assert [a["key"] for a in alerts] == keys
            assert alerts[0]["level"] == "all-set", alerts[0]["message"]
            assert alerts[1]["level"] == "check" and cfg.stations[0].id in alerts[1]["message"]
            assert core.job_runs["dusk"] == 2
            subjects = [m["Subject"] for m in smtp.messages]
            assert any("ALL SET for tonight" in s for s in subjects), subjects
            box.close()
    finally:
        smtp.stop()
