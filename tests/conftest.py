"""Shared fixtures: the bundled demo farm in a temp folder, and a real Mosquitto broker.

The broker fixture starts Debian's `mosquitto` in the foreground on a free loopback port with
its own config and persistence folder (reliability.md 2.4); the README's test command installs
the package when missing, so a missing binary is a failure, not a skip.
"""

from __future__ import annotations

import getpass
import os
import shutil
import socket
import subprocess
import time
from importlib import resources
from pathlib import Path

import background
import pytest
from hypothesis import HealthCheck, settings

# Hypothesis profiles: "ci" (the default, quick) and "long" for a by-hand run of 10,000+ examples:
#   HYPOTHESIS_PROFILE=long bash tests/run tests/fuzz
settings.register_profile("ci", max_examples=200, deadline=None, suppress_health_check=[HealthCheck.too_slow])
settings.register_profile("long", max_examples=10_000, deadline=None, suppress_health_check=[HealthCheck.too_slow])
settings.load_profile(os.environ.get("HYPOTHESIS_PROFILE", "ci"))

# Every Python the tests start (`python -m frostwatch`, `python -c ...`) imports the installed
# package, never a frostwatch/ folder in its working directory (tests/run sets it too).
os.environ["PYTHONSAFEPATH"] = "1"

REPO = Path(__file__).resolve().parent.parent
SAMPLE_LOGS = REPO / "sample_sensor_logs"
DEMO_NIGHTS = (
    "2027-04-14-radiation-frost.csv",
    "2027-04-15-windy-advective.csv",
    "2027-04-16-cloudy-safe.csv",
)


@pytest.fixture
def demo_config(tmp_path: Path) -> Path:
    """The demo farm's config copied into a temp folder (its store lands there too)."""
    text = resources.files("frostwatch.sample_logs").joinpath("demo-farm.toml").read_text(encoding="utf-8")
    p = tmp_path / "demo-farm.toml"
    p.write_text(text, encoding="utf-8")
    return p


@pytest.fixture
def demo_logs() -> list[Path]:
    return [SAMPLE_LOGS / n for n in DEMO_NIGHTS]


def free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


class PortTaken(RuntimeError):
    """The free port picked for a broker was taken by another process before the broker bound it."""


class Broker:
    """A Mosquitto process owned by a test: start, stop (SIGTERM), kill (SIGKILL), restart."""

    def __init__(self, workdir: Path, port: int, extra_conf: str = ""):
        self.workdir = workdir
        self.port = port
        self.conf = workdir / "mosquitto.conf"
        (workdir / "data").mkdir(parents=True, exist_ok=True)
        # Run as whoever runs the tests. Started as root, mosquitto otherwise drops to the user
        # "mosquitto", which cannot write its persistence file into a root-owned temp folder:
        # nothing fails at start, and a restart silently loses every queued message
        # (reliability.md finding 8).
        self.conf.write_text(
            f"user {getpass.getuser()}\n"
            f"listener {port} 127.0.0.1\n"
            "allow_anonymous true\n"
            "persistence true\n"
            f"persistence_location {workdir / 'data'}/\n"
            "autosave_interval 1\n"
            "max_queued_messages 100000\n"
            "max_inflight_messages 100\n"
            f"log_dest file {workdir / 'mosquitto.log'}\n"
            + extra_conf
        )
        self.proc: subprocess.Popen | None = None

    def start(self, timeout_s: float = 10.0) -> None:
        exe = shutil.which("mosquitto") or "/usr/sbin/mosquitto"
        self.proc = subprocess.Popen([exe, "-c", str(self.conf)], stdout=subprocess.DEVNULL, stderr=subprocess.PIPE)
        deadline = time.monotonic() + timeout_s
        while time.monotonic() < deadline:
            try:
                with socket.create_connection(("127.0.0.1", self.port), timeout=0.2):
                    pass
            except OSError:
                self._raise_if_exited()
                time.sleep(0.05)
                continue
            # something listens there; make sure it is this broker, not another process that took
            # the port between free_port() and mosquitto's bind (mosquitto then exits at once)
            time.sleep(0.05)
            self._raise_if_exited()
            return
        raise RuntimeError(f"mosquitto did not listen on {self.port} within {timeout_s} s")

    def _raise_if_exited(self) -> None:
        if self.proc.poll() is None:
            return
        err = self.proc.stderr.read().decode(errors="replace")
        log = self.workdir / "mosquitto.log"
        err += log.read_text(errors="replace")[-2000:] if log.exists() else ""
        cls = PortTaken if "address already in use" in err.lower() else RuntimeError
        raise cls(f"mosquitto exited: {err}")

    @property
    def db_file(self) -> Path:
        return self.workdir / "data" / "mosquitto.db"

    def save_now(self, timeout_s: float = 10.0) -> None:
        """SIGUSR1 makes mosquitto write its persistence file; wait until it has (deploy/README's check)."""
        import signal

        before = self.db_file.stat().st_mtime_ns if self.db_file.exists() else 0
        self.proc.send_signal(signal.SIGUSR1)
        deadline = time.monotonic() + timeout_s
        while time.monotonic() < deadline:
            if self.db_file.exists() and self.db_file.stat().st_mtime_ns != before:
                return
            time.sleep(0.05)
        raise RuntimeError(f"mosquitto did not write {self.db_file}: persistence is not working")

    def stop(self) -> None:
        if self.proc and self.proc.poll() is None:
            self.proc.terminate()
            self.proc.wait(timeout=10)

    def kill(self) -> None:
        if self.proc and self.proc.poll() is None:
            self.proc.kill()
            self.proc.wait(timeout=10)

    def restart(self) -> None:
        self.stop()
        self.start()


@pytest.fixture
def mosquitto(tmp_path: Path):
    """A running Mosquitto broker on a free loopback port, stopped after the test."""
    exe = shutil.which("mosquitto") or ("/usr/sbin/mosquitto" if Path("/usr/sbin/mosquitto").exists() else None)
    if exe is None:
        pytest.fail("mosquitto is not installed; run the README's test command (bash tests/run), which installs it")
    for attempt in range(5):
        b = Broker(tmp_path / "broker", free_port())
        try:
            b.start()
            break
        except PortTaken:
            if attempt == 4:
                raise
    yield b
    b.kill()


@pytest.fixture
def make_broker(tmp_path: Path):
    """More than one broker in a test (a site and a central one): make_broker(name, extra_conf)
    gives a Broker on a free port, not yet started (its config may be rewritten first); every one
    is killed after the test."""
    made: list[Broker] = []

    def make(name: str, extra_conf: str = "") -> Broker:
        b = Broker(tmp_path / name, free_port(), extra_conf)
        made.append(b)
        return b

    yield make
    for b in made:
        b.kill()


@pytest.fixture(scope="session")
def demo_decisions() -> list:
    """Every decision of the demo farm's three nights, from one in-process walk-forward
    (pipeline.run_replay over the logs' series) for the session: the codec tests
    (tests/test_evaluation_speedups.py, tests/test_replay_speedups.py) encode each of them. Frozen
    dataclasses, in a tuple: read them, never change them."""
    from frostwatch import pipeline
    from frostwatch.commands.logs import _series_from_readings
    from frostwatch.config import load_config
    from frostwatch.ingest.csvlog import read_sensor_log

    with resources.as_file(resources.files("frostwatch.sample_logs").joinpath("demo-farm.toml")) as path:
        cfg = load_config(str(path))
    readings = [r for n in DEMO_NIGHTS for r in read_sensor_log(SAMPLE_LOGS / n, {s.id for s in cfg.stations})[0]]
    return tuple(d for ev in pipeline.run_replay(cfg, _series_from_readings(readings)) for d in ev.decisions)


# ---- one real `frostwatch replay --json` per farm and logs, for the whole session -----------------


class Replayed:
    """What one `frostwatch replay LOGS --config C --json --report-dir R` gave: the config file (its
    store beside it), the report folder and the printed document. Shared by every test that asks for
    the same config text and logs: read it, never change it (`doc()` parses a fresh copy each call)."""

    def __init__(self, config: Path, reports: Path, stdout: str):
        self.config, self.reports, self.stdout = config, reports, stdout

    def doc(self) -> dict:
        import json

        return json.loads(self.stdout)


@pytest.fixture(scope="session")
def replayed(tmp_path_factory):
    """replayed(config_text, logs, name="farm.toml") -> Replayed: the demo farm's and the scenario
    farms' nights are replayed by many test modules (alert wording, short forms, merged minutes, one
    message, the daemon's path); each (config, logs) once per session, with its night reports, in
    a real process as a grower runs it. The acknowledgement codes in the alerts are random per run.
    replayed.many([(config_text, logs, name), ...]) -> [Replayed, ...]: those not yet replayed run
    side by side, as many at a time as there are cores (each replay is one process on one core)."""
    import json
    import sys
    from concurrent.futures import ThreadPoolExecutor

    done: dict[tuple, Replayed] = {}

    def key_of(config_text: str, logs: list[Path], name: str) -> tuple:
        return (config_text, tuple(str(p) for p in logs), name)

    def run(key: tuple, work: Path) -> Replayed:
        config_text, logs, name = key
        cfg = work / name
        cfg.write_text(config_text, encoding="utf-8")
        reports = work / "reports"
        p = subprocess.run([sys.executable, "-m", "frostwatch", "replay", *logs, "--config", str(cfg),
                            "--json", "--report-dir", str(reports)], capture_output=True, text=True, timeout=900,
                           cwd=work)
        assert p.returncode == 0, p.stderr[-3000:]
        json.loads(p.stdout)  # one document
        return Replayed(cfg, reports, p.stdout)

    def many(runs: list[tuple[str, list[Path], str]]) -> list[Replayed]:
        keys = [key_of(*r) for r in runs]
        todo = list(dict.fromkeys(k for k in keys if k not in done))
        folders = [tmp_path_factory.mktemp("replayed") for _ in todo]
        with ThreadPoolExecutor(max_workers=max(1, len(os.sched_getaffinity(0)))) as pool:
            for key, got in zip(todo, pool.map(run, todo, folders), strict=True):
                done[key] = got
        return [done[k] for k in keys]

    def replay(config_text: str, logs: list[Path], name: str = "farm.toml") -> Replayed:
        return many([(config_text, logs, name)])[0]

    replay.many = many
    return replay


@pytest.fixture(scope="session", autouse=True)
def _background_jobs(request, tmp_path_factory):
    """The slow set-ups the selected tests only read (the demo, the contract check, the trial
    install), started in the background as the session starts (tests/background.py)."""
    background.start(request.session.items, tmp_path_factory, dict(os.environ))
    yield
    background.stop()


@background.job("demo_printed")
def _run_demo(home: Path, env: dict) -> subprocess.CompletedProcess:
    import sys

    return background.run([sys.executable, "-m", "frostwatch", "demo"], cwd=home, env=dict(env, HOME=str(home)),
                          timeout=600)


@pytest.fixture(scope="session")
def demo_printed() -> subprocess.CompletedProcess:
    """The README's first command, `frostwatch demo`, run once for the session as a new user runs
    it: no config, no --out, in an empty folder that is also HOME (no broker, no network); in the
    background from the session's start. Its printed text is read by the CLI test (it names its
    report) and the message test (every printed alert is consistent)."""
    p = background.result("demo_printed")
    assert p.returncode == 0, p.stderr[-3000:]
    return p


@pytest.fixture
def forecast_setting(monkeypatch):
    """Set one of `frostwatch.forecast.settings` for a test, in every module that binds it by name
    (`settings.READERS`; a module that imported a setting keeps its own binding), restored after."""
    from frostwatch.forecast import settings

    def set_setting(name: str, value) -> None:
        for mod in settings.modules_binding(name):
            monkeypatch.setattr(mod, name, value)

    return set_setting
