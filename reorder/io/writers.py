"""Matrix writers: Matrix Market (also gzipped) and SciPy ``.npz``, written atomically."""

from __future__ import annotations

import gzip
import io as _io
from pathlib import Path

import scipy.io
import scipy.sparse as sp

from ..errors import InputError
from .paths import atomic_path


def write_matrix(path, matrix, *, comment: str = "") -> None:
    """Write a sparse matrix atomically: Matrix Market (``.mtx``, ``.mtx.gz``) or ``.npz``."""
    path = Path(path)
    mat = sp.csr_matrix(matrix)
    name = path.name.lower()
    if name.endswith(".npz"):
        with atomic_path(path, suffix=".npz") as tmp:
            sp.save_npz(tmp, mat, compressed=True)
    elif name.endswith(".mtx") or name.endswith(".mtx.gz") or name.endswith(".mm"):
        with atomic_path(path) as tmp:
            buf = _io.BytesIO()
            scipy.io.mmwrite(buf, sp.coo_matrix(mat), comment=comment)
            data = buf.getvalue()
            if name.endswith(".gz"):
                data = gzip.compress(data, mtime=0)
            tmp.write_bytes(data)
    else:
        raise InputError("output matrix must end in .mtx, .mtx.gz or .npz", str(path))


