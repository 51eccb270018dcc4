"""Matrix writers: Matrix Market (also gzipped), Harwell–Boeing and SciPy ``.npz``, written atomically.

Symmetric matrices keep symmetric storage (one triangle) in Matrix Market and Harwell–Boeing unless
the caller asks for both triangles.
"""

from __future__ import annotations

import gzip
import io as _io
from pathlib import Path

import numpy as np
import scipy.io
import scipy.sparse as sp

from ..errors import InputError
from .paths import atomic_path, is_stdio

#: File endings :func:`write_matrix` knows.
HB_WRITE_SUFFIXES = (".rua", ".rsa", ".rb", ".hb")


def is_symmetric(matrix) -> bool:
    """True if ``matrix`` is square and equal to its transpose, values included (exact comparison)."""
    A = sp.csr_matrix(matrix)
    if A.shape[0] != A.shape[1]:
        return False
    D = (A - A.T).tocsr()
    D.eliminate_zeros()
    return D.nnz == 0


def write_matrix(path, matrix, *, comment: str = "", symmetric: bool | None = None) -> None:
    """Write a sparse matrix atomically.

    Parameters
    ----------
    path : path-like
        ``.mtx`` / ``.mm`` / ``.mtx.gz`` (Matrix Market coordinate), ``.rua`` / ``.rsa`` / ``.rb`` /
        ``.hb`` (Harwell–Boeing, real assembled) or ``.npz`` (:func:`scipy.sparse.save_npz`).
    matrix : sparse matrix or array
    comment : str
        A comment line (Matrix Market) or the title (Harwell–Boeing, first 72 characters).
    symmetric : bool, optional
        Store one triangle (Matrix Market ``symmetric``, Harwell–Boeing type ``RSA``). None (the
        default) does so exactly when the matrix equals its transpose; True for a matrix that does
        not is an error. ``.rua`` always stores both triangles, ``.rsa`` needs a symmetric matrix.

    Raises
    ------
    InputError
        An unknown file ending, or symmetric storage asked for a matrix that is not symmetric.
    """
    path = Path(path)
    mat = sp.csr_matrix(matrix)
    name = path.name.lower()
    sym = is_symmetric(mat) if symmetric is None else bool(symmetric)
    if name.endswith(".rua"):
        sym = False
    elif name.endswith(".rsa"):
        sym = True
    if sym and symmetric is not False and not is_symmetric(mat):
        raise InputError("symmetric storage asked for a matrix that is not symmetric", str(path))
    if name.endswith(".npz"):
        with atomic_path(path, suffix=".npz") as tmp:
            sp.save_npz(tmp, mat, compressed=True)
    elif name.endswith((".mtx", ".mtx.gz", ".mm", ".mm.gz")) or is_stdio(path):
        with atomic_path(path) as tmp:
            buf = _io.BytesIO()
            scipy.io.mmwrite(buf, sp.coo_matrix(mat), comment=comment, symmetry="symmetric" if sym else "general")
            data = buf.getvalue()
            if name.endswith(".gz"):
                data = gzip.compress(data, mtime=0)
            tmp.write_bytes(data)
    elif name.endswith(HB_WRITE_SUFFIXES):
        text = harwell_boeing_text(mat, title=comment, key=_hb_key(path), symmetric=sym)
        with atomic_path(path) as tmp:
            tmp.write_text(text, encoding="ascii")
    else:
        raise InputError("output matrix must end in .mtx, .mtx.gz, .npz or Harwell-Boeing .rua/.rsa/.rb", str(path))


def _hb_key(path: Path) -> str:
    key = "".join(c for c in path.name.split(".")[0].upper() if c.isalnum())
    return (key or "MATRIX")[:8]


def _int_block(values: np.ndarray) -> tuple[str, list[str]]:
    """Fortran format and lines of 1-based integers, as many per 80-column line as fit."""
    width = max(len(str(int(values.max()))) if values.size else 1, 1) + 1
    per = max(80 // width, 1)
    lines = ["".join(f"{int(v):>{width}d}" for v in values[i:i + per]) for i in range(0, values.size, per)]
    return f"({per}I{width})", lines


def _real_block(values: np.ndarray) -> tuple[str, list[str]]:
    """Fortran format and lines of reals: 17 significant digits, so doubles survive the round trip."""
    per, width = 3, 26
    lines = ["".join(f"{float(v):>{width}.16E}" for v in values[i:i + per]) for i in range(0, values.size, per)]
    return f"({per}E{width}.16)", lines


def harwell_boeing_text(matrix, *, title: str = "", key: str = "MATRIX", symmetric: bool = False) -> str:
    """The matrix as Harwell–Boeing text: real assembled, column-compressed, 1-based.

    With ``symmetric`` the type is ``RSA`` and only the lower triangle (diagonal included) is
    stored, column by column; otherwise ``RUA`` with every entry. Pattern and integer matrices are
    written with real values. The header is the format's four lines (title and key; card counts;
    type and sizes; Fortran formats of pointers, indices and values); no right-hand side.

    References
    ----------
    I. S. Duff, R. G. Grimes and J. G. Lewis, "Sparse matrix test problems", ACM Trans. Math.
    Software 15 (1989) 1–14 (the exchange format and its header).
    """
    A = sp.csc_matrix(matrix)
    if A.dtype.kind == "c":
        raise InputError("complex matrices cannot be written as real Harwell-Boeing")
    if symmetric:
        A = sp.csc_matrix(sp.tril(A))
    A.sort_indices()
    nrow, ncol = A.shape
    ptr_fmt, ptr_lines = _int_block(A.indptr.astype(np.int64) + 1)
    ind_fmt, ind_lines = _int_block(A.indices.astype(np.int64) + 1)
    val_fmt, val_lines = _real_block(A.data.astype(np.float64))
    total = len(ptr_lines) + len(ind_lines) + len(val_lines)
    title = " ".join(str(title).split())[:72]
    header = [
        f"{title:<72}{key[:8]:<8}",
        f"{total:>14d}{len(ptr_lines):>14d}{len(ind_lines):>14d}{len(val_lines):>14d}{0:>14d}",
        f"{'RSA' if symmetric else 'RUA':<3}{'':11}{nrow:>14d}{ncol:>14d}{A.nnz:>14d}{0:>14d}",
        f"{ptr_fmt:<16}{ind_fmt:<16}{val_fmt:<20}{'':<20}",
    ]
    return "\n".join(header + ptr_lines + ind_lines + val_lines) + "\n"
