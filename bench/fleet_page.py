"""The fleet page's own memory: `frostwatch fleet --serve` idle, after serving its page once.

    python -m bench.fleet_page            (or: python -m bench fleet_page; about 15 s)

A real Mosquitto on a free loopback port with no site on it, so what is measured is the process
and what it imports, not the sites (bench/fleet.py loads it with 500). The page and /fleet.json
are fetched once, then VmRSS and VmHWM are read from /proc; median of 3 processes. Floor, in the
same run: a bare interpreter with paho, json and http.server (bench/fleet.py's floor). The fleet
page shares the status page's look through frostwatch.status.style and .web only; when it
imported the status page for its CSS it also loaded the store, the advice methods and numpy.

Writes bench/results/fleet_page.json; `run(verbose=True) -> dict` for `python -m bench`.
"""

from __future__ import annotations

import datetime as dt
import json
import signal
import statistics
import subprocess
import sys
import tempfile
import time
import urllib.request
from pathlib import Path

from bench.fleet import FLOOR_RSS_CODE, RESULTS, Broker, free_port, proc_status_kib

RUNS = 3
TARGET_RATIO = 1.5  # the page may cost at most half again the bare paho + http.server interpreter


def _one_process(work: Path) -> tuple[float, float]:
    broker = Broker(work)
    broker.start()
    port = free_port()
    view = subprocess.Popen([sys.executable, "-m", "frostwatch", "fleet", "--broker", f"127.0.0.1:{broker.port}",
                             "--serve", "--port", str(port)], stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
    try:
        deadline = time.monotonic() + 30
        while True:
            try:
                urllib.request.urlopen(f"http://127.0.0.1:{port}/", timeout=5).read()
                break
            except OSError:
                if time.monotonic() > deadline or view.poll() is not None:
                    raise RuntimeError("the fleet page did not answer within 30 s") from None
                time.sleep(0.1)
        urllib.request.urlopen(f"http://127.0.0.1:{port}/fleet.json", timeout=5).read()
        time.sleep(0.5)
        return proc_status_kib(view.pid, "VmRSS") * 1024 / 1e6, proc_status_kib(view.pid, "VmHWM") * 1024 / 1e6
    finally:
        view.send_signal(signal.SIGINT)
        try:
            view.wait(10)
        except subprocess.TimeoutExpired:
            view.kill()
            view.wait(10)
        broker.stop()


def run(verbose: bool = True) -> dict:
    work = Path(tempfile.mkdtemp(prefix="frostwatch-bench-fleet-page-"))
    rss, hwm = [], []
    for i in range(RUNS):
        (work / str(i)).mkdir()
        r, h = _one_process(work / str(i))
        rss.append(r)
        hwm.append(h)
    floor = int(subprocess.run([sys.executable, "-c", FLOOR_RSS_CODE], capture_output=True, text=True,
                               check=True).stdout) * 1024 / 1e6
    value = round(statistics.median(rss), 1)
    figures = [{"figure": "fleet page process, idle after one page (no sites), RSS median of 3", "value": value,
                "unit": "MB", "target": f"<= {TARGET_RATIO:g}x the floor", "floor": round(floor, 1),
                "floor_label": "bare interpreter with paho, json, http.server", "ratio": round(value / floor, 2),
                "pass": value <= TARGET_RATIO * floor}]
    res = {"run_at_utc": dt.datetime.now(dt.UTC).isoformat(timespec="seconds"), "rss_mb": [round(x, 1) for x in rss],
           "hwm_mb": [round(x, 1) for x in hwm], "floor_rss_mb": round(floor, 1), "figures": figures}
    RESULTS.mkdir(parents=True, exist_ok=True)
    (RESULTS / "fleet_page.json").write_text(json.dumps(res, indent=2) + "\n", encoding="utf-8")
    if verbose:
        print(f"fleet page idle RSS {value} MB (runs {res['rss_mb']}), floor {res['floor_rss_mb']} MB, "
              f"ratio {figures[0]['ratio']}")
    return res


if __name__ == "__main__":
    run()
