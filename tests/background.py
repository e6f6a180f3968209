"""Slow set-ups that tests only read, run in the background while other tests run.

A few set-ups are whole programs that take a core for 10-40 s and share nothing with the tests
that run before them: `frostwatch demo` as a new user runs it, `demo --json`, the shared contract
check, deploy/install.sh into a trial root. Each is registered here under the name of the fixture
that hands out its result (`@background.job("demo_printed")`). When the session starts, the jobs
that a selected test needs are run one after another on a thread of their own, in the order the
tests need them: most of the suite waits on brokers, daemons and Chromium, so on two cores these
programs run beside it instead of after it. A fixture gets its job's result with
`background.result(name)`: it waits for a job that is running, and runs one that has not started
itself. A job's failure is raised there, in the fixture, as if the fixture had run it.

A job's processes get the environment and paths the session started with, passed explicitly
(never the os.environ or working directory of whatever test is running meanwhile); a job must
start processes only through `background.run`, so that the ones still running when the session
ends (pytest -x) are killed."""

from __future__ import annotations

import subprocess
import threading
from collections.abc import Callable
from pathlib import Path

_JOBS: dict[str, _Job] = {}
_STARTED: list[subprocess.Popen] = []
_STOPPING = threading.Event()


class _Job:
    def __init__(self, name: str, fn: Callable[[Path, dict], object]):
        self.name, self.fn = name, fn
        self.claim = threading.Lock()  # whoever takes it runs the job: the thread or the fixture
        self.done = threading.Event()
        self.folder: Path | None = None
        self.env: dict | None = None
        self.value: object = None
        self.error: BaseException | None = None

    def run(self) -> None:
        try:
            self.value = self.fn(self.folder, dict(self.env))
        except BaseException as e:  # noqa: BLE001 - raised again in the fixture that asks for it
            self.error = e
        finally:
            self.done.set()


def job(name: str):
    """Register `fn(folder, env) -> result` as the job behind the fixture `name`: `folder` is an
    empty folder of its own, `env` the session's environment at its start."""

    def register(fn):
        _JOBS[name] = _Job(name, fn)
        return fn

    return register


def start(items, tmp_path_factory, env: dict) -> None:
    """Start the jobs the selected `items` use, in the order of their first use, on one thread."""
    order: list[_Job] = []
    for item in items:
        for name in getattr(item, "fixturenames", ()):
            j = _JOBS.get(name)
            if j is not None and j not in order:
                order.append(j)
    for j in order:
        j.folder = tmp_path_factory.mktemp(f"bg-{j.name}")
        j.env = dict(env)

    def work() -> None:
        for j in order:
            if _STOPPING.is_set():
                return
            if j.claim.acquire(blocking=False):
                j.run()

    if order:
        threading.Thread(target=work, name="background-jobs", daemon=True).start()


def result(name: str):
    """The job's result: waited for while it runs, run here if it has not started; its error raised."""
    j = _JOBS[name]
    if j.folder is None:
        raise RuntimeError(f"background job {name!r} was not started: no selected test asks for the fixture {name!r}")
    if j.claim.acquire(blocking=False):
        j.run()
    j.done.wait()
    if j.error is not None:
        raise j.error
    return j.value


def run(args: list[str], *, env: dict, cwd: Path, timeout: float, **kwargs) -> subprocess.CompletedProcess:
    """subprocess.run(args, capture_output=True, text=True) with the environment and the working
    folder given explicitly; the process is killed if the session ends while it runs."""
    with subprocess.Popen(args, stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True, env=env, cwd=cwd,
                          **kwargs) as p:
        _STARTED.append(p)
        try:
            out, err = p.communicate(timeout=timeout)
        except BaseException:
            p.kill()
            p.wait()
            raise
        finally:
            _STARTED.remove(p)
    return subprocess.CompletedProcess(args, p.returncode, out, err)


def stop() -> None:
    """The session ends: no job starts any more, and the processes of a running one are killed."""
    _STOPPING.set()
    for p in list(_STARTED):
        if p.poll() is None:
            p.kill()
