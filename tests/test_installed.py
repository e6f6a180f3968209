"""The suite tests what a grower installs: the wheel in site-packages, never the checkout.

`bash tests/run` builds a wheel from a clean copy of the checkout, installs it non-editable and
runs pytest with the checkout off sys.path. These tests fail when that is not so, or when the
wheel leaves out a module (a package missing from discovery broke `frostwatch run` for anyone
who followed the README, while an editable install passed every test).
"""

from __future__ import annotations

import importlib
import os
import pkgutil
import subprocess
import sys
import sysconfig
from importlib import resources
from pathlib import Path

import frostwatch

REPO = Path(__file__).resolve().parent.parent
SITE_PACKAGES = Path(sysconfig.get_paths()["purelib"]).resolve()
SOURCE = REPO / "frostwatch"  # the checkout's package (the test venv itself may live in the checkout)


def _installed_root() -> Path:
    return Path(frostwatch.__file__).resolve().parent


def test_frostwatch_is_imported_from_site_packages_not_the_checkout():
    root = _installed_root()
    assert root.is_relative_to(SITE_PACKAGES), f"frostwatch imported from {root}, not from {SITE_PACKAGES}"
    assert root != SOURCE.resolve(), f"frostwatch imported from the checkout {root}: run the suite with bash tests/run"


def test_a_python_started_in_the_checkout_imports_the_installed_package():
    """The daemon and CLI tests start `python -m frostwatch` and `python -c` children; run from
    the checkout they must not pick up its frostwatch/ folder (PYTHONSAFEPATH, set by conftest)."""
    p = subprocess.run([sys.executable, "-c", "import frostwatch; print(frostwatch.__file__)"],
                       capture_output=True, text=True, cwd=REPO, timeout=60)
    assert p.returncode == 0, p.stderr
    child = Path(p.stdout.strip()).resolve()
    assert child.is_relative_to(SITE_PACKAGES) and not child.is_relative_to(SOURCE.resolve()), child


def test_the_installed_console_script_is_the_venvs():
    script = Path(sys.executable).parent / "frostwatch"
    assert script.is_file(), f"no console script at {script}"
    assert script.read_text(encoding="utf-8", errors="replace").startswith("#!" + str(Path(sys.executable).parent)), \
        "the frostwatch script does not run this venv's python"
    p = subprocess.run([str(script), "--version"], capture_output=True, text=True, timeout=60)
    assert p.returncode == 0 and p.stdout.strip() == f"frostwatch {frostwatch.__version__}", (p.stdout, p.stderr)
    assert frostwatch.__version__ != "0+unknown", "the version is not read from the installed package's metadata"


def test_every_module_of_the_installed_package_imports():
    """Walk the installed package and import each module; `__main__` only runs the CLI."""
    errors: list[str] = []
    names: list[str] = []

    def onerror(name: str) -> None:
        errors.append(f"{name}: {sys.exc_info()[1]!r}")

    for info in pkgutil.walk_packages(frostwatch.__path__, "frostwatch.", onerror=onerror):
        if info.name.rsplit(".", 1)[-1] == "__main__":
            continue
        names.append(info.name)
        try:
            importlib.import_module(info.name)
        except Exception as exc:  # noqa: BLE001 - every failure is listed, not just the first
            errors.append(f"{info.name}: {exc!r}")
    assert not errors, "modules of the installed package fail to import:\n  " + "\n  ".join(errors)
    assert "frostwatch.alerts.channels" in names and "frostwatch.cli" in names, names


def _source_modules() -> set[str]:
    """Every module of the checkout, named as installed (sample_sensor_logs/ is frostwatch.sample_logs)."""
    out = set()
    trees = [(REPO / "frostwatch", "frostwatch"), (REPO / "sample_sensor_logs", "frostwatch.sample_logs")]
    for top, name in trees:
        for f in top.rglob("*.py"):
            rel = f.relative_to(top).with_suffix("")
            if "__pycache__" in rel.parts:
                continue
            out.add(".".join([name, *rel.parts]))
    return out


def _installed_modules() -> set[str]:
    root = _installed_root()
    return {".".join(["frostwatch", *f.relative_to(root).with_suffix("").parts])
            for f in root.rglob("*.py") if "__pycache__" not in f.parts}


def test_the_wheel_holds_every_module_of_the_checkout():
    """A package left out of discovery may import nothing else yet; compare the trees as well."""
    missing = sorted(_source_modules() - _installed_modules())
    assert not missing, (f"modules in the checkout but not in the installed package: {missing} (left out of "
                         "setup.py's discovery, or added after tests/run built the wheel: run it again)")


def test_the_demo_logs_ship_inside_the_installed_package():
    data = resources.files("frostwatch.sample_logs")
    shipped = {p.name for p in data.iterdir()}
    expected = {p.name for p in (REPO / "sample_sensor_logs").iterdir() if p.suffix in {".csv", ".toml", ".md"}}
    assert expected and expected <= shipped, f"missing from the installed package: {sorted(expected - shipped)}"
    assert Path(str(data)).resolve().is_relative_to(SITE_PACKAGES)


def test_the_benchmarks_import_the_installed_package_from_the_checkout():
    """`python -m bench` runs from the checkout; bench/__init__ keeps its frostwatch/ from shadowing."""
    env = {k: v for k, v in os.environ.items() if k != "PYTHONSAFEPATH"}
    code = ("import bench, frostwatch; from importlib import resources; "
            "print(frostwatch.__file__); print(resources.files('frostwatch.sample_logs'))")
    p = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, cwd=REPO, env=env, timeout=60)
    assert p.returncode == 0, p.stderr
    for line in p.stdout.split():
        assert Path(line).resolve().is_relative_to(SITE_PACKAGES), line
