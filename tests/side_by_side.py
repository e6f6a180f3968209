"""Independent processes of one check run at once (the Chromiums that take a page's screenshots and
its DOM): on two cores their waits overlap instead of adding up."""

from __future__ import annotations

import subprocess
from concurrent.futures import ThreadPoolExecutor
from pathlib import Path


def run_side_by_side(commands: list[list[str]], timeout_s: float) -> list[str]:
    """Run the commands at once, each to its end (a `--user-data-dir=` folder is made first), and
    raise the first failure as `subprocess.run(check=True)` does: their standard outputs, in order."""

    def one(command: list[str]) -> str:
        for arg in command:
            if arg.startswith("--user-data-dir="):
                Path(arg.split("=", 1)[1]).mkdir(parents=True, exist_ok=True)
        return subprocess.run(command, check=True, capture_output=True, timeout=timeout_s, text=True).stdout

    with ThreadPoolExecutor(max_workers=len(commands)) as pool:
        return list(pool.map(one, commands))
