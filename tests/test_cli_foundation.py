"""The scripted-use contract end to end: replay, export, report, demo, exit codes."""

import csv
import io
import json
import shutil
import subprocess
import sys
from pathlib import Path

import background
import pytest

from frostwatch.cli import main

REPO = Path(__file__).resolve().parent.parent
SAMPLES = REPO / "sample_sensor_logs"
CONTRACT_CHECK = REPO.parent / "shared" / "contract-check"


def run(capsys, *argv):
    rc = main(list(argv))
    out = capsys.readouterr()
    return rc, out.out, out.err


def test_replay_names_each_bad_row_by_its_line_and_keeps_the_good_ones(demo_config, capsys):
    rc, out, err = run(capsys, "replay", str(SAMPLES / "broken-rows.csv"), "--config", str(demo_config), "--json", "--no-report")
    assert rc == 0
    doc = json.loads(out)  # stdout is one JSON document and nothing else
    for line in (7, 9, 11, 12, 13, 15, 16, 17, 18, 19, 21, 22, 23, 24):
        assert f"broken-rows.csv:{line}: " in err
    assert "broken-rows.csv:32: " in err and "already stored" in err  # the conflicting duplicate
    assert doc["readings"] == {"read": 17, "stored": 15, "duplicates": 1, "rejected": 15}


def test_replay_strict_exits_2_and_stores_nothing(demo_config, capsys):
    rc, _, err = run(capsys, "replay", str(SAMPLES / "broken-rows.csv"), "--config", str(demo_config), "--strict", "--no-report")
    assert rc == 2 and "--strict" in err
    rc, out, _ = run(capsys, "export", "--config", str(demo_config))
    assert out.strip().splitlines() == ["time,station,quantity,value,unit"]


def test_replay_with_no_usable_row_exits_2(demo_config, tmp_path, capsys):
    bad = tmp_path / "bad.csv"
    bad.write_text("time,station,quantity,value,unit\n2027-04-14T21:00:00,east-low,air_temperature,3,degC\n")
    rc, _, err = run(capsys, "replay", str(bad), "--config", str(demo_config))
    assert rc == 2 and "no usable row" in err and "bad.csv:2: " in err


def test_export_round_trips_what_went_in(demo_config, demo_logs, capsys, tmp_path):
    assert run(capsys, "replay", str(demo_logs[0]), "--config", str(demo_config), "--no-report")[0] == 0
    rc, out, _ = run(capsys, "export", "--config", str(demo_config))
    rows = list(csv.DictReader(io.StringIO(out)))
    assert rc == 0 and len(rows) == 4752
    # the exported log is itself a valid sensor log: replaying it into a fresh store stores the same
    exported = tmp_path / "exported.csv"
    exported.write_text(out)
    cfg2 = tmp_path / "two.toml"
    cfg2.write_text(demo_config.read_text().replace('path = "frostwatch.db"', 'path = "two.db"'))
    rc, out2, _ = run(capsys, "replay", str(exported), "--config", str(cfg2), "--json", "--no-report")
    assert json.loads(out2)["readings"]["stored"] == 4752


def test_export_window_and_bad_time(demo_config, demo_logs, capsys):
    run(capsys, "replay", str(demo_logs[0]), "--config", str(demo_config), "--no-report")
    rc, out, _ = run(capsys, "export", "--config", str(demo_config), "--start", "2027-04-15T00:00:00-07:00",
                     "--end", "2027-04-15T01:00:00-07:00")
    times = {row["time"] for row in csv.DictReader(io.StringIO(out))}
    assert rc == 0 and min(times) == "2027-04-15T07:00:00Z" and max(times) == "2027-04-15T08:00:00Z"
    rc, _, err = run(capsys, "export", "--config", str(demo_config), "--start", "2027-04-15T00:00:00")
    assert rc == 2 and "--start" in err and "offset" in err


def test_missing_config_is_exit_2_naming_the_file(tmp_path, capsys):
    rc, _, err = run(capsys, "export", "--config", str(tmp_path / "nope.toml"))
    assert rc == 2 and "nope.toml" in err


def test_report_writes_html_png_and_csv(demo_config, demo_logs, capsys, tmp_path):
    run(capsys, "replay", str(demo_logs[0]), "--config", str(demo_config), "--no-report")
    out_dir = tmp_path / "rep"
    rc, out, _ = run(capsys, "report", "--config", str(demo_config), "--night", "2027-04-14", "--out", str(out_dir))
    names = {p.suffix for p in out_dir.iterdir()}
    assert rc == 0 and {".html", ".png", ".csv"} <= names
    rc, _, err = run(capsys, "report", "--config", str(demo_config), "--night", "2027-05-30", "--out", str(out_dir))
    assert rc == 2 and "no readings stored" in err


def test_demo_needs_nothing_and_names_its_report(demo_printed):
    """The README's first command: no config, no broker, no network (the session's one run of it,
    tests/conftest.py, in an empty folder that is also HOME)."""
    p = demo_printed
    assert "night report:" in p.stdout and ".html" in p.stdout
    assert "PROTECT" in p.stdout and "Cautions:" in p.stdout
    page = Path(p.stdout.split("night report: ")[1].split()[0])
    assert page.exists()


@background.job("contract_checked")
def _run_contract_check(folder: Path, env: dict) -> subprocess.CompletedProcess | None:
    if not CONTRACT_CHECK.exists():
        return None
    exe = shutil.which("frostwatch", path=env.get("PATH")) or str(Path(sys.executable).parent / "frostwatch")
    return background.run([sys.executable, str(CONTRACT_CHECK), exe], cwd=folder, env=env, timeout=600)


@pytest.fixture(scope="module")
def contract_checked() -> subprocess.CompletedProcess | None:
    """The shared contract checker run on the installed command, in the background from the
    session's start (tests/background.py); None where the checker is not beside this checkout."""
    return background.result("contract_checked")


@pytest.mark.skipif(not CONTRACT_CHECK.exists(), reason="the shared contract checker is not beside this checkout")
def test_shared_contract_check_passes(contract_checked):
    p = contract_checked
    assert p.returncode == 0, p.stdout + p.stderr
    assert "contract shape ok" in p.stdout
