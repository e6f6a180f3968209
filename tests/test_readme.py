"""The README stays true: every command and calc subcommand is documented there."""

import argparse
from pathlib import Path

from frostwatch.cli import build_parser

README = (Path(__file__).resolve().parent.parent / "README.md").read_text(encoding="utf-8")


def _subcommands(parser: argparse.ArgumentParser) -> dict[str, argparse.ArgumentParser]:
    for action in parser._actions:
        if isinstance(action, argparse._SubParsersAction):
            return dict(action.choices)
    return {}


def test_every_command_is_in_the_readme():
    commands = _subcommands(build_parser())
    missing = [name for name in commands if f"frostwatch {name}" not in README]
    assert not missing, f"commands missing from README.md: {missing}"


def test_every_calc_subcommand_is_in_the_readme():
    calc = _subcommands(build_parser())["calc"]
    missing = [name for name in _subcommands(calc) if f"frostwatch calc {name}" not in README]
    assert not missing, f"calc subcommands missing from README.md: {missing}"


def test_readme_gives_the_two_setup_commands_and_the_cautions():
    assert "frostwatch demo" in README and "bash tests/run" in README
    assert "advises; the grower decides" in README


def _demo_alerts(printed: str) -> set[tuple[str, str, str]]:
    """(time, block, level) of every alert the demo printed, e.g. ("22:28", "east", "PROTECT")."""
    import re

    return {(m[1], m[2], m[3]) for m in re.finditer(r"^  \d{4}-\d\d-\d\d (\d\d:\d\d) \w+  (\w+): ([A-Z][A-Z ]+?):",
                                                   printed, re.M)}


def test_what_the_demo_shows_is_what_the_demo_prints(demo_printed):
    """"What the demo shows" names alert times; each is an alert the demo prints, of the block and
    level the sentence says (a projection change that moves them must move the README too)."""
    import re

    section = README.split("## What the demo shows", 1)[1].split("\n## ", 1)[0]
    alerts = _demo_alerts(demo_printed.stdout)
    said = {("PROTECT", "river"): r"\*\*protect\*\* for the sprinklers at (\d\d:\d\d)",
            ("PROTECT", "east"): r"for the wind machines at (\d\d:\d\d)",
            ("ALL HANDS", "east"): r"\*\*all hands\*\* alert at (\d\d:\d\d)",
            ("MAY STOP", "river"): r"for the sprinklers at (\d\d:\d\d), once the wet bulb",
            ("MAY STOP", "east"): r"for the wind machines at (\d\d:\d\d) once"}
    for (level, block), pattern in said.items():
        m = re.search(pattern, section.replace("\n  ", " "))
        assert m, f"README's demo section no longer says when {block} gets {level}"
        assert (m[1], block, level) in alerts, f"README says {block} {level} at {m[1]}; the demo printed " + str(
            sorted(a for a in alerts if a[1] == block))
    times = set(re.findall(r"\b(\d\d:\d\d)\b", section))
    assert times <= {a[0] for a in alerts}, times - {a[0] for a in alerts}
