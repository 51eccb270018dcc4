"""SciPy ``.npz`` reader that checks before it allocates: every member's header (type, shape,
declared size) is read first, the declared matrix size is checked against memory, and the arrays
are validated (numeric types, index ranges, monotone pointers consistent with the data) before
SciPy builds a matrix from them. Pickled (object) members are never loaded."""

from __future__ import annotations

import zipfile
import zlib

import numpy as np
import scipy.sparse as sp

from ..errors import InputError
from .guard import check_size, open_input

_FORMATS = ("csr", "csc", "coo", "bsr", "dia")


class _Members:
    def __init__(self, zf: zipfile.ZipFile, source: str):
        self.zf, self.source = zf, source
        self.names = {n[:-4] if n.endswith(".npy") else n: n for n in zf.namelist()}

    def header(self, key: str):
        """``(shape, dtype, fortran, info)`` of a member, read without its data."""
        if key not in self.names:
            raise InputError(f"not a SciPy sparse .npz file: no '{key}' array", self.source)
        info = self.zf.getinfo(self.names[key])
        with self.zf.open(info) as fh:
            shape, fortran, dtype = self._read_header(fh)
        return shape, dtype, fortran, info

    def _read_header(self, fh):
        fmt = np.lib.format
        try:
            version = fmt.read_magic(fh)
            if version == (1, 0):
                shape, fortran, dtype = fmt.read_array_header_1_0(fh, max_header_size=10000)
            elif version == (2, 0):
                shape, fortran, dtype = fmt.read_array_header_2_0(fh, max_header_size=10000)
            else:
                raise ValueError(f"unsupported .npy version {version}")
        except (ValueError, OSError, EOFError, zlib.error, zipfile.BadZipFile, NotImplementedError,
                RuntimeError) as exc:
            msg = str(exc).splitlines()[0] if str(exc) else exc.__class__.__name__
            raise InputError(f"not a SciPy sparse .npz file: {msg}", self.source) from None
        if dtype.hasobject or dtype.kind not in "biufcSU":
            raise InputError(f"array of type {dtype} refused (numbers only, nothing pickled)", self.source)
        return shape, fortran, dtype

    def load(self, key: str, max_items: int, kinds: str) -> np.ndarray:
        """A member's array, refused if it holds more than ``max_items`` items or is not of ``kinds``."""
        shape, dtype, fortran, info = self.header(key)
        if dtype.kind not in kinds:
            raise InputError(f"'{key}' array has type {dtype}; expected "
                             f"{'integers' if kinds == 'iu' else 'numbers'}", self.source)
        count = int(np.prod(shape, dtype=object)) if shape else 1
        if count > max_items:
            raise InputError(f"'{key}' array holds {count} items, more than the {max_items} its matrix allows",
                             self.source)
        arr = np.empty(count, dtype=dtype)  # filled in place: the member is never held twice
        view = memoryview(arr.view(np.uint8).reshape(-1)) if count else memoryview(b"")
        got = 0
        with self.zf.open(info) as fh:
            self._read_header(fh)
            try:
                while got < len(view):
                    k = fh.readinto(view[got:])
                    if not k:
                        break
                    got += k
            except (OSError, EOFError, zlib.error, zipfile.BadZipFile, NotImplementedError, RuntimeError) as exc:
                raise InputError(f"corrupt .npz member '{key}' ({exc.__class__.__name__})", self.source) from None
        if got != len(view):
            raise InputError(f"truncated .npz member '{key}'", self.source)
        return arr.reshape(shape, order="F" if fortran else "C")


def _index(arr, name, bound, source):
    if arr.ndim != 1:
        raise InputError(f"'{name}' array is not one-dimensional", source)
    if arr.size and (int(arr.min()) < 0 or int(arr.max()) >= bound):
        bad = arr[(arr < 0) | (arr >= bound)][0]
        raise InputError(f"'{name}' holds {int(bad)}, outside 0..{bound - 1}", source)
    return arr.astype(np.int64, copy=False)


def _pointers(ptr, length, total, source, name="indptr"):
    if ptr.ndim != 1 or ptr.size != length:
        raise InputError(f"'{name}' has {ptr.size} items, {length} expected", source)
    if ptr[0] != 0 or ptr[-1] != total:
        raise InputError(f"'{name}' runs from {int(ptr[0])} to {int(ptr[-1])}, expected 0 to {total}", source)
    if np.any(np.diff(ptr) < 0):
        raise InputError(f"'{name}' decreases", source)
    return ptr.astype(np.int64, copy=False)


def read_npz(path, *, max_memory=None) -> sp.csr_matrix:
    """Read a matrix saved by :func:`scipy.sparse.save_npz` (csr, csc, coo, bsr or dia), checked.

    Raises
    ------
    InputError
        Not a zip of ``.npy`` members, an unknown format, a non-square or oversized shape, object or
        string data, indices out of range, pointers that decrease or disagree with the data length.
    """
    fh, source = open_input(path)
    try:
        try:
            zf = zipfile.ZipFile(fh)
        except (zipfile.BadZipFile, OSError, EOFError, ValueError, NotImplementedError, RuntimeError) as exc:
            raise InputError(f"not a SciPy sparse .npz file: {exc}", source) from None
        with zf:
            try:
                return _read_members(zf, source, max_memory)
            except (zipfile.BadZipFile, zlib.error, EOFError, NotImplementedError, RuntimeError, OSError) as exc:
                msg = str(exc).splitlines()[0] if str(exc) else exc.__class__.__name__
                raise InputError(f"corrupt .npz file ({msg})", source) from None
    finally:
        fh.close()


def _read_members(zf, source, max_memory):
    m = _Members(zf, source)
    fmt = m.load("format", 1, "SU").item()
    fmt = fmt.decode("ascii", "replace") if isinstance(fmt, bytes) else str(fmt)
    if fmt not in _FORMATS:
        raise InputError(f"unsupported sparse format '{fmt}' (expected one of {', '.join(_FORMATS)})", source)
    shape = m.load("shape", 2, "iu")
    if shape.size != 2:
        raise InputError(f"shape {shape.tolist()} is not two-dimensional", source)
    n, ncols = (int(x) for x in shape)
    if n < 0 or ncols < 0:
        raise InputError(f"negative shape ({n} x {ncols})", source)
    if n != ncols:
        raise InputError(f"matrix is not square ({n} x {ncols})", source)
    # the stored-entry count is the data member's size
    dshape, _, _, _ = m.header("data")
    entries = int(np.prod(dshape, dtype=object)) if dshape else 1
    check_size(n, entries, source, max_memory=max_memory)
    return _build(m, fmt, n, entries, source)


def _build(m: _Members, fmt: str, n: int, entries: int, source: str) -> sp.csr_matrix:
    num = "biufc"
    if fmt in ("csr", "csc"):
        ptr = _pointers(m.load("indptr", n + 1, "iu"), n + 1, entries, source)
        idx = _index(m.load("indices", entries, "iu"), "indices", n, source)
        data = m.load("data", entries, num)
        if data.ndim != 1 or data.size != idx.size:
            raise InputError(f"'data' has {data.size} items, 'indices' {idx.size}", source)
        cls = sp.csr_matrix if fmt == "csr" else sp.csc_matrix
        return sp.csr_matrix(cls((data, idx, ptr), shape=(n, n)))
    if fmt == "coo":
        data = m.load("data", entries, num)
        if "row" in m.names:
            row = _index(m.load("row", entries, "iu"), "row", n, source)
            col = _index(m.load("col", entries, "iu"), "col", n, source)
        else:
            coords = m.load("coords", 2 * entries, "iu")
            if coords.ndim != 2 or coords.shape[0] != 2:
                raise InputError("'coords' array is not 2 x nnz", source)
            row = _index(coords[0], "row", n, source)
            col = _index(coords[1], "col", n, source)
        if not (data.ndim == 1 and row.size == col.size == data.size):
            raise InputError(f"'row', 'col' and 'data' differ in length ({row.size}, {col.size}, {data.size})", source)
        return sp.csr_matrix(sp.coo_matrix((data, (row, col)), shape=(n, n)))
    if fmt == "bsr":
        data = m.load("data", entries, num)
        if data.ndim != 3 or min(data.shape[1:]) < 1:
            raise InputError(f"'data' of a bsr matrix must be blocks (k x R x C), not {data.shape}", source)
        nb, r, c = data.shape
        if n % r or n % c:
            raise InputError(f"block size {r} x {c} does not divide the shape {n} x {n}", source)
        ptr = _pointers(m.load("indptr", n // r + 1, "iu"), n // r + 1, nb, source)
        idx = _index(m.load("indices", nb, "iu"), "indices", n // c, source)
        if idx.size != nb:
            raise InputError(f"'indices' has {idx.size} items, {nb} blocks expected", source)
        return sp.csr_matrix(sp.bsr_matrix((data, idx, ptr), shape=(n, n)))
    data = m.load("data", entries if entries else 0, num)  # dia
    if data.ndim != 2:
        raise InputError(f"'data' of a dia matrix must be two-dimensional, not {data.shape}", source)
    offsets = m.load("offsets", data.shape[0], "iu").astype(np.int64)
    if offsets.ndim != 1 or offsets.size != data.shape[0]:
        raise InputError("'offsets' and 'data' disagree", source)
    if data.shape[1] > n:
        raise InputError(f"'data' rows are longer ({data.shape[1]}) than the matrix ({n})", source)
    if offsets.size and (np.abs(offsets).max() >= max(n, 1) or np.unique(offsets).size != offsets.size):
        raise InputError("'offsets' out of range or repeated", source)
    return sp.csr_matrix(sp.dia_matrix((data, offsets), shape=(n, n)))
