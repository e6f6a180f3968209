"""The CLI's commands, one module per topic; each has `register(subparsers, common_parent)`.

COMMAND_MODULES is the order they appear in `frostwatch --help`.
"""

COMMAND_MODULES = (
    "frostwatch.commands.demo",
    "frostwatch.commands.logs",
    "frostwatch.commands.setup",
    "frostwatch.commands.report",
    "frostwatch.commands.daemon",
    "frostwatch.commands.alerts",
    "frostwatch.commands.stage",
    "frostwatch.commands.calc",
    "frostwatch.commands.fleet",
)
