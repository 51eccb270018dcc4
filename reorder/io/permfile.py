"""Permutation files: one index per line with ``#`` comments, or ``.npy``; read, checked, written.

Every text file written here starts with one header line that states the conventions::

    # reorder permutation: direction=new-to-old base=0 n=144

``direction=new-to-old`` means line ``k`` holds the old index placed at new position ``k`` (the
reordered matrix is ``A[p][:, p]``); ``direction=old-to-new`` means line ``i`` holds the new position
of old index ``i`` (the inverse). The reader honours the header; a file without it is read as a
new-to-old list whose base is detected (a list that contains ``n`` and not ``0`` is 1-based).
"""

from __future__ import annotations

import re
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from ..errors import InputError
from ..permutation import check_permutation, inverse_permutation
from .paths import atomic_path

__all__ = ["DIRECTIONS", "PermutationFile", "permutation_header", "read_permutation", "read_permutation_file",
           "write_permutation", "printable"]

#: The two directions a permutation file can hold.
DIRECTIONS = ("new-to-old", "old-to-new")

_TAG = "reorder permutation:"
_HEADER_RE = re.compile(r"^#\s*reorder permutation:\s*(.*)$")
_BOM = "\ufeff"


def printable(text: str, limit: int = 40) -> str:
    """``text`` cut to ``limit`` characters with every non-printable or non-ASCII character escaped
    (``\\x00``, ``\\uff11``), so that an error message never carries raw bytes."""
    text = text[:limit]
    out = []
    for ch in text:
        if ch.isascii() and ch.isprintable():
            out.append(ch)
        else:
            code = ord(ch)
            if 0xDC80 <= code <= 0xDCFF:  # a byte that was not UTF-8 (surrogateescape)
                code -= 0xDC00
            out.append(f"\\x{code:02x}" if code < 0x100 else f"\\u{code:04x}" if code < 0x10000 else f"\\U{code:08x}")
    return "".join(out)


def permutation_header(*, direction: str = "new-to-old", base: int = 0, n: int, method: str | None = None,
                       seed: int | None = None, matrix: str | None = None, notes=()) -> list[str]:
    """The header lines (without ``#``) that every permutation writer puts on top of a text file.

    The first line is the machine-read one (direction, base, n); the second says the same in words;
    a third names what made the file (method, seed, matrix, version) when known; ``notes`` follow.

    Examples
    --------
    >>> permutation_header(n=3)[0]
    'reorder permutation: direction=new-to-old base=0 n=3'
    """
    if direction not in DIRECTIONS:
        raise InputError(f"direction must be one of {', '.join(DIRECTIONS)}, not '{direction}'")
    from .. import __version__

    lines = [f"{_TAG} direction={direction} base={base} n={int(n)}"]
    if direction == "new-to-old":
        lines.append(f"line k (counting from {base}) holds the old index placed at new position k; "
                     "the reordered matrix is A[p][:, p]")
    else:
        lines.append(f"line i (counting from {base}) holds the new position of old index i; "
                     "the reordered matrix is A[q][:, q] with q the inverse of this list")
    made = [f"{k}={v}" for k, v in (("method", method), ("seed", seed), ("matrix", matrix)) if v is not None]
    lines.append(" ".join(made + [f"written by reorder {__version__}"]))
    lines += [" ".join(str(t).split()) for t in notes if str(t).strip()]
    return lines


@dataclass(frozen=True)
class PermutationFile:
    """A permutation file as stored, before any direction is applied.

    Attributes
    ----------
    values : ndarray of int64
        The list as written in the file (base not yet removed).
    direction, base, n : str, int, int or None
        What the header states; None where there is no header (or, for ``n``, no such key).
    has_header : bool
        True when the file carries a ``reorder permutation:`` header line.
    """

    values: np.ndarray
    direction: str | None
    base: int | None
    n: int | None
    has_header: bool


def _parse_header(line: str, src: str) -> dict:
    m = _HEADER_RE.match(line)
    body = m.group(1) if m else ""
    out: dict = {}
    for item in body.split():
        key, sep, val = item.partition("=")
        if not sep:
            continue
        if key == "direction":
            if val not in DIRECTIONS:
                raise InputError(f"header direction '{printable(val)}' is not one of {', '.join(DIRECTIONS)}", src)
            out["direction"] = val
        elif key in ("base", "n"):
            if not (val.isascii() and val.isdigit()):
                raise InputError(f"header {key} '{printable(val)}' is not a plain integer", src)
            out[key] = int(val)
    if out.get("base", 0) not in (0, 1):
        raise InputError(f"header base must be 0 or 1, not {out['base']}", src)
    return out


def _read_text(path: Path, src: str) -> tuple[np.ndarray, dict]:
    try:
        raw = path.read_bytes()
    except OSError as exc:
        raise InputError(f"cannot read file ({exc.strerror})", src) from None
    text = raw.decode("utf-8", errors="surrogateescape")
    if text.startswith(_BOM):
        text = text[1:]
    stripped = [ln.strip() for ln in text.split("\n")]
    header: dict = {}
    found = False
    for ln in stripped:
        if ln.startswith("#") and _HEADER_RE.match(ln):
            if found:
                raise InputError("more than one 'reorder permutation:' header line", src)
            header, found = _parse_header(ln, src), True
    tokens = [t for t in stripped if t and not t.startswith("#")]
    joined = "".join(tokens)
    if not (joined.isascii() and joined.isdigit()) and tokens:
        bad = next(i for i, t in enumerate(stripped)
                   if t and not t.startswith("#") and not (t.isascii() and t.isdigit()))
        tok = stripped[bad]
        why = "plain ASCII digits expected"
        if any(ch.isdigit() and not ch.isascii() for ch in tok):
            why = "non-ASCII digits are not accepted; " + why
        raise InputError(f"line {bad + 1}: '{printable(tok)}' is not an integer ({why})", src)
    try:  # one pass without per-line bookkeeping (10⁶ lines: about 0.5 s)
        arr = np.fromiter(map(int, tokens), dtype=np.int64, count=len(tokens))
    except OverflowError:
        raise InputError("indices out of the 64-bit integer range", src) from None
    header["has_header"] = found
    return arr, header


def read_permutation_file(path) -> PermutationFile:
    """Read a permutation file as stored: its values and what its header states.

    Parameters
    ----------
    path : path-like
        Text (one index per line, ``#`` comments, optional UTF-8 byte-order mark) or ``.npy``.

    Returns
    -------
    PermutationFile

    Raises
    ------
    InputError
        Missing file, a folder, a token that is not plain ASCII digits, a malformed header.
    """
    path = Path(path)
    src = str(path)
    if not path.exists():
        raise InputError("no such file", src)
    if path.is_dir():
        raise InputError("is a folder, not a permutation file", src)
    header: dict = {"has_header": False}
    if path.suffix.lower() == ".npy":
        try:
            arr = np.load(path, allow_pickle=False)
        except Exception as exc:
            msg = str(exc).splitlines()[0] if str(exc) else exc.__class__.__name__
            raise InputError(f"not a NumPy .npy permutation: {printable(msg, 120)}", src) from None
        arr = np.asarray(arr)
    else:
        arr, header = _read_text(path, src)
    if arr.ndim != 1:
        raise InputError(f"permutation must be one-dimensional, got shape {arr.shape}", src)
    return PermutationFile(values=arr, direction=header.get("direction"), base=header.get("base"),
                           n=header.get("n"), has_header=header["has_header"])


def detect_base(values: np.ndarray, n: int | None = None) -> int:
    """1 for a list that contains ``n`` (its length by default) and not 0; else 0."""
    m = values.size if n is None else n
    return 1 if (values.size and not bool(np.any(values == 0)) and int(values.max()) == m) else 0


def read_permutation(path, n: int | None = None, *, base: int | None = None,
                     direction: str | None = None) -> np.ndarray:
    """Read a permutation file and return it 0-based, new-to-old (``A[p][:, p]`` is the reordered matrix).

    A header line ``# reorder permutation: direction=... base=... n=...`` is honoured: an old-to-new
    file is inverted, its base removed, its ``n`` checked. Without a header the list is taken as
    new-to-old (or as ``direction`` says) and its base is detected: a list that contains ``n`` and
    not ``0`` is 1-based. ``.npy`` files hold a 1-D integer array, read like a headerless file.

    Parameters
    ----------
    path : path-like
    n : int, optional
        The matrix size it must permute.
    base : {0, 1}, optional
        The caller's base; an InputError if the header states another.
    direction : {"new-to-old", "old-to-new"}, optional
        The caller's direction (``--inverse`` means old-to-new); an InputError if the header states
        another.

    Returns
    -------
    ndarray of int64
        New position ``k`` holds old index ``p[k]``.

    Raises
    ------
    InputError
        Anything that is not a permutation of ``n`` in the stated conventions.

    Examples
    --------
    >>> import tempfile, os
    >>> f = os.path.join(tempfile.mkdtemp(), "p.txt")
    >>> write_permutation(f, [2, 0, 1], base=1, direction="old-to-new")
    >>> read_permutation(f).tolist()
    [2, 0, 1]
    """
    src = str(path)
    pf = read_permutation_file(path)
    if direction is not None and direction not in DIRECTIONS:
        raise InputError(f"direction must be one of {', '.join(DIRECTIONS)}, not '{direction}'")
    if base is not None and base not in (0, 1):
        raise InputError(f"base must be 0 or 1, not {base}", src)
    if pf.direction is not None and direction is not None and pf.direction != direction:
        raise InputError(f"the file header says direction={pf.direction} but {direction} was asked for", src)
    if pf.base is not None and base is not None and pf.base != base:
        raise InputError(f"the file header says base={pf.base} but base {base} was asked for", src)
    arr = pf.values
    if pf.n is not None:
        if n is not None and pf.n != n:
            raise InputError(f"the file header says n={pf.n} but the matrix has {n} rows", src)
        if arr.size != pf.n:
            raise InputError(f"the file header says n={pf.n} but the file holds {arr.size} entries", src)
    if arr.size == 0 and (n is None or n > 0):
        raise InputError("permutation file is empty", src)
    if arr.dtype.kind not in "iu":
        return check_permutation(arr, n, source=src)  # reports the type problem
    b = pf.base if pf.base is not None else base if base is not None else detect_base(arr, n)
    p = check_permutation(arr.astype(np.int64) - b, n, source=src)
    if (pf.direction or direction or "new-to-old") == "old-to-new":
        p = inverse_permutation(p)
    return p


def write_permutation(path, perm, *, base: int = 0, direction: str = "new-to-old", header: list[str] | None = None,
                      method: str | None = None, seed: int | None = None, matrix: str | None = None) -> None:
    """Write a permutation atomically: text (one index per line under the standard header) or ``.npy``.

    Parameters
    ----------
    path : path-like
    perm : array_like of int
        Always in the library's convention: new position ``k`` holds old index ``perm[k]``.
    base : {0, 1}
        Index base of the file.
    direction : {"new-to-old", "old-to-new"}
        What the file holds: ``perm`` itself, or its inverse (the new position of each old index).
    header : list of str, optional
        Extra comment lines after the standard header.
    method, seed, matrix : optional
        Named in the header.

    Notes
    -----
    ``.npy`` files carry no header: they hold the list in the chosen direction and base.
    """
    if base not in (0, 1):
        raise InputError(f"base must be 0 or 1, not {base}")
    if direction not in DIRECTIONS:
        raise InputError(f"direction must be one of {', '.join(DIRECTIONS)}, not '{direction}'")
    path = Path(path)
    arr = check_permutation(perm)
    if direction == "old-to-new":
        arr = inverse_permutation(arr)
    arr = arr + base
    if path.suffix.lower() == ".npy":
        with atomic_path(path, suffix=".npy") as tmp:
            with open(tmp, "wb") as fh:
                np.save(fh, arr)
        return
    lines = permutation_header(direction=direction, base=base, n=arr.size, method=method, seed=seed,
                               matrix=matrix, notes=header or ())
    with atomic_path(path) as tmp:
        with open(tmp, "w", encoding="utf-8", newline="\n") as fh:
            fh.write("".join(f"# {h}\n" for h in lines))
            if arr.size:
                fh.write("\n".join(map(str, arr.tolist())) + "\n")
