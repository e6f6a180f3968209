"""Which packages go into the wheel: found, never listed by hand.

Every package under ``frostwatch/`` is found by discovery, so a new one cannot be left out (the
import walk in tests/test_installed.py fails if one ever is). ``frostwatch.sample_logs`` is the
one package mapped from elsewhere: the top-level ``sample_sensor_logs/`` folder (see
``[tool.setuptools.package-dir]`` in pyproject.toml), so ``frostwatch demo`` finds its logs in
the installed package. Everything else about the build is in pyproject.toml.
"""

from setuptools import find_namespace_packages, setup

setup(
    packages=[
        *find_namespace_packages(include=["frostwatch", "frostwatch.*"], exclude=["*.__pycache__"]),
        "frostwatch.sample_logs",
    ],
)
