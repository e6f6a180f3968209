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
