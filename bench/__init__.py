"""frostwatch benchmarks (not timed tests): `python -m bench` runs them all and writes
bench/results/latest.json; `python -m bench NAME ...` runs the named ones.

They measure the installed frostwatch (the wheel `bash tests/run` installs in .venv-test), as the
tests do. `python -m bench` puts the checkout first on sys.path, where its frostwatch/ folder
would shadow the installed package (and lacks the demo data, frostwatch.sample_logs): the
checkout moves to the end of sys.path here, once `bench` itself is imported.
"""

import os as _os
import sys as _sys

_CHECKOUT = _os.path.dirname(_os.path.dirname(_os.path.abspath(__file__)))
if "frostwatch" not in _sys.modules:
    _sys.path[:] = [p for p in _sys.path if _os.path.abspath(p or _os.curdir) != _CHECKOUT] + [_CHECKOUT]
