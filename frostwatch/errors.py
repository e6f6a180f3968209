"""One exception hierarchy for frostwatch.

Every message follows one pattern: what, where, the value, what was expected, how to fix it.
The CLI maps `UsageError` and its subclasses to exit status 2 and prints the message alone;
anything else is a bug and exits 1.
"""

from __future__ import annotations


class FrostwatchError(Exception):
    """Base class of every error frostwatch raises on purpose."""


class UsageError(FrostwatchError):
    """The user's mistake: bad arguments, config or input. Exit status 2."""


class ConfigError(UsageError):
    """A config file has one or more problems; `problems` lists each as `section.key: ...`."""

    def __init__(self, path: str, problems: list[str]):
        self.path = path
        self.problems = list(problems)
        lines = "\n".join(f"  {p}" for p in self.problems)
        n = len(self.problems)
        super().__init__(f"{path}: {n} problem{'s' if n != 1 else ''} in the config:\n{lines}")


class IngestError(UsageError):
    """Input that cannot be used at all (for example a log with no usable row)."""


class UnitError(IngestError):
    """An unknown unit or one that does not fit the quantity."""


class PayloadError(IngestError):
    """An MQTT payload or CSV row that cannot be read as a reading."""


class RangeError(IngestError):
    """A value outside the plausible range of its quantity."""


class StoreError(FrostwatchError):
    """The SQLite store cannot be opened, migrated or written."""


class DeliveryError(FrostwatchError):
    """An alert channel failed to deliver."""
