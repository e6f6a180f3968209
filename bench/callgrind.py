"""A bench module's inner run under callgrind, counted between its own marks (issue 19's
instruction tools: bench/replay_instructions.py, bench/evaluation_instructions.py).

The tool starts itself again as `python -m MODULE --inner WORK ...` under
`valgrind --tool=callgrind --instr-atstart=no`; the inner run does its set-up uninstrumented, calls
`wait_for_go(work)`, and (if `stop_mark`) touches that file when the counted part ends. The driver
switches instrumentation on for that process alone (`callgrind_control -i on PID`) between the
marks. PYTHONHASHSEED is fixed (string hashes otherwise move the count by a few per cent between
runs). Deterministic on a shared machine, unlike CPU time.
"""

from __future__ import annotations

import os
import re
import subprocess
import sys
import time
from pathlib import Path


def wait_for_go(work: Path) -> None:
    """Inner side: say the set-up is done, and wait until instrumentation is on."""
    (work / "ready").touch()
    while not (work / "go").exists():
        time.sleep(0.2)


def wait_for_off(work: Path, timeout_s: float = 120.0) -> None:
    """Inner side, after touching the stop mark: wait until instrumentation is off (the driver
    touches "off"), so that what follows (the interpreter's exit) is not counted."""
    end = time.monotonic() + timeout_s
    while not (work / "off").exists() and time.monotonic() < end:
        time.sleep(0.2)


def _wait_for(mark: Path, p: subprocess.Popen, poll_s: float) -> None:
    while not mark.exists():
        if p.poll() is not None:
            raise RuntimeError(p.stderr.read())
        time.sleep(poll_s)


def counted_run(module: str, inner_args: list[str], work: Path, tree: str | None,
                stop_mark: str | None = None) -> tuple[str, str, int]:
    """Run `python -m module --inner WORK *inner_args` under callgrind; (stdout, stderr, instructions
    counted from its `wait_for_go` to `stop_mark` in WORK, or to its end). `tree`: a frostwatch tree
    put first on the path (default the installed one)."""
    env = dict(os.environ, PYTHONHASHSEED="0")  # the same dict and set layouts in every run
    if tree:
        env["PYTHONPATH"] = os.pathsep.join([tree, str(Path(__file__).resolve().parent.parent)])
    cmd = ["valgrind", "--tool=callgrind", "--instr-atstart=no", f"--callgrind-out-file={work}/cg.out",
           sys.executable, "-m", module, "--inner", str(work), *inner_args]
    p = subprocess.Popen(cmd, env=env, stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True)
    _wait_for(work / "ready", p, 0.5)
    subprocess.run(["callgrind_control", "-i", "on", str(p.pid)], capture_output=True, check=False)
    (work / "go").touch()
    if stop_mark:
        _wait_for(work / stop_mark, p, 0.2)
        subprocess.run(["callgrind_control", "-i", "off", str(p.pid)], capture_output=True, check=False)
        (work / "off").touch()
    out, err = p.communicate()
    found = re.search(r"Collected : (\d+)", err)
    if found is None:
        raise RuntimeError(out + err)
    return out, err, int(found.group(1))
