"""Matrix readers: Matrix Market (also gzipped), Harwell-Boeing and SciPy ``.npz``; the gate for matrix files."""

from __future__ import annotations

import gzip
import io as _io
import os
import warnings
import zlib
from pathlib import Path

import numpy as np
import scipy.io
import scipy.sparse as sp

from ..errors import InputError

#: Largest accepted matrix dimension (rows); larger declared sizes are refused before allocating.
MAX_DIMENSION = 2**31 - 2
#: Largest accepted number of stored entries declared by a file header.
MAX_ENTRIES = 2**31 - 2

_HB_SUFFIXES = {".rb", ".hb", ".rua", ".rsa", ".rza", ".rha", ".pua", ".psa", ".cua", ".csa", ".cha"}



def _open_text(path: Path):
    if path.suffix == ".gz":
        return gzip.open(path, "rt", encoding="latin-1", errors="replace")
    return open(path, encoding="latin-1", errors="replace")


def _mm_header(path: Path):
    """Parse and check a Matrix Market banner and size line without reading the entries."""
    try:
        with _open_text(path) as fh:
            banner = fh.readline()
            if not banner:
                raise InputError("empty file", str(path))
            words = banner.strip().split()
            if len(words) != 5 or words[0].lower() != "%%matrixmarket" or words[1].lower() != "matrix":
                raise InputError("not a Matrix Market file (bad banner line)", str(path))
            fmt, field, symmetry = (w.lower() for w in words[2:])
            if fmt not in ("coordinate", "array"):
                raise InputError(f"unknown Matrix Market format '{fmt}'", str(path))
            if field not in ("real", "integer", "complex", "pattern", "double"):
                raise InputError(f"unknown Matrix Market field '{field}'", str(path))
            if symmetry not in ("general", "symmetric", "skew-symmetric", "hermitian"):
                raise InputError(f"unknown Matrix Market symmetry '{symmetry}'", str(path))
            line = fh.readline()
            while line and (line.startswith("%") or not line.strip()):
                line = fh.readline()
            if not line:
                raise InputError("no size line after the header", str(path))
            parts = line.split()
    except (OSError, EOFError, UnicodeError, zlib.error) as exc:
        raise InputError(f"cannot read file ({exc.__class__.__name__}: {exc})", str(path)) from None
    want = 3 if fmt == "coordinate" else 2
    if len(parts) != want:
        raise InputError(f"size line should hold {want} integers, found '{line.strip()[:60]}'", str(path))
    try:
        dims = [int(x) for x in parts]
    except ValueError:
        raise InputError(f"size line is not integers: '{line.strip()[:60]}'", str(path)) from None
    rows, cols = dims[0], dims[1]
    entries = dims[2] if fmt == "coordinate" else rows * cols
    if rows < 0 or cols < 0 or entries < 0:
        raise InputError(f"negative size in size line ({rows} x {cols}, {entries} entries)", str(path))
    if rows != cols:
        raise InputError(f"matrix is not square ({rows} x {cols})", str(path))
    if rows > MAX_DIMENSION or entries > MAX_ENTRIES:
        raise InputError(f"declared size too large to hold ({rows} rows, {entries} entries)", str(path))
    if fmt == "coordinate" and symmetry == "general" and entries > rows * cols:
        raise InputError(f"declares {entries} entries, more than {rows} x {cols}", str(path))
    need = estimate_bytes(rows, entries * (2 if symmetry != "general" else 1))
    have = available_memory()
    if have and need > have:
        raise InputError(
            f"declared size ({rows} rows, {entries} entries) needs about {need / 2**30:.1f} GiB, "
            f"more than the {have / 2**30:.1f} GiB of memory available",
            str(path),
        )
    return fmt, field, symmetry, rows, entries


def available_memory() -> int:
    """Bytes of memory available to this process (0 if unknown)."""
    try:
        with open("/proc/meminfo", encoding="ascii") as fh:
            for line in fh:
                if line.startswith("MemAvailable:"):
                    return int(line.split()[1]) * 1024
    except (OSError, ValueError, IndexError):
        pass
    try:
        return int(os.sysconf("SC_AVPHYS_PAGES") * os.sysconf("SC_PAGE_SIZE"))
    except (ValueError, OSError, AttributeError):
        return 0


def estimate_bytes(rows: int, entries: int) -> int:
    """Rough peak memory to read a matrix and build its graph: COO triplets, CSR copies, graph."""
    return int(64 * rows + 80 * entries)


def _read_mm(path: Path):
    fmt, field, symmetry, n, entries = _mm_header(path)
    try:
        if path.suffix == ".gz":
            with gzip.open(path, "rb") as fh:
                data = fh.read()
            mat = scipy.io.mmread(_io.BytesIO(data))
        else:
            mat = scipy.io.mmread(str(path))
    except InputError:
        raise
    except (MemoryError, KeyboardInterrupt):
        raise
    except Exception as exc:  # the reader's own message, squeezed to one line
        msg = str(exc).strip().splitlines()[0] if str(exc).strip() else exc.__class__.__name__
        raise InputError(f"malformed Matrix Market file: {msg}", str(path)) from None
    if sp.issparse(mat):
        coo = sp.coo_matrix(mat)
        if coo.nnz != (entries if symmetry == "general" else coo.nnz):
            raise InputError(f"header declares {entries} entries but {coo.nnz} were read", str(path))
        return sp.csr_matrix(coo), fmt
    dense = np.asarray(mat)
    return sp.csr_matrix(dense), fmt  # dense array format: exact zeros are not structural


def _read_hb(path: Path):
    """Harwell–Boeing via SciPy's ``hb_read``; symmetric types are expanded here."""
    try:
        with open(path, "rb") as fh:
            raw = fh.read()
    except OSError as exc:
        raise InputError(f"cannot read file ({exc.strerror})", str(path)) from None
    lines = raw.split(b"\n", 4)
    if len(lines) < 4 or len(lines[2]) < 3:
        raise InputError("not a Harwell-Boeing file (header too short)", str(path))
    mxtype = lines[2][:3].decode("latin-1").upper()
    if len(mxtype) != 3 or mxtype[0] not in "RCP" or mxtype[1] not in "USHZR" or mxtype[2] not in "AE":
        raise InputError(f"not a Harwell-Boeing file (type '{mxtype}')", str(path))
    if mxtype[2] == "E":
        raise InputError("elemental (unassembled) Harwell-Boeing matrices are not supported", str(path))
    if mxtype[0] != "R":
        raise InputError(f"Harwell-Boeing type '{mxtype}' is not supported (real assembled only)", str(path))
    patched = raw[: raw.index(lines[2])] + b"RUA" + raw[raw.index(lines[2]) + 3 :]
    try:
        mat = scipy.io.hb_read(_io.StringIO(patched.decode("latin-1")))
    except (MemoryError, KeyboardInterrupt):
        raise
    except Exception as exc:
        msg = str(exc).strip().splitlines()[0] if str(exc).strip() else exc.__class__.__name__
        raise InputError(f"malformed Harwell-Boeing file: {msg}", str(path)) from None
    mat = sp.csr_matrix(mat)
    if mat.shape[0] != mat.shape[1]:
        raise InputError(f"matrix is not square ({mat.shape[0]} x {mat.shape[1]})", str(path))
    if mxtype[1] in "SHZ":
        low = sp.tril(mat, -1)
        up = low.T if mxtype[1] != "Z" else -low.T
        mat = sp.csr_matrix(mat + up)
    return mat, "hb"


def _read_npz(path: Path):
    try:
        mat = sp.load_npz(path)
    except (MemoryError, KeyboardInterrupt):
        raise
    except Exception as exc:
        msg = str(exc).strip().splitlines()[0] if str(exc).strip() else exc.__class__.__name__
        raise InputError(f"not a SciPy sparse .npz file: {msg}", str(path)) from None
    if mat.ndim != 2:
        raise InputError("array is not two-dimensional", str(path))
    if mat.shape[0] != mat.shape[1]:
        raise InputError(f"matrix is not square ({mat.shape[0]} x {mat.shape[1]})", str(path))
    return sp.csr_matrix(mat), "npz"


def matrix_name(path) -> str:
    """The file name without its matrix extension(s): ``plate.mtx.gz`` → ``plate``."""
    name = Path(path).name
    for ext in (".gz",):
        if name.endswith(ext):
            name = name[: -len(ext)]
    stem, dot, ext = name.rpartition(".")
    return stem if dot and stem else name


def read_matrix(path, *, drop_zeros: bool = False) -> sp.csr_matrix:
    """Read a square sparse matrix from Matrix Market, Harwell–Boeing or SciPy ``.npz``.

    Parameters
    ----------
    path : path-like
        ``.mtx`` / ``.mtx.gz`` (coordinate or array; real, integer, complex or pattern; general,
        symmetric, skew-symmetric or hermitian), Harwell–Boeing (``.rb``, ``.rua``, ``.rsa``, …,
        real assembled), or ``.npz`` written by :func:`scipy.sparse.save_npz`. Files with another
        extension are recognised by their first line. ``bundled:NAME`` reads a bundled matrix
        (``reorder examples`` lists them).
    drop_zeros : bool
        Drop explicitly stored zeros. By default they count as structural entries, as a solver
        stores them.

    Returns
    -------
    scipy.sparse.csr_matrix
        Square, canonical (sorted indices, duplicates summed). Symmetric storage is expanded to
        both triangles. Pattern files get all-ones values.

    Raises
    ------
    InputError
        Missing, unreadable, malformed or non-square input, with a one-line reason.
    """
    from ..bundled import resolve

    path = resolve(path)  # ``bundled:NAME``: a matrix shipped with reorder
    if not path.exists():
        raise InputError("no such file", str(path))
    if path.is_dir():
        raise InputError("is a folder, not a matrix file", str(path))
    if not os.access(path, os.R_OK):
        raise InputError("file is not readable", str(path))
    suffixes = [s.lower() for s in path.suffixes]
    last = suffixes[-1] if suffixes else ""
    if last == ".npz":
        mat, kind = _read_npz(path)
    elif last in _HB_SUFFIXES:
        mat, kind = _read_hb(path)
    elif last in (".mtx", ".mm") or suffixes[-2:] in ([".mtx", ".gz"], [".mm", ".gz"]):
        mat, kind = _read_mm(path)
    else:  # sniff
        try:
            with _open_text(path) as fh:
                first = fh.readline(64)
        except (OSError, EOFError, UnicodeError, zlib.error) as exc:
            raise InputError(f"cannot read file ({exc})", str(path)) from None
        if first.lower().startswith("%%matrixmarket"):
            mat, kind = _read_mm(path)
        else:
            raise InputError(
                "unrecognised matrix file (expected .mtx, .mtx.gz, Harwell-Boeing .rb/.rua/.rsa or .npz)",
                str(path),
            )
    mat.sum_duplicates()
    mat.sort_indices()
    if drop_zeros:
        mat.eliminate_zeros()
    if mat.dtype.kind in "fc" and mat.nnz and not np.all(np.isfinite(mat.data)):
        warnings.warn(f"{path}: matrix holds NaN or Inf values; only its pattern is used", stacklevel=2)
    if mat.indptr.dtype != np.int64 and mat.nnz > 2**31 - 1:
        raise InputError("too many entries", str(path))
    return mat


