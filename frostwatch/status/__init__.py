"""What every reader shows of the daemon's stored decisions, and the status page for phones.

    document.py   the status document: liveness, monitoring as a reader sees it, one block's JSON
                  (`frostwatch status --json`, GET /status.json, the MQTT status topic)
    snapshot.py   the page's figures read from the store at one instant
    render.py     the page as HTML (cards, header, the acknowledgement pages)
    chart.py      a block's night as inline SVG
    server.py     the HTTP server (`frostwatch status-page`): token, deadlines, ack links
    gateway.py    what an SMS or push gateway's reply callback carries (pure)
    style.py      the pages' CSS             } standard library only: the fleet page
    web.py        token, headers, bind rule  } (frostwatch.fleet.page) imports just these

Nothing here computes advice. Import each name from its module (`from frostwatch.status.document
import decision_json`): this package itself loads nothing, so importing `frostwatch.status.style`
or `web` (the fleet page) loads nothing else.
"""
