"""Permutations: checking, inverting, composing; the one home of the ordering convention.

Convention: position ``k`` of the new order holds old index ``perm[k]`` ("new-to-old"), so the
reordered matrix is ``A[perm][:, perm]`` (the convention of SciPy's ``reverse_cuthill_mckee``). Its
inverse, ``inverse[old] = new``, is the new position of each old index ("old-to-new").
Used by io, analysis and orderings alike; depends only on :mod:`reorder.errors`.
"""

from __future__ import annotations

import numpy as np

from .errors import InputError

__all__ = ["check_permutation", "inverse_permutation"]


def check_permutation(perm, n: int | None = None, *, source: str | None = None) -> np.ndarray:
    """Return ``perm`` as a 0-based int64 array after checking that it permutes ``0..n-1``.

    Parameters
    ----------
    perm : array_like of int
    n : int, optional
        The size it must permute (default: its own length).
    source : str, optional
        Named in the error message (a file name).

    Raises
    ------
    InputError
        With a message that names the first problem found (length, range, repeated index).

    Examples
    --------
    >>> check_permutation([2, 0, 1]).tolist()
    [2, 0, 1]
    """
    arr = np.asarray(perm)
    if arr.ndim != 1:
        raise InputError(f"permutation must be one-dimensional, got shape {arr.shape}", source)
    if arr.dtype.kind == "f":
        if not np.all(np.isfinite(arr)) or np.any(arr != np.round(arr)):
            raise InputError("permutation holds non-integer values", source)
        arr = arr.astype(np.int64)
    elif arr.dtype.kind not in "iu":
        if arr.size == 0:
            arr = arr.astype(np.int64)
        else:
            raise InputError(f"permutation must hold integers, not {arr.dtype}", source)
    arr = arr.astype(np.int64, copy=False)
    m = arr.size if n is None else n
    if n is not None and arr.size != n:
        raise InputError(f"permutation has {arr.size} entries but the matrix has {n} rows", source)
    if arr.size:
        lo, hi = int(arr.min()), int(arr.max())
        if lo < 0 or hi >= m:
            bad = lo if lo < 0 else hi
            raise InputError(f"index {bad} out of range 0..{m - 1}", source)
        counts = np.bincount(arr, minlength=m)
        if np.any(counts != 1):
            dup = int(np.flatnonzero(counts > 1)[0])
            raise InputError(f"index {dup} appears {counts[dup]} times (not a permutation)", source)
    return arr


def inverse_permutation(perm) -> np.ndarray:
    """The inverse of a (valid, unchecked) permutation: ``inv[perm[k]] = k``, as int64.

    Examples
    --------
    >>> inverse_permutation([2, 0, 1]).tolist()
    [1, 2, 0]
    """
    perm = np.asarray(perm, dtype=np.int64)
    inv = np.empty(perm.size, dtype=np.int64)
    inv[perm] = np.arange(perm.size, dtype=np.int64)
    return inv
