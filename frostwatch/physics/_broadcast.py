"""Float-or-array plumbing shared by the vectorised physics functions (no physics here)."""

from __future__ import annotations

import numpy as np


def _result(value: np.ndarray, scalar: bool) -> float | np.ndarray:
    """Return a Python float for scalar input, the array otherwise."""
    return float(value) if scalar else value


def _inputs(*values) -> tuple[list[np.ndarray], bool]:
    """Broadcast inputs to float arrays and tell whether all were scalar."""
    if all(isinstance(v, float) for v in values):
        # floats (numpy's float64 among them): nothing to broadcast; the same 0-d float arrays
        # as below, without np.broadcast_arrays' cost (an evaluation makes about a hundred such calls)
        return [np.array(v, dtype=float) for v in values], True
    scalar = all(np.ndim(v) == 0 for v in values)
    arrays = np.broadcast_arrays(*(np.asarray(v, dtype=float) for v in values))
    return [np.array(a, dtype=float) for a in arrays], scalar


def _out(x):
    """Return a Python float for 0-d results, the array otherwise."""
    x = np.asarray(x, dtype=float)
    return float(x) if x.ndim == 0 else x
