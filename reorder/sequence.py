"""Many matrices, one pattern: order once and refactor, timed against SciPy's ``spsolve`` on each.

A Newton iteration, a time stepper or a parameter sweep factors matrices that share one sparsity
pattern. :func:`solve_sequence` orders the first one, refactors every one with
:class:`~reorder.factor.OrderedFactor` and solves, and (unless told not to) calls SciPy's default
``scipy.sparse.linalg.spsolve(A, b)`` on the same matrix and right-hand side, so that the total time
of both paths comes from the same run. Reading the files is timed apart and counted in neither path.
"""

from __future__ import annotations

import glob as _glob
import time
import warnings
from pathlib import Path

import numpy as np

from .errors import InputError
from .factor import OrderedFactor

__all__ = ["solve_sequence", "sequence_files"]


def sequence_files(pattern: str) -> list[Path]:
    """The regular files matching a glob pattern (``**`` allowed), sorted by name.

    Raises
    ------
    InputError
        When nothing matches.
    """
    files = sorted(Path(f) for f in _glob.glob(str(pattern), recursive=True) if Path(f).is_file())
    if not files:
        raise InputError(f"no file matches '{pattern}'")
    return files


def _rhs(A, rhs, seed: int):
    if rhs is not None:
        return np.asarray(rhs, dtype=np.float64), None
    x_true = np.random.default_rng(seed).standard_normal(A.shape[0])
    return A @ x_true, x_true


def solve_sequence(matrices, method: str = "auto", *, perm=None, rhs=None, seed: int = 0, baseline: bool = True,
                   on_step=None, **options) -> dict:
    """Solve ``A_k x_k = b_k`` for every matrix of a sequence with one ordering, and with SciPy's ``spsolve``.

    Parameters
    ----------
    matrices : iterable of sparse matrices or paths
        All with the pattern of the first; paths are read with :func:`reorder.io.read_matrix`.
    method : str
        Ordering computed once on the first matrix (``perm`` overrides it); ``auto`` prices its
        search by the length of the sequence when that is known (a list).
    perm : array_like of int, optional
        New-to-old permutation to use instead of computing one.
    rhs : array_like, optional
        One right-hand side for every matrix; default ``b_k = A_k x*`` with ``x*`` drawn from
        ``seed`` (so the error against ``x*`` is reported too).
    seed : int
    baseline : bool
        Also time ``spsolve(A_k, b_k)`` (SciPy's default path: its own column ordering and partial
        pivoting, every call from scratch).
    on_step : callable, optional
        Called with each row (a dict) as it is done.
    **options
        Passed to the ordering.

    Returns
    -------
    dict
        ``rows`` (one per matrix: ``factor_seconds``, ``solve_seconds``, ``residual``, ``error``,
        ``pivoting``, and with the baseline ``spsolve_seconds``, ``spsolve_residual``,
        ``difference`` = ‖x − x_spsolve‖ / ‖x_spsolve‖), ``order_seconds``, ``total_seconds`` (ordering
        plus every factorization and solve), ``spsolve_total_seconds``, ``ratio`` (ours over SciPy's),
        ``read_seconds``, ``max_residual``, ``method``, ``n``, ``count``.

    Raises
    ------
    InputError
        An empty sequence, a matrix whose pattern differs from the first, an unreadable file.
    """
    from scipy.sparse.linalg import spsolve

    try:
        count = len(matrices)
    except TypeError:  # an iterator: its length is not known in advance
        count = None
    rows: list[dict] = []
    F = None
    read_seconds = 0.0
    for k, item in enumerate(matrices):
        t0 = time.perf_counter()
        if isinstance(item, (str, Path)):
            from .io import read_matrix

            A = read_matrix(item)
            name = Path(item).name
        else:
            A, name = item, f"#{k}"
        read_seconds += time.perf_counter() - t0
        b, x_true = _rhs(A, rhs, seed + k)
        if F is None:
            F = OrderedFactor(A, method, perm=perm, seed=seed, factor=False, factorizations=count, **options)
        try:
            F.factor(A)
        except InputError as exc:
            raise InputError(f"{name}: {exc}") from None
        x = F.solve(b)
        row = {"matrix": name, "factor_seconds": F.factor_seconds, "solve_seconds": F.solve_seconds,
               "residual": float(F.residuals.max(initial=0.0)), "pivoting": F.pivoting, "error": None}
        if x_true is not None:
            row["error"] = float(np.linalg.norm(x - x_true) / max(np.linalg.norm(x_true), 1e-300))
        if baseline:
            with warnings.catch_warnings():
                warnings.simplefilter("ignore")
                t0 = time.perf_counter()
                xs = spsolve(A, b)
                row["spsolve_seconds"] = time.perf_counter() - t0
            nb = max(float(np.linalg.norm(b)), 1e-300)
            row["spsolve_residual"] = float(np.linalg.norm(b - A @ xs) / nb)
            row["difference"] = float(np.linalg.norm(x - xs) / max(np.linalg.norm(xs), 1e-300))
        rows.append(row)
        if on_step is not None:
            on_step(row)
    if F is None:
        raise InputError("the sequence holds no matrix")
    # the symbolic count made for the report is no part of the solving path
    total = F.order_seconds + sum(r["factor_seconds"] + r["solve_seconds"] for r in rows)
    out = {
        "method": F.method, "chosen": F.order_info.get("chosen"), "n": F.n, "nnz": F.nnz, "count": len(rows), "order_seconds": F.order_seconds,
        "total_seconds": total, "read_seconds": read_seconds, "rows": rows,
        "max_residual": max(r["residual"] for r in rows), "pivoting": any(r["pivoting"] for r in rows),
        "nnz_l": F.nnz_l, "predicted_nnz_l": F.symbolic.nnz_factor,
    }
    if baseline:
        st = sum(r["spsolve_seconds"] for r in rows)
        out.update(spsolve_total_seconds=st, ratio=total / st if st > 0 else None,
                   max_spsolve_residual=max(r["spsolve_residual"] for r in rows))
    return out
