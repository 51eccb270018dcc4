"""Right-hand sides and solutions: ``.npy`` or Matrix Market array files, read checked, written atomically."""

from __future__ import annotations

import io as _io
from pathlib import Path

import numpy as np

from ..errors import InputError
from .paths import atomic_path

__all__ = ["read_vectors", "write_vectors"]


def read_vectors(path, n: int) -> np.ndarray:
    """Read one vector (shape ``(n,)``) or several (``(n, k)``) from ``.npy`` or Matrix Market (``.mtx``).

    Raises
    ------
    InputError
        Missing or unreadable file, wrong number of rows, values that are not finite numbers.
    """
    path = Path(path)
    src = str(path)
    if not path.is_file():
        raise InputError("no such file" if not path.exists() else "not a regular file", src)
    name = path.name.lower()
    try:
        if name.endswith(".npy"):
            arr = np.load(path, allow_pickle=False)
        elif name.endswith(".mtx") or name.endswith(".mm"):
            import scipy.io
            import scipy.sparse as sp

            arr = scipy.io.mmread(str(path))
            if sp.issparse(arr):
                arr = arr.toarray()
        else:
            raise InputError("right-hand side must be a .npy or Matrix Market (.mtx) file", src)
    except InputError:
        raise
    except Exception as exc:
        raise InputError(f"cannot read vectors ({exc.__class__.__name__})", src) from None
    arr = np.asarray(arr)
    if arr.dtype.kind not in "iuf":
        raise InputError(f"vectors must hold real numbers, not {arr.dtype}", src)
    if arr.ndim == 2 and arr.shape[1] == 1:
        arr = arr[:, 0]
    if arr.ndim not in (1, 2) or arr.shape[0] != n:
        raise InputError(f"vectors have shape {arr.shape} but the matrix has {n} rows", src)
    if not np.all(np.isfinite(arr)):
        raise InputError("vectors hold NaN or infinite values", src)
    return arr.astype(np.float64)


def write_vectors(path, x, *, comment: str = "") -> None:
    """Write ``x`` (``(n,)`` or ``(n, k)``) atomically as ``.npy`` or a Matrix Market array (``.mtx``)."""
    path = Path(path)
    name = path.name.lower()
    x = np.asarray(x)
    if name.endswith(".npy"):
        with atomic_path(path, suffix=".npy") as tmp:
            with open(tmp, "wb") as fh:
                np.save(fh, x)
    elif name.endswith(".mtx") or name.endswith(".mm"):
        import scipy.io

        buf = _io.BytesIO()
        scipy.io.mmwrite(buf, x.reshape(x.shape[0], -1), comment=comment, precision=17)
        with atomic_path(path) as tmp:
            tmp.write_bytes(buf.getvalue())
    else:
        raise InputError("solution file must end in .npy or .mtx", str(path))
