"""The night report lists the decisions where the level, the step or the monitoring state changed
(and the last). They are found on the stored columns and only those decisions are decoded
(`store.decisions.changes_between`): the same list as decoding every decision of the night and
keeping the changes (`reports.night.decision_changes`), on the demo's replayed nights."""

from __future__ import annotations

import datetime as dt
from importlib import resources
from pathlib import Path

SAMPLE = Path(__file__).resolve().parents[2] / "sample_sensor_logs"
DEMO_NIGHTS = ("2027-04-14-radiation-frost.csv", "2027-04-15-windy-advective.csv", "2027-04-16-cloudy-safe.csv")


def test_the_changes_read_from_the_columns_are_the_changes_of_every_decoded_decision(replayed):
    from frostwatch.config import load_config
    from frostwatch.reports.night import decision_changes
    from frostwatch.store import Store
    from frostwatch.store import decisions as stored

    demo = resources.files("frostwatch.sample_logs").joinpath("demo-farm.toml").read_text(encoding="utf-8")
    cfg = load_config(str(replayed(demo, [SAMPLE / n for n in DEMO_NIGHTS], "demo-farm.toml").config))
    start = dt.datetime(2027, 4, 14, 12, tzinfo=dt.UTC)
    with Store.open(cfg.storage.path) as store:
        seen = 0
        for b in cfg.blocks:
            for day in range(4):
                t0, t1 = start + dt.timedelta(days=day), start + dt.timedelta(days=day + 1)
                every = stored.between(store, t0, t1, b.id)
                got = stored.changes_between(store, t0, t1, b.id)
                assert got == decision_changes(every), (b.id, day)
                assert len(got) < len(every) or not every
                seen += len(got)
        assert seen > 20
        assert stored.changes_between(store, start - dt.timedelta(days=30), start - dt.timedelta(days=29), "east") == []
