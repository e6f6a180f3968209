"""frostwatch: frost-protection advice for orchards and vineyards.

It advises; the grower decides.
"""

from importlib.metadata import PackageNotFoundError, version

try:
    __version__ = version("frostwatch")  # one source: pyproject.toml, as installed
except PackageNotFoundError:  # a source tree on sys.path without an install
    __version__ = "0+unknown"
