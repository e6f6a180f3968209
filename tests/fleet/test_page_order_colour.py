"""The fleet page colours each site card by the rank it is sorted by (frostwatch.fleet.page): a
block not monitored counts as "go-look" (4), as in the order, so a site holding one is never
coloured as calm as its monitored blocks."""

import datetime as dt

from frostwatch.fleet import page
from frostwatch.fleet import site as fs
from frostwatch.fleet.view import FleetModel

T0 = dt.datetime(2027, 4, 15, 9, 0, tzinfo=dt.UTC)


def test_a_site_with_a_block_not_monitored_is_coloured_by_its_order_rank():
    m = FleetModel()
    blocks = [{"block": "north", "level": "ready", "rank": 3, "monitored": True, "as_of": T0},
              # a site that sends a blind block at a low rank (not frostwatch's own "go-look")
              {"block": "south", "level": "rest", "rank": 0, "monitored": False, "as_of": T0,
               "reason": "crop-height sensor south-low silent since 01:12"}]
    for topic, payload in fs.state_messages("frostwatch", "hollow", blocks):
        m.on_message(topic, payload, T0, False)
    m.on_message(*fs.heartbeat_message("frostwatch", "hollow", fs.heartbeat_doc(T0, 60, None, None)), T0, False)
    doc = m.snapshot(T0 + dt.timedelta(seconds=10))
    assert doc["sites"][0]["order_rank"] == 4
    html = page.render_page(doc, page.Display(), 30, T0)
    assert '<section class="card site r4" id="site-hollow">' in html
