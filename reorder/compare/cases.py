"""The work list of a comparison: matrix files and folders resolved to names, methods checked, and one
:class:`Case` per (matrix, method, seed); a failed case's record.
"""

from __future__ import annotations

import json
import os
from dataclasses import dataclass
from pathlib import Path

from ..errors import InputError
from ..io import matrix_name
from ..report.records import COLUMNS, FACTOR_COLUMNS

#: File endings recognised as matrices when a folder is given.
MATRIX_SUFFIXES = (".mtx", ".mtx.gz", ".mm", ".mm.gz", ".rb", ".rua", ".rsa", ".hb", ".npz")
#: Largest factor operation count (Σ c_j²) factored by default; SuperLU managed about 1e9 per second
#: on the development machine (2 cores), so this is about a minute.
DEFAULT_FACTOR_MAX_OPS = 5e10
#: Largest share of physical memory an estimated factorization may take.
DEFAULT_FACTOR_MEM_FRACTION = 0.25


def _is_matrix_file(p: Path) -> bool:
    name = p.name.lower()
    return p.is_file() and not name.startswith(".") and name.endswith(MATRIX_SUFFIXES)


def collect_inputs(inputs) -> dict[str, Path]:
    """Resolve matrix files and folders to ``{matrix name: absolute path}``, sorted by name.

    A folder stands for the matrix files directly inside it (``.mtx``, ``.mtx.gz``, ``.rb``,
    ``.rua``, ``.rsa``, ``.npz``, …). The name is the file name without extension
    (:func:`reorder.io.matrix_name`).

    Raises
    ------
    InputError
        A missing path, a folder without matrices, no inputs at all, or two inputs with one name.
    """
    if isinstance(inputs, (str, os.PathLike)):
        inputs = [inputs]
    found: dict[str, Path] = {}
    from ..bundled import resolve

    for item in inputs or []:
        p = resolve(item).expanduser()
        if not p.exists():
            raise InputError("no such file or folder", str(p))
        if p.is_dir():
            files = sorted(q for q in p.iterdir() if _is_matrix_file(q))
            if not files:
                raise InputError(f"folder holds no matrix files ({', '.join(MATRIX_SUFFIXES)})", str(p))
        else:
            files = [p]
        for f in files:
            name = matrix_name(f)
            f = f.resolve()
            if name in found and found[name] != f:
                raise InputError(f"two inputs are named '{name}': {found[name]} and {f}; rename one")
            found[name] = f
    if not found:
        raise InputError("no input matrices given")
    return dict(sorted(found.items()))


def _check_methods(methods) -> list[str]:
    from ..orderings import available

    known = available()
    if methods is None:
        return known
    if isinstance(methods, str):
        methods = methods.split(",")
    out: list[str] = []
    for m in methods:
        m = str(m).strip()
        if not m or m in out:
            continue
        if m not in known:
            from ..orderings import resolve

            resolve(m)  # a method spec NAME:OPTION=VALUE...; InputError if unknown or invalid
        out.append(m)
    if not out:
        raise InputError("no methods given")
    return out


def _fingerprint(path: Path) -> str:
    st = path.stat()
    return f"{st.st_size}:{st.st_mtime_ns}"


@dataclass(frozen=True)
class Case:
    """One unit of work: order one matrix with one method (and optionally factor it).

    Attributes
    ----------
    matrix : str
        The matrix name (file name without extension).
    path : str
        The matrix file; workers read it themselves, so on a cluster it must be visible to them.
    method : str
    seed : int
    factor : bool
        Also factor the reordered matrix with SciPy's SuperLU.
    fingerprint : str
        Size and modification time of the file: a changed file is not taken from the log.
    factor_max_ops : float
        Factorizations with more symbolic operations are skipped (with a message).
    factor_mem_fraction : float
        Factorizations whose estimated storage exceeds this share of RAM are skipped.
    """

    matrix: str
    path: str
    method: str
    seed: int = 0
    factor: bool = False
    fingerprint: str = ""
    factor_max_ops: float = DEFAULT_FACTOR_MAX_OPS
    factor_mem_fraction: float = DEFAULT_FACTOR_MEM_FRACTION

    @property
    def key(self) -> str:
        """Identity of the case in the log."""
        return json.dumps([self.matrix, self.method, int(self.seed), bool(self.factor), self.fingerprint])


def make_cases(matrices: dict, methods, *, seed: int = 0, factor: bool = False, **limits) -> list[Case]:
    """The grid of cases, sorted by matrix name then in the given method order."""
    return [
        Case(matrix=name, path=str(path), method=m, seed=int(seed), factor=bool(factor),
             fingerprint=_fingerprint(Path(path)), **limits)
        for name, path in sorted(matrices.items())
        for m in methods
    ]


def _one_line(exc: BaseException) -> str:
    msg = " ".join(str(exc).split())
    text = f"{type(exc).__name__}: {msg}" if msg else type(exc).__name__
    return text if len(text) <= 400 else text[:397] + "..."


def _error_record(case: Case, message: str) -> dict:
    rec = {c: None for c in COLUMNS}
    if case.factor:
        rec.update({c: None for c in FACTOR_COLUMNS})
    rec.update(key=case.key, matrix=case.matrix, method=case.method, seed=case.seed, status="error", error=message)
    return rec
