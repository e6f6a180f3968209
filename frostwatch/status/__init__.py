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

Nothing here computes advice. The names of `document` are loaded from this package on first
use (`from frostwatch.status import decision_json`), so importing `frostwatch.status.style`
or `web` loads nothing else.
"""

from __future__ import annotations

import importlib

_DOCUMENT_NAMES = ("HEARTBEAT_META", "HEARTBEAT_SLACK_S", "Liveness", "liveness", "read_liveness",
                   "evaluation_limit_s", "effective_monitoring", "decision_json", "status_document",
                   "decisions_for_page")

__all__ = list(_DOCUMENT_NAMES)


def __getattr__(name: str):
    if name in _DOCUMENT_NAMES:
        return getattr(importlib.import_module("frostwatch.status.document"), name)
    raise AttributeError(f"module 'frostwatch.status' has no attribute {name!r}")
