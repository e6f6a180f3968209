"""Helpers for the report tests: headless Chromium (Debian's `chromium`; the test command
installs it where missing) and the demo logs' paths."""

from __future__ import annotations

import shutil
from pathlib import Path

import pytest
from side_by_side import run_side_by_side

SAMPLE_LOGS = Path(__file__).resolve().parents[2] / "sample_sensor_logs"
FROST_NIGHT = SAMPLE_LOGS / "2027-04-14-radiation-frost.csv"
ALL_NIGHTS = [SAMPLE_LOGS / n for n in ("2027-04-14-radiation-frost.csv", "2027-04-15-windy-advective.csv",
                                        "2027-04-16-cloudy-safe.csv")]


def chromium_exe() -> str:
    exe = shutil.which("chromium") or ("/usr/bin/chromium" if Path("/usr/bin/chromium").exists() else None)
    if exe is None:
        pytest.fail("chromium is not installed; run the README's test command (bash tests/run), which installs it")
    return exe


def chromium(url: str, workdir: Path, shot_name: str, height: int = 915) -> str:
    """Render `url` in headless Chromium at a phone's size (412 px wide): save a screenshot under
    `workdir` and return the DOM after load (--dump-dom)."""
    exe = chromium_exe()
    base = [exe, "--headless", "--no-sandbox", "--disable-gpu", "--hide-scrollbars", "--no-first-run",
            f"--window-size=412,{height}"]
    shot = workdir / shot_name
    _, dom = run_side_by_side([base + [f"--user-data-dir={workdir / 'profile-shot'}", f"--screenshot={shot}", url],
                               base + [f"--user-data-dir={workdir / 'profile-dom'}", "--dump-dom", url]], timeout_s=90)
    assert shot.exists() and shot.stat().st_size > 5000, f"no screenshot written for {url}"
    return dom


# ---- phone layout: nothing runs off the screen (issue 13.7) ---------------------------------------

ARTIFACTS = Path(__file__).resolve().parents[2] / "test-artifacts" / "screens"  # gitignored
_PROBE = """<script>(function () {
  var de = document.documentElement, vw = de.clientWidth, bad = [];
  if (de.scrollWidth > de.clientWidth) bad.push('document ' + de.scrollWidth + ' > ' + de.clientWidth);
  var tables = document.querySelectorAll('table');
  for (var i = 0; i < tables.length; i++) {
    var box = tables[i].parentElement;
    if (box.scrollWidth > box.clientWidth + 1)
      bad.push('table#' + tables[i].id + ' in its box ' + box.scrollWidth + ' > ' + box.clientWidth);
  }
  var all = document.body.getElementsByTagName('*');
  for (var j = 0; j < all.length; j++) {
    var r = all[j].getBoundingClientRect();
    if (r.width > 0 && r.right > vw + 1)
      bad.push(all[j].tagName + '#' + all[j].id + '.' + (all[j].getAttribute('class') || '') + ' right ' +
               Math.round(r.right) + ' > ' + vw);
  }
  var p = document.createElement('pre');
  p.id = 'overflow-report'; p.hidden = true;
  p.textContent = JSON.stringify({vw: vw, tables: tables.length, bad: bad.slice(0, 40)});
  document.body.appendChild(p);
})();</script>"""


def overflow_check(page_html: str, folder: Path, name: str, width: int, height: int = 2400) -> dict:
    """Render `page_html` (written into `folder`, beside the files it links) `width` CSS px wide in
    headless Chromium; save a screenshot under test-artifacts/screens; return what overflows the
    viewport: {"vw": ..., "tables": n, "bad": [...]} (bad is empty when nothing does).

    Headless Chromium will not make a window narrower than 500 px, so the page is shown in an
    iframe exactly `width` px wide (its media queries and layout see that width); the probe inside
    posts its findings to the frame around it, which --dump-dom prints."""
    import html as _html
    import json
    import re

    exe = chromium_exe()
    probe = _PROBE.replace("document.body.appendChild(p);", "document.body.appendChild(p); parent.postMessage(p.textContent, '*');")
    page = folder / f"page-{name}-{width}.html"
    page.write_text(page_html.replace("</body>", probe + "</body>"), encoding="utf-8")
    harness = folder / f"frame-{name}-{width}.html"
    harness.write_text(
        '<!doctype html><html><head><meta charset="utf-8"></head><body style="margin:0;background:#888">'
        '<pre id="overflow-report" hidden></pre><script>window.addEventListener("message", function (e) '
        '{ document.getElementById("overflow-report").textContent = e.data; });</script>'
        f'<iframe src="{page.name}" style="width:{width}px;height:{height}px;border:0;background:#fff;display:block">'
        "</iframe></body></html>", encoding="utf-8")
    base = [exe, "--headless", "--no-sandbox", "--disable-gpu", "--hide-scrollbars", "--no-first-run",
            "--allow-file-access-from-files", f"--window-size={max(width, 500)},{height}", "--virtual-time-budget=8000"]
    ARTIFACTS.mkdir(parents=True, exist_ok=True)
    shot = ARTIFACTS / f"{name}-{width}.png"
    _, out = run_side_by_side([base + [f"--user-data-dir={folder / f'profile-{name}-{width}-{prof}'}", *extra,
                                       harness.as_uri()]
                               for prof, extra in (("shot", [f"--screenshot={shot}"]), ("dom", ["--dump-dom"]))],
                              timeout_s=120)
    assert shot.exists() and shot.stat().st_size > 5000, f"no screenshot of {name} at {width} px"
    m = re.search(r'<pre id="overflow-report" hidden="">(.+?)</pre>', out, re.S)
    assert m, f"the overflow probe did not report on {name}: {out[-500:]}"
    return json.loads(_html.unescape(m.group(1)))
