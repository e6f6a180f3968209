"""The house rules of the installed package (issue 16): which room may do what.

Read from the installed package's source files (never the checkout), so they check what users get.
"""

from __future__ import annotations

import re
from pathlib import Path

import frostwatch

PACKAGE = Path(frostwatch.__file__).parent


def _modules() -> list[Path]:
    return sorted(p for p in PACKAGE.rglob("*.py") if "__pycache__" not in p.parts)


def test_only_the_store_speaks_sql():
    # the store/ package is the only code that sends SQL: every other module calls its functions
    outside = []
    for path in _modules():
        rel = path.relative_to(PACKAGE)
        if rel.parts[0] == "store":
            continue
        for n, line in enumerate(path.read_text(encoding="utf-8").splitlines(), 1):
            if re.search(r"\.execute(many|script)?\(", line):
                outside.append(f"frostwatch/{rel}:{n}: {line.strip()}")
    assert not outside, "SQL outside frostwatch/store/:\n" + "\n".join(outside)


def test_the_sql_check_sees_the_package():
    # the check above would pass on an empty folder: it must be reading the real modules
    names = {p.relative_to(PACKAGE).as_posix() for p in _modules()}
    assert "store/outbox.py" in names and "alerts/outbox.py" in names
    assert any("execute(" in p.read_text(encoding="utf-8") for p in (PACKAGE / "store").glob("*.py"))
