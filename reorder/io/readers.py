"""Matrix readers: Matrix Market (also gzipped), Harwell-Boeing and SciPy ``.npz``; the gate for matrix files."""

from __future__ import annotations

import contextlib
import gzip
import io as _io
import os
import re
import sys
import warnings
import zlib
from pathlib import Path

import numpy as np
import scipy.io
import scipy.sparse as sp

from ..errors import InputError
from .guard import (BODY_SLACK, BYTES_PER_ENTRY, MAX_DIMENSION, MAX_ENTRIES, CheckedStream, available_memory,
                    check_size, estimate_bytes, open_input)
from .paths import is_stdio

__all__ = ["read_matrix", "matrix_name", "MAX_DIMENSION", "MAX_ENTRIES", "available_memory", "estimate_bytes"]

_HB_SUFFIXES = {".rb", ".hb", ".rua", ".rsa", ".rza", ".rha", ".pua", ".psa", ".cua", ".csa", ".cha"}



_SIZE_LINE = re.compile(rb"^[ \t\r]*[^%\s]", re.M)
#: Bytes of banner, comments and blank lines accepted before the size line.
MAX_HEADER = 16 << 20
_FIELDS = {"real": "real", "double": "real", "integer": "integer", "complex": "complex", "pattern": "pattern"}


def _mm_parse_header(stream: CheckedStream, source: str, *, max_memory=None):
    """Read (checked) up to the size line; return ``(fmt, field, symmetry, rows, entries, rest)``
    where ``rest`` holds the bytes already read after the size line."""
    buf = bytearray()
    eof = False
    scan_from = 0
    while True:
        nl = buf.find(b"\n")
        if nl >= 0:
            m = _SIZE_LINE.search(buf, max(scan_from, nl + 1))
            if m is not None and (buf.find(b"\n", m.start()) >= 0 or eof):
                break
            scan_from = m.start() if m is not None else max(buf.rfind(b"\n") + 1, nl + 1)
        if eof:
            break
        if len(buf) > MAX_HEADER:
            raise InputError(f"more than {MAX_HEADER >> 20} MiB of comments or blank lines before the size line",
                             source)
        chunk = stream.read_checked(1 << 16)
        eof = not chunk
        buf += chunk
    if not buf:
        raise InputError("empty file", source)
    nl = buf.find(b"\n")
    banner = bytes(buf[: nl if nl >= 0 else len(buf)]).decode("latin-1")
    words = banner.strip().split()
    if len(words) != 5 or words[0].lower() != "%%matrixmarket" or words[1].lower() != "matrix":
        if source == "<stdin>":
            raise InputError("standard input must carry Matrix Market text (give other formats as files)", source)
        raise InputError("not a Matrix Market file (bad banner line)", source)
    fmt, field, symmetry = (w.lower() for w in words[2:])
    if fmt not in ("coordinate", "array"):
        raise InputError(f"unknown Matrix Market format '{fmt}'", source)
    if field not in _FIELDS:
        raise InputError(f"unknown Matrix Market field '{field}'", source)
    if symmetry not in ("general", "symmetric", "skew-symmetric", "hermitian"):
        raise InputError(f"unknown Matrix Market symmetry '{symmetry}'", source)
    m = _SIZE_LINE.search(buf, nl + 1) if nl >= 0 else None
    if m is None:
        raise InputError("no size line after the header", source)
    end = buf.find(b"\n", m.start())
    end = len(buf) if end < 0 else end
    line = bytes(buf[m.start(): end]).decode("latin-1")
    parts = line.split()
    want = 3 if fmt == "coordinate" else 2
    if len(parts) != want:
        raise InputError(f"size line should hold {want} integers, found '{line.strip()[:60]}'", source)
    if not all(p.isascii() and p.lstrip("+-").isdigit() and len(p) < 30 for p in parts):
        raise InputError(f"size line is not integers: '{line.strip()[:60]}'", source)
    dims = [int(x) for x in parts]
    rows, cols = dims[0], dims[1]
    if rows < 0 or cols < 0 or (fmt == "coordinate" and dims[2] < 0):
        raise InputError(f"negative size in size line ('{line.strip()[:60]}')", source)
    if rows != cols:
        raise InputError(f"matrix is not square ({rows} x {cols})", source)
    if rows > MAX_DIMENSION:
        raise InputError(f"declared size too large to hold ({rows} rows)", source)
    if fmt == "coordinate":
        entries = dims[2]
    else:
        entries = rows * cols if symmetry == "general" else rows * (rows + 1) // 2
    if fmt == "coordinate" and entries > rows * cols:
        raise InputError(f"declares {entries} entries, more than {rows} x {cols}", source)
    stored = entries if symmetry == "general" else min(2 * entries, rows * cols)
    if fmt == "array":
        stored = rows * cols
    check_size(rows, stored, source, max_memory=max_memory)
    # the size line rewritten from its parsed integers: a non-ASCII blank (e.g. a no-break space,
    # which str.split() treats as a separator) must not reach the ASCII header
    head = (f"%%MatrixMarket matrix {fmt} {_FIELDS[field]} {symmetry}\n{' '.join(parts)}\n").encode("ascii")
    return fmt, field, symmetry, rows, entries, head, bytes(buf[end + 1:])


def _mm_header(path, *, max_memory=None):
    """``(fmt, field, symmetry, rows, declared entries)`` of a Matrix Market file; checked."""
    with _mm_stream(path, max_memory=max_memory) as (hdr, _):
        return hdr[:5]


@contextlib.contextmanager
def _mm_stream(path, *, max_memory=None):
    """Open a Matrix Market source (a file, ``.gz``, or ``-``) and parse its header; yield
    ``(header tuple, CheckedStream positioned at a canonical header followed by the body)``."""
    raw, source = open_input(path)
    own = raw is not sys.stdin.buffer
    handle = raw  # closing a GzipFile does not close the file it reads from
    try:
        if raw.peek(2)[:2] == b"\x1f\x8b":  # gzip, whatever the name says
            raw = gzip.GzipFile(fileobj=raw, mode="rb")
        elif not own and not raw.peek(14)[:14].lower().startswith(b"%%matrixmarket"):
            raise InputError("standard input must carry Matrix Market text (give other formats as files)", source)
        probe = CheckedStream(raw, source)
        hdr = _mm_parse_header(probe, source, max_memory=max_memory)
        fmt, field, symmetry, rows, entries, head, rest = hdr
        per = BYTES_PER_ENTRY * (2 if field == "complex" else 1)
        body = CheckedStream(raw, source, limit=BODY_SLACK + per * entries, prefix=head + rest, line=probe.line)
        body.total = len(rest)
        yield hdr, body
    finally:
        if raw is not handle:
            raw.close()
        if own:
            handle.close()


def _read_mm(path, *, max_memory=None):
    with _mm_stream(path, max_memory=max_memory) as ((fmt, field, symmetry, n, entries, _, _), body):
        source = body.source
        try:
            # the parser asks for about 1 KiB at a time; check in 1 MiB chunks behind a buffer
            mat = scipy.io.mmread(_io.BufferedReader(body, buffer_size=1 << 20))
        except InputError:
            raise
        except (MemoryError, KeyboardInterrupt):
            raise
        except Exception as exc:  # the reader's own message, squeezed to one line
            if body.error is not None:
                raise body.error from None
            msg = str(exc).strip().splitlines()[0] if str(exc).strip() else exc.__class__.__name__
            raise InputError(f"malformed Matrix Market file: {msg}", source) from None
        if body.error is not None:
            raise body.error
    if sp.issparse(mat):
        coo = sp.coo_matrix(mat)
        if symmetry == "general" and coo.nnz != entries:
            raise InputError(f"header declares {entries} entries but {coo.nnz} were read", source)
        return sp.csr_matrix(coo), fmt
    dense = np.asarray(mat)
    return sp.csr_matrix(dense), fmt  # dense array format: exact zeros are not structural


def matrix_name(path) -> str:
    """The file name without its matrix extension(s): ``plate.mtx.gz`` → ``plate``."""
    name = Path(path).name
    for ext in (".gz",):
        if name.endswith(ext):
            name = name[: -len(ext)]
    stem, dot, ext = name.rpartition(".")
    return stem if dot and stem else name


def read_matrix(path, *, drop_zeros: bool = False, max_memory: int | None = None) -> sp.csr_matrix:
    """Read a square sparse matrix from Matrix Market, Harwell–Boeing or SciPy ``.npz``.

    Every array taken from a file is checked (index ranges, monotone pointers consistent with the
    data, numeric types) before SciPy or a kernel sees it; declared sizes are checked against the
    memory they need before anything is allocated; text is refused at the first control byte or
    over-long line, while it streams.

    Parameters
    ----------
    path : path-like or ``"-"``
        ``.mtx`` / ``.mtx.gz`` (coordinate or array; real, integer, complex or pattern; general,
        symmetric, skew-symmetric or hermitian; the banner is case-insensitive), Harwell–Boeing
        (``.rb``, ``.rua``, ``.rsa``, …, real assembled), or ``.npz`` written by
        :func:`scipy.sparse.save_npz` (any of its formats). Files with another extension are
        recognised by their first line. ``-`` reads Matrix Market text from standard input.
        Symlinks are followed; devices, FIFOs and sockets are refused.
        ``bundled:NAME`` reads a bundled matrix (``reorder examples`` lists them).
    drop_zeros : bool
        Drop explicitly stored zeros. By default they count as structural entries, as a solver
        stores them.
    max_memory : int, optional
        Memory budget in bytes for the declared size; replaces the check against available memory
        and lifts the refusal of absurdly sparse sizes (default: ``REORDER_MAX_MEMORY``, set by the
        command line's ``--max-memory``).

    Returns
    -------
    scipy.sparse.csr_matrix
        Square, canonical (sorted indices, duplicates summed). Symmetric storage is expanded to
        both triangles. Pattern files get all-ones values.

    Raises
    ------
    InputError
        Missing, unreadable, non-regular, malformed, oversized or non-square input, with a one-line
        reason.

    Examples
    --------
    >>> A = read_matrix("plate.mtx")  # doctest: +SKIP
    """
    from ..bundled import resolve
    from .hb import read_hb
    from .npz import read_npz

    if is_stdio(path):
        mat, kind = _read_mm(path, max_memory=max_memory)
        source = "<stdin>"
    else:
        path = resolve(path)  # ``bundled:NAME``: a matrix shipped with reorder
        source = str(path)
        open_input(path).__getitem__(0).close()  # existence, regular file, readable
        names = [path.name.lower(), os.path.basename(os.path.realpath(path)).lower()]
        kinds = [_kind_by_name(n) for n in names]
        kind = next((k for k in kinds if k), None) or _sniff(path)
        if kind == "npz":
            mat, kind = read_npz(path, max_memory=max_memory), "npz"
        elif kind == "hb":
            mat, kind = read_hb(path, max_memory=max_memory), "hb"
        else:
            mat, kind = _read_mm(path, max_memory=max_memory)
    mat.sum_duplicates()
    mat.sort_indices()
    if drop_zeros:
        mat.eliminate_zeros()
    if mat.dtype.kind in "fc" and mat.nnz and not np.all(np.isfinite(mat.data)):
        warnings.warn(f"{source}: matrix holds NaN or Inf values; only its pattern is used", stacklevel=2)
    if mat.indptr.dtype != np.int64 and mat.nnz > 2**31 - 1:
        raise InputError("too many entries", source)
    return mat


def _kind_by_name(name: str) -> str | None:
    if name.endswith(".npz"):
        return "npz"
    if os.path.splitext(name)[1] in _HB_SUFFIXES:
        return "hb"
    if name.endswith((".mtx", ".mm", ".mtx.gz", ".mm.gz")):
        return "mm"
    return None


def _sniff(path: Path) -> str:
    fh, source = open_input(path)
    with fh:
        first = fh.read(64)
    if first[:2] == b"\x1f\x8b":
        with contextlib.suppress(zlib.error, OSError, EOFError):
            first = zlib.decompressobj(31).decompress(first, 64)
    if first.lower().startswith(b"%%matrixmarket"):
        return "mm"
    raise InputError(
        "unrecognised matrix file (expected .mtx, .mtx.gz, Harwell-Boeing .rb/.rua/.rsa or .npz)", source)
