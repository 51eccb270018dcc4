"""Intake guards shared by the matrix readers: which inputs may be opened, how much memory a declared
size needs, and a byte stream that refuses control bytes, over-long lines and oversized payloads
while it is read (so no payload is ever held whole before it has been checked)."""

from __future__ import annotations

import io as _io
import os
import re
import stat
import zlib
import sys
from pathlib import Path

import numpy as np

from ..errors import InputError
from .paths import is_stdio

#: Largest accepted matrix dimension (rows); larger declared sizes are refused before allocating.
MAX_DIMENSION = 2**31 - 2
#: Largest accepted number of stored entries declared by a file header.
MAX_ENTRIES = 2**31 - 2
#: Longest accepted text line (bytes); a longer one is refused while streaming.
MAX_LINE = 1 << 20
#: Bytes allowed per declared entry in a text body (entry lines, blank lines, trailing space).
BYTES_PER_ENTRY = 256
#: Slack on top of that for headers, comments and small files.
BODY_SLACK = 1 << 20
#: Above this many rows, a matrix whose declared entries are fewer than rows / SPARSE_RATIO is
#: refused as absurd unless a memory budget is given explicitly (--max-memory).
SPARSE_ROWS_MIN = 1 << 22
SPARSE_RATIO = 8

# Peak bytes per row and per stored entry (both triangles) of what a command does with a matrix:
# reading (COO triplets from the parser, CSR, duplicates summed: about 60 B/entry) plus the graph, the
# costliest ordering and the symbolic analysis. `scripts/bench_intake.py --memory` fits the peak RSS
# growth of graph + ordering + analysis as a*rows + b*entries on a diagonal and on 7- and 27-point
# 3-D meshes of 64 000 rows: at most about 440 B/row (nd, auto) and 70 B/entry (rsb); with the
# reading cost and some margin, 600 and 140.
BYTES_PER_ROW = 600
BYTES_PER_STORED = 140
#: Fraction of the available memory a matrix may be planned to use.
MEMORY_MARGIN = 0.8

_ENV = "REORDER_MAX_MEMORY"
_SIZE = re.compile(r"^\s*([0-9]*\.?[0-9]+(?:[eE][0-9]+)?)\s*([kKmMgGtT]?)(i?[bB])?\s*$")


def parse_size(text: str) -> int:
    """Bytes from ``"8G"``, ``"512M"``, ``"2GiB"``, ``"1e9"`` (powers of 1024 for the suffixes).

    Raises
    ------
    InputError
        Not a size.
    """
    m = _SIZE.match(str(text))
    if not m:
        raise InputError(f"--max-memory must be a size such as 8G or 500M, not '{text}'")
    scale = {"": 1, "k": 2**10, "m": 2**20, "g": 2**30, "t": 2**40}[m.group(2).lower()]
    value = float(m.group(1)) * scale
    if not value > 0:
        raise InputError(f"--max-memory must be positive, not '{text}'")
    return int(value)


def memory_override() -> int | None:
    """The explicit memory budget (``--max-memory``, passed to workers as ``REORDER_MAX_MEMORY``)."""
    text = os.environ.get(_ENV)
    return parse_size(text) if text else None


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
    """Planned peak memory for a matrix of ``rows`` rows and ``entries`` stored entries (both
    triangles): the measured per-row and per-entry cost of the costliest method or analysis."""
    return int(BYTES_PER_ROW * rows + BYTES_PER_STORED * entries)


def check_size(rows: int, entries: int, source: str, *, max_memory: int | None = None) -> None:
    """Refuse a declared size before anything is allocated for it.

    Parameters
    ----------
    rows, entries : int
        Declared rows and stored entries (both triangles counted).
    source : str
        File name for the message.
    max_memory : int, optional
        Explicit budget in bytes; replaces the available-memory check and lifts the refusal of
        absurdly sparse sizes. Defaults to ``REORDER_MAX_MEMORY`` (set by ``--max-memory``).

    Raises
    ------
    InputError
        Beyond the index range, needing more memory than available (with a margin), or absurd for
        the number of entries.
    """
    if rows > MAX_DIMENSION or entries > MAX_ENTRIES:
        raise InputError(f"declared size too large to hold ({rows} rows, {entries} entries)", source)
    budget = max_memory if max_memory is not None else memory_override()
    need = estimate_bytes(rows, entries)
    if budget is None:
        have = int(available_memory() * MEMORY_MARGIN)
        if rows >= SPARSE_ROWS_MIN and entries < rows // SPARSE_RATIO:
            raise InputError(
                f"declares {rows} rows but only {entries} entries, an implausible size (fewer than one entry "
                f"per {SPARSE_RATIO} rows); use --max-memory to override", source)
    else:
        have = budget
    if have and need > have:
        raise InputError(
            f"declared size ({rows} rows, {entries} entries) needs about {need / 2**30:.1f} GiB, "
            f"{have / 2**30:.1f} GiB available; use --max-memory to override", source)


def open_input(path, what: str = "matrix"):
    """Check an input path and return ``(binary stream, display name)``.

    ``-`` is standard input. Anything else must resolve (symlinks followed) to a readable regular
    file: devices, FIFOs and sockets are refused, since they can block or never end.
    """
    if is_stdio(path):
        return sys.stdin.buffer, "<stdin>"
    p = Path(path)
    real = os.path.realpath(p)
    try:
        st = os.stat(real)
    except FileNotFoundError:
        raise InputError("no such file", str(p)) from None
    except OSError as exc:
        raise InputError(f"cannot read file ({exc.strerror})", str(p)) from None
    if stat.S_ISDIR(st.st_mode):
        raise InputError(f"is a folder, not a {what} file", str(p))
    if not stat.S_ISREG(st.st_mode):
        kind = ("a FIFO" if stat.S_ISFIFO(st.st_mode) else "a device" if stat.S_ISCHR(st.st_mode) or
                stat.S_ISBLK(st.st_mode) else "a socket" if stat.S_ISSOCK(st.st_mode) else "not a regular file")
        raise InputError(f"is {kind}, not a regular file (use '-' to read standard input)", str(p))
    try:
        return open(real, "rb"), str(p)
    except OSError as exc:
        msg = "file is not readable" if exc.errno in (13, 1) else f"cannot read file ({exc.strerror})"
        raise InputError(msg, str(p)) from None


def control_byte(data, first_line: int = 1) -> tuple[int, int] | None:
    """``(line number, byte)`` of the first control byte (NUL, ESC, DEL, … but not tab, CR, LF)."""
    a = np.frombuffer(data, dtype=np.uint8)
    bad = np.flatnonzero(((a < 32) & (a != 9) & (a != 10) & (a != 13)) | (a == 127))
    if not bad.size:
        return None
    return first_line + int(np.count_nonzero(a[: bad[0]] == 10)), int(a[bad[0]])


class CheckedStream(_io.RawIOBase):
    """A read-only binary stream over ``raw`` that checks every chunk before handing it on.

    It refuses (by raising, and remembering the error in :attr:`error`) a control byte, a line
    longer than :data:`MAX_LINE`, or more than ``limit`` bytes in total. ``prefix`` is served
    first (already checked bytes, e.g. a normalised header).
    """

    def __init__(self, raw, source: str, *, limit: int | None = None, prefix: bytes = b"", line: int = 1):
        super().__init__()
        self.raw, self.source, self.limit = raw, source, limit
        self.prefix = memoryview(bytes(prefix))
        self.line, self.cur, self.total = line, 0, 0
        self.error: InputError | None = None

    def readable(self):
        return True

    def _fail(self, msg):
        self.error = InputError(msg, self.source)
        raise self.error

    def read_checked(self, size: int) -> bytes:
        """Up to ``size`` new bytes from ``raw``, checked (prefix not included)."""
        if self.error is not None:
            raise self.error
        try:
            chunk = self.raw.read(size)
        except InputError:
            raise
        except (OSError, EOFError, ValueError, zlib.error) as exc:  # corrupt or truncated compressed stream
            self._fail(f"cannot read file ({exc.__class__.__name__}: {exc})")
        if not chunk:
            return b""
        self.total += len(chunk)
        if self.limit is not None and self.total > self.limit:
            self._fail(f"more than {self.limit} bytes of text for the declared size (padding or a "
                       "decompression bomb)")
        a = np.frombuffer(chunk, dtype=np.uint8)
        bad = control_byte(chunk, self.line)
        if bad is not None:
            self._fail(f"line {bad[0]}: control byte \\x{bad[1]:02x}; a Matrix Market file is plain text")
        nl = np.flatnonzero(a == 10)
        if nl.size:
            longest = max(self.cur + int(nl[0]), int(np.diff(nl).max()) - 1 if nl.size > 1 else 0)
            if longest > MAX_LINE:
                self._fail(f"a line near line {self.line} is longer than {MAX_LINE} bytes")
            self.cur = len(chunk) - int(nl[-1]) - 1
        else:
            self.cur += len(chunk)
        if self.cur > MAX_LINE:
            self._fail(f"line {self.line + nl.size} is longer than {MAX_LINE} bytes")
        self.line += int(nl.size)
        return chunk

    def readinto(self, b):
        n = len(b)
        if len(self.prefix):
            k = min(n, len(self.prefix))
            b[:k] = self.prefix[:k]
            self.prefix = self.prefix[k:]
            return k
        chunk = self.read_checked(min(n, 1 << 20))
        b[: len(chunk)] = chunk
        return len(chunk)
