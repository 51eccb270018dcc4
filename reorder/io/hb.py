"""Harwell–Boeing reader (real assembled): header through SciPy's parser, arrays read and checked here.

SciPy's own reader builds a compressed-column matrix from the file's arrays without checking
them; an index outside the matrix then crashes the conversion. Here the pointer, index and value
sections are parsed and validated (counts, 1-based ranges, monotone pointers) first.
"""

from __future__ import annotations

import io as _io
import warnings

import numpy as np
import scipy.sparse as sp

from ..errors import InputError
from .guard import check_size, control_byte, open_input


def _numbers(text: str, dtype, count: int, what: str, source: str) -> np.ndarray:
    """Exactly ``count`` numbers from a whitespace-separated section."""
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        if dtype is float:
            text = text.replace("D", "E").replace("d", "e")
        try:
            arr = np.array(text.split(), dtype=np.float64 if dtype is float else np.int64) if count else \
                np.zeros(0, dtype=np.float64 if dtype is float else np.int64)
        except (ValueError, OverflowError):
            raise InputError(f"malformed Harwell-Boeing file: non-numeric token in the {what} section",
                             source) from None
    if arr.size < count:
        raise InputError(f"malformed Harwell-Boeing file: {what} section holds {arr.size} numbers, "
                         f"{count} expected", source)
    return arr[:count]


def read_hb(path, *, max_memory=None) -> sp.csr_matrix:
    """Read a real assembled Harwell–Boeing matrix (``RUA``, ``RSA``, ``RZA``, ``RHA``) as CSR.

    Symmetric types are expanded to both triangles (skew-symmetric with the sign flipped).

    Raises
    ------
    InputError
        Control bytes (with the line), a malformed header, an unsupported type, or arrays that do
        not describe a valid matrix (index out of range, decreasing pointers, wrong counts).
    """
    from scipy.io._harwell_boeing.hb import HBInfo

    fh, source = open_input(path)
    with fh:
        try:
            raw = fh.read()
        except OSError as exc:
            raise InputError(f"cannot read file ({exc.strerror})", source) from None
    bad = control_byte(raw)
    if bad is not None:
        raise InputError(f"line {bad[0]}: control byte \\x{bad[1]:02x}; a Harwell-Boeing file is plain text", source)
    lines = raw.split(b"\n", 4)
    if len(lines) < 4 or len(lines[2]) < 3:
        raise InputError("not a Harwell-Boeing file (header too short)", source)
    mxtype = lines[2][:3].decode("latin-1").upper()
    if len(mxtype) != 3 or mxtype[0] not in "RCP" or mxtype[1] not in "USHZR" or mxtype[2] not in "AE":
        raise InputError(f"not a Harwell-Boeing file (type '{mxtype}')", source)
    if mxtype[2] == "E":
        raise InputError("elemental (unassembled) Harwell-Boeing matrices are not supported", source)
    if mxtype[0] != "R":
        raise InputError(f"Harwell-Boeing type '{mxtype}' is not supported (real assembled only)", source)
    text = raw.decode("latin-1")
    del raw
    # SciPy's header parser accepts unsymmetric types only; the structure letter is applied below
    head = text.split("\n", 3)
    content = _io.StringIO("\n".join(head[:2] + ["RUA" + head[2][3:]] + head[3:]))
    del text, head
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            info = HBInfo.from_file(content)
    except (MemoryError, KeyboardInterrupt):
        raise
    except Exception as exc:
        msg = str(exc).strip().splitlines()[0] if str(exc).strip() else exc.__class__.__name__
        raise InputError(f"malformed Harwell-Boeing file: {msg}", source) from None
    n, ncols, nnz = int(info.nrows), int(info.ncols), int(info.nnon_zeros)
    if n < 0 or ncols < 0 or nnz < 0:
        raise InputError(f"negative size in the header ({n} x {ncols}, {nnz} entries)", source)
    if n != ncols:
        raise InputError(f"matrix is not square ({n} x {ncols})", source)
    if nnz > n * n:
        raise InputError(f"declares {nnz} entries, more than {n} x {n}", source)
    check_size(n, nnz * (1 if mxtype[1] == "U" else 2), source, max_memory=max_memory)
    sections = []
    for nbytes in (info.pointer_nbytes_full, info.indices_nbytes_full, info.values_nbytes_full):
        sections.append(content.read(max(int(nbytes), 0)) + content.readline())
    ptr = _numbers(sections[0], int, n + 1, "pointer", source)
    ind = _numbers(sections[1], int, nnz, "row index", source)
    val = _numbers(sections[2], float, nnz, "value", source)
    if ptr[0] != 1 or ptr[-1] != nnz + 1:
        raise InputError(f"column pointers run from {ptr[0]} to {ptr[-1]}, expected 1 to {nnz + 1}", source)
    if n and np.any(np.diff(ptr) < 0):
        raise InputError("column pointers decrease", source)
    if nnz and (ind.min() < 1 or ind.max() > n):
        bad = int(ind[(ind < 1) | (ind > n)][0])
        raise InputError(f"row index {bad} outside 1..{n}", source)
    mat = sp.csr_matrix(sp.csc_matrix((val, ind - 1, ptr - 1), shape=(n, n)))
    if mxtype[1] in "SHZ":
        low = sp.tril(mat, -1)
        up = low.T if mxtype[1] != "Z" else -low.T
        mat = sp.csr_matrix(mat + up)
    return mat
