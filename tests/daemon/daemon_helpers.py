"""Helpers for the daemon tests (imported by conftest.py and the tests): a site config pointing at the test broker, the daemon as a real
subprocess (`python -m frostwatch run`), and a QoS 1 publisher that waits for each PUBACK."""

from __future__ import annotations

import datetime as dt
import json
import os
import signal
import sqlite3
import subprocess
import sys
import time
from importlib import resources
from pathlib import Path

import paho.mqtt.client as paho

STATIONS = ("east-low", "river-low", "hill-low")


def write_config(tmp: Path, port: int, extra: str = "") -> Path:
    text = resources.files("frostwatch.sample_logs").joinpath("demo-farm.toml").read_text(encoding="utf-8")
    text = text.replace("port = 1883", f"port = {port}")
    text += (
        "\n[daemon]\nbatch_delay_s = 0.3\nheartbeat_s = 2\nheartbeat_store_s = 2\nhealth_interval_s = 5\nlearn_nights = 3\n" + extra
    )
    p = tmp / "site.toml"
    p.write_text(text, encoding="utf-8")
    return p


class DaemonProc:
    """`frostwatch run` in a subprocess, owned by the test (stopped by its own pid only)."""

    def __init__(self, config: Path, env: dict | None = None, command: list[str] | None = None):
        self.config = config
        self.command = command or [sys.executable, "-m", "frostwatch"]
        self.extra_env = env or {}
        self.log = config.parent / "daemon.log"
        self.proc: subprocess.Popen | None = None

    def start(self) -> None:
        env = dict(os.environ, PYTHONUNBUFFERED="1", FROSTWATCH_LOG_LEVEL="INFO")
        env.pop("NOTIFY_SOCKET", None)
        env.update(self.extra_env)
        f = self.log.open("ab")
        self.proc = subprocess.Popen(
            [*self.command, "run", "--config", str(self.config)],
            stdout=f, stderr=subprocess.STDOUT, env=env,
        )

    def alive(self) -> bool:
        return self.proc is not None and self.proc.poll() is None

    def kill(self) -> None:
        if self.alive():
            self.proc.send_signal(signal.SIGKILL)
            self.proc.wait(10)

    def terminate(self, timeout: float = 20) -> int:
        if self.alive():
            self.proc.send_signal(signal.SIGTERM)
            return self.proc.wait(timeout)
        return self.proc.returncode

    def log_text(self) -> str:
        return self.log.read_text(errors="replace") if self.log.exists() else ""


def connect_publisher(port: int, client_id: str = "test-publisher") -> paho.Client:
    c = paho.Client(paho.CallbackAPIVersion.VERSION2, client_id=client_id, protocol=paho.MQTTv5)
    c.max_inflight_messages_set(100)
    c.max_queued_messages_set(0)
    c.reconnect_delay_set(1, 2)
    c.connect("127.0.0.1", port, keepalive=10)
    c.loop_start()
    return c


def publish_all(c: paho.Client, msgs: list[tuple[str, bytes]], wait_s: float = 60.0) -> None:
    infos = [c.publish(t, p, qos=1) for t, p in msgs]
    deadline = time.monotonic() + wait_s
    for i in infos:
        i.wait_for_publish(max(0.1, deadline - time.monotonic()))
        assert i.is_published(), "the broker did not acknowledge a test publication"


def reading_msgs(n: int, start: dt.datetime, offset: int = 0, prefix: str = "frostwatch") -> list[tuple[str, bytes]]:
    """n distinct readings: station cycles, time steps one second, value plausible."""
    out = []
    for k in range(offset, offset + n):
        st = STATIONS[k % len(STATIONS)]
        t = (start + dt.timedelta(seconds=k)).isoformat().replace("+00:00", "Z")
        out.append((f"{prefix}/{st}/air_temperature", json.dumps({"time": t, "value": round(5 + (k % 50) / 10, 1)}).encode()))
    return out


def db_count(db: Path, sql: str = "SELECT count(*) FROM readings", args=()) -> int:
    if not db.exists():
        return 0
    con = sqlite3.connect(str(db), timeout=10)
    try:
        return con.execute(sql, args).fetchone()[0]
    except sqlite3.OperationalError:
        return 0
    finally:
        con.close()


def wait_until(pred, timeout_s: float, step_s: float = 0.1) -> bool:
    deadline = time.monotonic() + timeout_s
    while time.monotonic() < deadline:
        if pred():
            return True
        time.sleep(step_s)
    return pred()




# ---- a site where it is the middle of the night now, and the status page as its own process ------


def night_site_config(tmp: Path, port: int, daemon: str, local_hour: float = 1.5) -> Path:
    """The demo farm moved in longitude (and given a matching fixed-offset zone) so that it is about
    `local_hour` local solar time now: after dusk and before sunrise whenever the test runs, so the
    daemon's watch window, dusk outlook and night rules all apply. `daemon` is the [daemon] body."""
    now = dt.datetime.now(dt.UTC)
    offset_h = (local_hour - (now.hour + now.minute / 60.0) + 12.0) % 24.0 - 12.0
    zone_h = round(offset_h)
    tz = "Etc/GMT" if zone_h == 0 else f"Etc/GMT{-zone_h:+d}"  # Etc/GMT+5 is five hours behind UTC
    text = resources.files("frostwatch.sample_logs").joinpath("demo-farm.toml").read_text(encoding="utf-8")
    text = (text.replace("port = 1883", f"port = {port}")
            .replace("longitude = -120.30", f"longitude = {offset_h * 15.0:.3f}")
            .replace('timezone = "America/Los_Angeles"', f'timezone = "{tz}"'))
    p = tmp / "site.toml"
    p.write_text(text + "\n[daemon]\n" + daemon, encoding="utf-8")
    return p


def crop_history_msgs(stations: dict[str, list[tuple[dt.datetime, float]]], prefix: str = "frostwatch",
                      quantity: str = "air_temperature") -> list[tuple[str, bytes]]:
    """One MQTT message per (time, value) of each station, in time order within a station."""
    out = []
    for st, pts in stations.items():
        for t, v in pts:
            out.append((f"{prefix}/{st}/{quantity}",
                        json.dumps({"time": t.isoformat().replace("+00:00", "Z"), "value": v}).encode()))
    return out


def free_port() -> int:
    import socket

    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


class StatusPageProc:
    """`frostwatch status-page` in a subprocess on a free loopback port (stopped by its own pid).
    With `cache_s`, the page keeps a computed page that long instead of the shipped 20 s
    (frostwatch.status.server.CACHE_S), so a test that waits for the page to see a change waits
    seconds, not the cache's 20. With `heartbeat_slack_s`, a heartbeat is current within two store
    intervals and that much instead of the shipped 15 s (frostwatch.status.document.HEARTBEAT_SLACK_S,
    its default checked in tests/test_status.py), so a test that kills the daemon waits for the page
    to say so seconds, not the slack's 15."""

    def __init__(self, config: Path, cache_s: float | None = None, heartbeat_slack_s: float | None = None):
        self.config = config
        self.cache_s = cache_s
        self.heartbeat_slack_s = heartbeat_slack_s
        self.port = free_port()
        self.log = config.parent / "status-page.log"
        self.proc: subprocess.Popen | None = None

    @property
    def url(self) -> str:
        return f"http://127.0.0.1:{self.port}/"

    def start(self, timeout_s: float = 30.0) -> None:
        import urllib.request

        f = self.log.open("ab")
        command = [sys.executable, "-m", "frostwatch"]
        settings = []
        if self.cache_s is not None:
            settings.append(f"import frostwatch.status.server as s\ns.CACHE_S = {float(self.cache_s)!r}\n")
        if self.heartbeat_slack_s is not None:
            settings.append("import frostwatch.status.document as d\n"
                            f"d.HEARTBEAT_SLACK_S = {float(self.heartbeat_slack_s)!r}\n")
        if settings:
            command = [sys.executable, "-c", "import sys\n" + "".join(settings)
                       + "from frostwatch.cli import main\nsys.exit(main(sys.argv[1:]))\n"]
        self.proc = subprocess.Popen(
            [*command, "status-page", "--config", str(self.config), "--port", str(self.port)],
            stdout=f, stderr=subprocess.STDOUT, env=dict(os.environ, PYTHONUNBUFFERED="1"),
        )

        def up() -> bool:
            try:
                with urllib.request.urlopen(self.url + "healthz", timeout=2) as r:
                    return r.status == 200
            except OSError:
                return False

        assert wait_until(up, timeout_s), self.log.read_text(errors="replace")

    def get(self, path: str = "") -> str:
        import urllib.request

        with urllib.request.urlopen(self.url + path, timeout=20) as r:
            return r.read().decode()

    def stop(self) -> None:
        if self.proc is not None and self.proc.poll() is None:
            self.proc.send_signal(signal.SIGTERM)
            try:
                self.proc.wait(10)
            except subprocess.TimeoutExpired:
                self.proc.kill()
                self.proc.wait(10)


def run_cli(*args: str, cwd: Path | None = None) -> subprocess.CompletedProcess:
    return subprocess.run([sys.executable, "-m", "frostwatch", *args], capture_output=True, text=True, timeout=300, cwd=cwd)


# ---- headless Chromium: the DOM after load, and screenshots kept as test artifacts ---------------

ARTIFACTS = Path(os.environ.get("FROSTWATCH_TEST_ARTIFACTS") or Path(__file__).resolve().parents[2] / "test-artifacts")


def chromium_page(url: str, workdir: Path, name: str, widths: tuple[int, ...] = (412, 1280),
                  height: int = 1800) -> tuple[str, list[Path]]:
    """Load `url` in headless Chromium (Debian's `chromium`): the DOM after load, and a screenshot
    per width, copied to ARTIFACTS/status-page/NAME-WIDTH.png (kept after the test). The
    screenshots and the DOM are taken by Chromiums started side by side (profiles of their own)."""
    import shutil

    from side_by_side import run_side_by_side

    exe = shutil.which("chromium") or ("/usr/bin/chromium" if Path("/usr/bin/chromium").exists() else None)
    assert exe, "chromium is not installed; run the README's test command (bash tests/run), which installs it"
    out_dir = ARTIFACTS / "status-page"
    out_dir.mkdir(parents=True, exist_ok=True)
    base = [exe, "--headless", "--no-sandbox", "--disable-gpu", "--hide-scrollbars", "--no-first-run"]
    shots = [workdir / f"{name}-{w}.png" for w in widths]
    commands = [base + [f"--user-data-dir={workdir / f'chromium-{name}-{w}'}", f"--window-size={w},{height}",
                        f"--screenshot={shot}", url] for w, shot in zip(widths, shots, strict=True)]
    commands.append(base + [f"--user-data-dir={workdir / f'chromium-{name}-dom'}", f"--window-size={widths[0]},{height}",
                            "--dump-dom", url])
    *_, dom = run_side_by_side(commands, timeout_s=90)
    for shot in shots:
        assert shot.exists() and shot.stat().st_size > 5000, f"no screenshot written for {url}"
        shutil.copyfile(shot, out_dir / shot.name)
    return dom, shots



def green_pixels(png: Path) -> int:
    """Pixels of the status page's green (#2a2, an all-clear card's edge) in a screenshot."""
    import matplotlib.image
    import numpy as np

    img = matplotlib.image.imread(str(png))[:, :, :3]
    rgb = np.rint(img * 255).astype(int) if img.dtype != np.uint8 else img.astype(int)
    return int(np.all(np.abs(rgb - np.array([0x22, 0xAA, 0x22])) <= 6, axis=-1).sum())
