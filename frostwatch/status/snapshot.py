"""What the status page shows, read from the store at one instant (no advice computed here).

    snap = snapshot(cfg, store, now_utc)      # snap["doc"] is what GET /status.json serves

Each block's newest stored decision (through `frostwatch.status.document`, the same as
`frostwatch status --json`), its latest alert and acknowledgements, every station's last reading
and tonight's crop-height readings for the chart. Raises `StoreError` when the store cannot be read.
"""

from __future__ import annotations

import datetime as dt

from frostwatch.config import Config
from frostwatch.display import Display
from frostwatch.night import night_at
from frostwatch.pipeline import LOOKBACK
from frostwatch.status.document import decisions_for_page, status_document
from frostwatch.store import Store, from_ms
from frostwatch.store import reports as q


def snapshot(cfg: Config, store: Store, now_utc: dt.datetime) -> dict:
    """The page's figures at `now_utc` from the store: the status document, the decisions behind
    it, tonight's crop-height readings for the charts, the alerts and acknowledgements, incidents."""
    doc = status_document(cfg, store, now_utc)
    decisions = decisions_for_page(cfg, store, now_utc)
    d = Display(cfg.site.display_unit, cfg.site.tz)
    night = night_at(cfg.site.latitude, cfg.site.longitude, cfg.site.tz, now_utc)
    crop = [s.id for s in cfg.stations if s.role == "crop" and s.block is not None]
    series = store.readings_window(night.sunset_utc - LOOKBACK, now_utc, stations=crop) if crop else {}
    alerts = store.alerts(night.sunset_utc - dt.timedelta(hours=2), now_utc)
    keys = [a["key"] for a in alerts]
    acks = q.acks_for(store, keys)
    states = q.alert_states(store, keys)
    latest = q.latest_readings(store, now_utc - dt.timedelta(days=7), now_utc)
    blocks = []
    for b, item in zip(cfg.blocks, doc["blocks"], strict=True):
        dcs = decisions.get(b.id)
        mine = [a for a in alerts if a["block"] == b.id]
        last = mine[-1] if mine else None
        station = dcs.projection.station if dcs is not None and dcs.projection.station else None
        station = station or next((s.id for s in cfg.stations_of(b.id, "crop")), None)
        stations = []
        for st in cfg.stations_of(b.id):
            got = latest.get((st.id, "air_temperature"))
            at = None if got is None else from_ms(got[0])
            stations.append({"station": st.id, "height_m": st.height_m, "air_temp_c": None if got is None else got[1],
                             "at_utc": at, "age_min": None if at is None else (now_utc - at).total_seconds() / 60.0})
        ack_rows = sorted(({**r, "level": a["level"], "alert_key": a["key"]} for a in mine for r in acks.get(a["key"], [])),
                          key=lambda r: r["time_utc_ms"])
        blocks.append({
            "block": b, "item": item, "decision": dcs, "alert": last, "acks": ack_rows,
            "alert_state": states.get(last["key"]) if last else None, "stations": stations,
            "observed": series.get((station, "air_temperature")) if station else None,
        })
    health = store.events(now_utc - dt.timedelta(hours=12), now_utc, kind="health")
    return {"now_utc": now_utc, "night": night, "display": d, "doc": doc, "blocks": blocks, "health": health[-10:],
            "site": cfg.site.name}
