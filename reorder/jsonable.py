"""One conversion of results (NumPy scalars and arrays, paths, nested dicts) into JSON values."""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np

__all__ = ["jsonable"]


def jsonable(v, *, max_array: int | None = None):
    """``v`` with every NumPy scalar, array, tuple and path turned into plain JSON values.

    Non-finite floats become None (JSON has no NaN); unknown objects their ``str``. Arrays longer
    than ``max_array`` (when given) become the text ``"<array of N>"``.

    Examples
    --------
    >>> jsonable({"a": np.arange(3), "b": np.float64("nan"), 1: (np.int32(2),)})
    {'a': [0, 1, 2], 'b': None, '1': [2]}
    """
    if isinstance(v, dict):
        return {str(k): jsonable(x, max_array=max_array) for k, x in v.items()}
    if isinstance(v, (list, tuple)):
        return [jsonable(x, max_array=max_array) for x in v]
    if isinstance(v, np.ndarray):
        if max_array is not None and v.size > max_array:
            return f"<array of {v.size}>"
        return jsonable(v.tolist())
    if isinstance(v, (bool, np.bool_)):
        return bool(v)
    if isinstance(v, np.integer):
        return int(v)
    if isinstance(v, (float, np.floating)):
        v = float(v)
        return v if math.isfinite(v) else None
    if isinstance(v, Path):
        return str(v)
    if v is None or isinstance(v, (str, int)):
        return v
    return str(v)
