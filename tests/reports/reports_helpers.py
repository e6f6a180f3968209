"""Helpers for the report tests: headless Chromium (Debian's `chromium`; the test command
installs it where missing) and the demo logs' paths."""

from __future__ import annotations

import shutil
import subprocess
from pathlib import Path

import pytest

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
    prof1, prof2 = workdir / "profile-shot", workdir / "profile-dom"
    prof1.mkdir(parents=True, exist_ok=True)
    prof2.mkdir(parents=True, exist_ok=True)
    shot = workdir / shot_name
    subprocess.run(base + [f"--user-data-dir={prof1}", f"--screenshot={shot}", url],
                   check=True, capture_output=True, timeout=90)
    assert shot.exists() and shot.stat().st_size > 5000, f"no screenshot written for {url}"
    dom = subprocess.run(base + [f"--user-data-dir={prof2}", "--dump-dom", url],
                         check=True, capture_output=True, timeout=90, text=True).stdout
    return dom
