"""deploy/install.sh run for real, end to end, into a throwaway root (--root), with a service user
that exists only in that root, a config at a path of its own, and the wheel tests/run built.
What needs a Pi (apt-get, systemctl) is skipped by option, and the script says so."""

from __future__ import annotations

import os
import pwd
import re
import shutil
import stat
import subprocess
import sys
from pathlib import Path

import background
import pytest

pytestmark = pytest.mark.slow

REPO = Path(__file__).resolve().parent.parent
USER = "fw-trial"  # made inside the root only; never on this machine


def _wheel(tmp: Path, env: dict) -> Path:
    """The wheel tests/run built (FROSTWATCH_WHEEL), or one built here from a clean copy."""
    given = env.get("FROSTWATCH_WHEEL")
    if given:
        return Path(given)
    src = tmp / "src"
    shutil.copytree(REPO, src, ignore=shutil.ignore_patterns(".git", ".venv*", "build", "dist", "*.egg-info",
                                                             "__pycache__", ".pytest_cache", ".hypothesis"))
    p = background.run([sys.executable, "-m", "pip", "wheel", "-q", "--no-deps", "-w", str(tmp / "wheel"), str(src)],
                       env=env, cwd=tmp, timeout=600)
    assert p.returncode == 0, p.stderr
    return next((tmp / "wheel").glob("frostwatch-*.whl"))


def _install_args(root: Path, config: Path, user: str, wheel: Path) -> list[str]:
    return ["bash", str(REPO / "deploy" / "install.sh"), "--root", str(root), "--user", user, "--config", str(config),
            "--wheel", str(wheel), "--skip", "apt,systemctl"]


@background.job("trial")
def _trial_install(tmp: Path, env: dict) -> dict:
    """install.sh into a fresh trial root, in the background from the session's start
    (tests/background.py): a new virtual environment with every dependency takes half a minute."""
    root = tmp / "root"
    config = root / "etc" / "fw-trial" / "farm.toml"
    # only root can make a user, even inside the trial root; anyone else installs as themselves
    user = USER if os.geteuid() == 0 else pwd.getpwuid(os.geteuid()).pw_name
    wheel = _wheel(tmp, env)
    p = background.run(_install_args(root, config, user, wheel), env=env, cwd=REPO, timeout=900)
    return {"root": root, "config": config, "user": user, "wheel": wheel, "run": p}


@pytest.fixture(scope="module")
def trial():
    t = background.result("trial")
    p = t["run"]
    print(p.stdout)  # which steps ran and which were skipped, in the test's output
    assert p.returncode == 0, f"install.sh failed ({p.returncode}):\n{p.stdout}\n{p.stderr}"
    return {"root": t["root"], "config": t["config"], "user": t["user"], "wheel": t["wheel"], "out": p.stdout}


def _summary(out: str) -> tuple[list[str], dict[str, str]]:
    ran = re.search(r"^   ran: (.*)$", out, re.M).group(1).split()
    skipped = dict(re.findall(r"^   skipped (\S+) \((.*)\)$", out, re.M))
    return ran, skipped


def test_install_sh_runs_every_step_a_trial_root_allows_and_names_the_rest(trial):
    ran, skipped = _summary(trial["out"])
    assert ran == ["user", "program", "config", "state", "broker", "unit", "check-config"], trial["out"]
    assert set(skipped) == {"apt", "broker-restart", "service", "checks"}, trial["out"]
    assert all(reason.startswith("--skip ") for reason in skipped.values()), skipped
    for step in ("apt", "broker-restart", "service", "checks"):
        assert f"== {step}: skipped (" in trial["out"]


def test_install_sh_lays_out_program_config_secrets_state_and_unit_in_the_root(trial):
    root, config = trial["root"], trial["config"]
    exe = root / "opt/frostwatch/venv/bin/frostwatch"
    assert os.access(exe, os.X_OK)
    assert config.is_file() and not (root / "etc/frostwatch/frostwatch.toml").exists()
    cred = root / "etc/frostwatch/credentials/broker-password"
    assert stat.S_IMODE(cred.stat().st_mode) == 0o600 and len(cred.read_text().strip()) >= 20
    text = config.read_text(encoding="utf-8")
    assert f'path = "{root}/var/lib/frostwatch/frostwatch.db"' in text
    assert f'password_file = "{cred}"' in text and '\nusername = "frostwatch"' in text
    state = root / "var/lib/frostwatch"
    assert stat.S_IMODE(state.stat().st_mode) == 0o750
    if trial["user"] == USER:
        line = next(ln for ln in (root / "etc/passwd").read_text().splitlines() if ln.startswith(USER + ":"))
        assert state.stat().st_uid == int(line.split(":")[2])
        with pytest.raises(KeyError):
            pwd.getpwnam(USER)  # the machine itself has no such user
    passwd = (root / "etc/mosquitto/frostwatch.passwd").read_text()
    assert passwd.startswith("frostwatch:")
    unit = (root / "etc/systemd/system/frostwatch.service").read_text()
    assert f"\nExecStart={exe} run --config {config}\n" in unit
    assert f"\nUser={trial['user']}\n" in unit
    assert f"LoadCredential=broker-password:{cred}\n" in unit
    page = (root / "etc/systemd/system/frostwatch-status-page.service").read_text()
    assert f"\nExecStart={exe} status-page --config {config}\n" in page  # its own process beside the daemon
    assert f"\nUser={trial['user']}\n" in page


def test_installed_unit_passes_systemd_analyze_verify(trial):
    exe = shutil.which("systemd-analyze")
    if exe is None:
        pytest.skip("systemd-analyze is not on this machine: the unit's syntax is not checked here")
    for name in ("frostwatch.service", "frostwatch-status-page.service"):
        unit = trial["root"] / "etc/systemd/system" / name
        p = subprocess.run([exe, "verify", str(unit)], capture_output=True, text=True, timeout=120)
        assert p.returncode == 0 and name not in p.stderr, p.stderr


def test_installed_check_config_passes_on_the_config_install_sh_wrote(trial):
    exe = trial["root"] / "opt/frostwatch/venv/bin/frostwatch"
    p = subprocess.run([str(exe), "check-config", "--config", str(trial["config"])], capture_output=True, text=True,
                       timeout=120)
    assert p.returncode == 0, p.stderr
    assert p.stdout.startswith(f"{trial['config']}: ok")


def test_the_installed_program_is_the_wheel_and_imports_whole(trial):
    py = trial["root"] / "opt/frostwatch/venv/bin/python"
    code = ("import importlib, pkgutil, frostwatch; "
            "[importlib.import_module(m.name) for m in pkgutil.walk_packages(frostwatch.__path__, 'frostwatch.') "
            "if not m.name.endswith('__main__')]; print(frostwatch.__version__, frostwatch.__file__)")
    p = subprocess.run([str(py), "-c", code], capture_output=True, text=True, timeout=300, cwd=trial["root"])
    assert p.returncode == 0, p.stderr
    version, path = p.stdout.split()
    assert trial["wheel"].name.startswith(f"frostwatch-{version}-")
    assert Path(path).is_relative_to(trial["root"] / "opt/frostwatch/venv")


def test_install_sh_again_upgrades_in_place_keeping_config_password_and_store(trial):
    """Run it again (the README's upgrade): the edited config, the password and the store stay."""
    root, config = trial["root"], trial["config"]
    edited = config.read_text(encoding="utf-8") + "\n# edited by the grower\n"
    config.write_text(edited, encoding="utf-8")
    cred = root / "etc/frostwatch/credentials/broker-password"
    password = cred.read_bytes()
    store = root / "var/lib/frostwatch/frostwatch.db"
    store.write_bytes(b"not touched by install.sh")
    p = subprocess.run(_install_args(root, config, trial["user"], trial["wheel"]), capture_output=True, text=True,
                       timeout=900)
    assert p.returncode == 0, p.stderr
    assert f"{config} exists: kept as it is" in p.stdout
    assert config.read_text(encoding="utf-8") == edited
    assert cred.read_bytes() == password
    assert store.read_bytes() == b"not touched by install.sh"
    assert _summary(p.stdout)[0] == ["user", "program", "config", "state", "broker", "unit", "check-config"]
