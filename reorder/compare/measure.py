"""Measurements of one case beyond the ordering itself: the peak memory of a block of work, and the
SuperLU factorization of the reordered matrix (or of its M-matrix), skipped when too big.
"""

from __future__ import annotations

import os
import time
import tracemalloc

import numpy as np
import scipy.sparse as sp

from .cases import Case, _one_line

def _status_kb(field_name: str) -> int | None:
    try:
        with open("/proc/self/status") as fh:
            for line in fh:
                if line.startswith(field_name + ":"):
                    return int(line.split()[1])
    except OSError:
        return None
    return None


class _PeakMemory:
    """Peak memory of a block, in MiB.

    On Linux the process's resident high-water mark is reset (``/proc/self/clear_refs``, value 5)
    and the peak is ``VmHWM`` after the block minus ``VmRSS`` before it: everything the block made
    resident, NumPy, SciPy and compiled kernels alike (pages reused from the allocator's free lists
    do not count). Elsewhere, or where the reset is refused, it is the :mod:`tracemalloc` peak,
    which sees allocations through Python's and NumPy's allocators only. ``source`` says which.
    Threads working at the same time in one process (a threaded Dask worker) blur the number.
    """

    def __enter__(self):
        self.source, self.mb = "rss", None
        self._base = None
        try:
            with open("/proc/self/clear_refs", "w") as fh:
                fh.write("5")
            self._base = _status_kb("VmRSS")
        except OSError:
            self._base = None
        if self._base is None:
            self.source = "tracemalloc"
            self._started = not tracemalloc.is_tracing()
            if self._started:
                tracemalloc.start()
            tracemalloc.reset_peak()
        return self

    def __exit__(self, *exc):
        if self.source == "rss":
            hwm = _status_kb("VmHWM")
            self.mb = None if hwm is None else max(0, hwm - self._base) / 1024.0
        else:
            _, peak = tracemalloc.get_traced_memory()
            if self._started:
                tracemalloc.stop()
            self.mb = peak / 2**20
        return False


def _mmatrix(graph, perm) -> sp.csc_matrix:
    """The M-matrix with the graph's pattern (off-diagonals −1, diagonal = degree + 1), reordered."""
    from ..gallery import m_matrix

    return sp.csc_matrix(m_matrix(graph).tocsr()[perm][:, perm])


def _looks_spd(B) -> bool:
    """Real, finite, numerically symmetric with a positive diagonal: worth trying as SPD."""
    if B.dtype.kind not in "fiu" or B.nnz == 0:
        return False
    data = B.data
    if not np.all(np.isfinite(data)) or not np.all(B.diagonal() > 0):
        return False
    scale = float(np.abs(data).max())
    diff = abs(B - B.T)
    return diff.nnz == 0 or float(diff.max()) <= 1e-12 * scale


def _superlu(B):
    from scipy.sparse.linalg import splu

    return splu(B, permc_spec="NATURAL", diag_pivot_thresh=0.0, options={"SymmetricMode": True})


def _factor(A, graph, perm, nnz_factor: int, factor_ops: int, case: Case) -> dict:
    """Factor ``A[perm][:, perm]`` (or its M-matrix) with SuperLU; skip if too big."""
    n = graph.n
    rec = {"factor_status": "skipped", "factor_matrix": None, "factor_nnz_l": None, "factor_mb": None,
           "factor_peak_mb": None, "factor_seconds": None, "factor_message": ""}
    # SuperLU keeps L and U: about 2·nnz(L) entries of 8-byte values and 4-byte row indices
    est_mb = 2.0 * nnz_factor * 12 / 2**20
    try:
        ram_mb = os.sysconf("SC_PAGE_SIZE") * os.sysconf("SC_PHYS_PAGES") / 2**20
    except (ValueError, OSError, AttributeError):
        ram_mb = float("inf")
    if est_mb > case.factor_mem_fraction * ram_mb:
        rec["factor_message"] = (f"skipped: estimated {est_mb:,.0f} MB exceeds {case.factor_mem_fraction:.0%} "
                                 f"of {ram_mb:,.0f} MB RAM")
        return rec
    if factor_ops > case.factor_max_ops:
        rec["factor_message"] = f"skipped: {factor_ops:.2e} operations exceed the limit {case.factor_max_ops:.2e}"
        return rec
    B = sp.csc_matrix(A[perm][:, perm])
    lu, kind, why = None, "original", ""
    if _looks_spd(B):
        try:
            with _PeakMemory() as mem:
                t0 = time.perf_counter()
                lu = _superlu(B.astype(np.float64))
                secs = time.perf_counter() - t0
            # a symmetric matrix is positive definite iff elimination without pivoting has positive pivots
            if not (np.array_equal(lu.perm_r, np.arange(n)) and np.all(lu.U.diagonal() > 0)):
                lu, why = None, "not positive definite (a pivot was not positive)"
        except RuntimeError as exc:  # exactly singular
            lu, why = None, f"not positive definite ({_one_line(exc)})"
    else:
        why = "not symmetric positive definite (values not symmetric, or a diagonal entry not positive)"
    if lu is None:
        kind = "m-matrix"
        with _PeakMemory() as mem:
            t0 = time.perf_counter()
            lu = _superlu(_mmatrix(graph, perm))
            secs = time.perf_counter() - t0
    L = lu.L
    L.eliminate_zeros()
    rec.update(
        factor_status="ok",
        factor_matrix=kind,
        factor_nnz_l=int(L.nnz),
        factor_mb=lu.nnz * 12 / 2**20,
        factor_peak_mb=mem.mb,
        factor_seconds=secs,
        factor_message=(f"M-matrix with the same pattern factored: {why}" if kind == "m-matrix" else ""),
    )
    if kind == "m-matrix" and L.nnz != nnz_factor:  # structural count: must agree with the symbolic one
        rec["factor_message"] += f"; SuperLU nnz(L) {L.nnz} differs from the symbolic count {nnz_factor}"
    return rec
