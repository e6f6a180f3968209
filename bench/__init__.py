"""frostwatch benchmarks (not timed tests): `python -m bench` runs them all and writes
bench/results/latest.json; `python -m bench NAME ...` runs the named ones."""
