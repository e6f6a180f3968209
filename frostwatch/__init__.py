"""frostwatch: frost-protection advice for orchards and vineyards.

It advises; the grower decides.
"""


def __getattr__(name: str) -> str:
    # `frostwatch.__version__`, read from the installed package's metadata on first use only:
    # importlib.metadata costs 60-90 ms at start-up, which every command would pay (a Pi's
    # `frostwatch --help`, `calc` and `status` should start fast)
    if name == "__version__":
        from importlib.metadata import PackageNotFoundError, version

        try:
            v = version("frostwatch")  # one source: pyproject.toml, as installed
        except PackageNotFoundError:  # a source tree on sys.path without an install
            v = "0+unknown"
        globals()["__version__"] = v
        return v
    raise AttributeError(f"module 'frostwatch' has no attribute {name!r}")
