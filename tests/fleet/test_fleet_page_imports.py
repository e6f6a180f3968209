"""The fleet page shares the status page's look, token and headers through two small modules
(frostwatch.status.style and .web), not the status page itself: its process loads no store, no
advice methods and no numpy (it once took about 16 MB more RSS for the CSS alone; bench figure in
the README: 42.9 -> 27.3 MiB)."""

from __future__ import annotations

import json
import subprocess
import sys

_CODE = """
import json, sys
from frostwatch.fleet import page
server = page.make_server(lambda only: {"sites": []}, port=0)
server.server_close()
html = page.render_page({"sites": []}, page.Display(), 30, __import__("datetime").datetime.now(__import__("datetime").UTC))
print(json.dumps({"modules": sorted(sys.modules), "css": "font-family:system-ui" in html}))
"""


def test_fleet_page_loads_no_store_advice_methods_or_numpy():
    p = subprocess.run([sys.executable, "-c", _CODE], capture_output=True, text=True, timeout=60)
    assert p.returncode == 0, p.stderr
    doc = json.loads(p.stdout)
    mods = set(doc["modules"])
    assert doc["css"]  # the status page's look
    assert "frostwatch.status.style" in mods and "frostwatch.status.web" in mods
    loaded = sorted(m for m in mods if m.split(".")[0] in ("numpy", "pandas", "sqlite_utils", "matplotlib")
                    or m in ("frostwatch.status.server", "frostwatch.status.document", "frostwatch.store",
                             "frostwatch.advice.core"))
    assert loaded == []
