"""The work of one case, run in a worker (a local process, a Dask worker, or this process): read the
matrix (cached for the next method), order, analyse, optionally factor; failures become records.
"""

from __future__ import annotations

import json
import threading

from ..io import read_matrix
from ..jsonable import jsonable as _jsonable
from ..report.records import COLUMNS, FACTOR_COLUMNS
from ..warmup import warm
from .cases import Case, _one_line
from .measure import _factor, _PeakMemory

_LOCK = threading.Lock()
_CACHE: dict = {}
#: one case at a time per process. A worker that runs tasks in threads (an in-process Dask
#: cluster) would otherwise time two orderings that share the interpreter lock and the cores, and
#: CPython 3.11 can raise ``SystemError: AST constructor recursion depth mismatch`` when two threads
#: parse source at once, which numba does on a kernel's first call (seen once in a clean-clone test
#: run). Cases in different processes still run side by side.
_ONE_CASE = threading.Lock()


def _load(path: str, fingerprint: str):
    """Matrix and graph of ``path``, cached (one matrix per process) for the next method."""
    from ..graph import from_matrix

    key = (path, fingerprint)
    with _LOCK:
        hit = _CACHE.get(key)
    if hit is not None:
        return hit
    A = read_matrix(path)
    g = from_matrix(A)
    with _LOCK:
        _CACHE.clear()
        _CACHE[key] = (A, g)
    return A, g


def _jsonable_info(info: dict, limit: int = 4000):
    safe = _jsonable(info)
    text = json.dumps(safe)
    if len(text) <= limit:
        return safe
    return {"truncated": True, "keys": sorted(str(k) for k in info)}


def run_case(case: Case) -> dict:
    """Run one case and return its record; never raises for a failure of the case itself.

    The record holds the columns of :data:`reorder.report.COLUMNS` (and the factor columns if
    ``case.factor``), the ordering's ``info`` and, under ``"_perm"``, the permutation (removed by
    the runner before logging). ``status`` is ``"ok"`` or ``"error"`` with ``error`` one line.
    """
    with _ONE_CASE:  # one case at a time per process (see _ONE_CASE)
        return _run_case(case)


def _run_case(case: Case) -> dict:
    """The body of :func:`run_case`, run under its lock."""
    from ..analysis import analyse
    from ..orderings import order

    rec: dict = {"key": case.key, "matrix": case.matrix, "method": case.method, "seed": case.seed,
                 "status": "error", "error": ""}
    for c in COLUMNS:
        rec.setdefault(c, None)
    if case.factor:
        rec.update({c: None for c in FACTOR_COLUMNS})
    try:
        A, g = _load(case.path, case.fingerprint)
        rec["n"], rec["nnz"] = int(A.shape[0]), int(A.nnz)
        warm([case.method], seed=case.seed)  # kernels compiled and loaded before the clock starts
        with _PeakMemory() as mem:
            o = order(g, case.method, seed=case.seed)
        stats = analyse(A, o.perm, graph=g)
        rec.update(
            nnz_factor=stats.nnz_factor, factor_ops=stats.factor_ops, bandwidth=stats.bandwidth,
            profile=stats.profile, etree_height=stats.etree_height, fill=stats.fill,
            components=stats.components, order_seconds=o.seconds, order_peak_mb=mem.mb,
            order_peak_source=mem.source, analyse_seconds=stats.analyse_seconds,
            info=_jsonable_info(o.info),
        )
        if case.factor:
            try:
                rec.update(_factor(A, g, o.perm, stats.nnz_factor, stats.factor_ops, case))
            except MemoryError as exc:
                rec.update(factor_status="error", factor_message=_one_line(exc))
            except Exception as exc:  # a factorization problem does not void the ordering's numbers
                rec.update(factor_status="error", factor_message=_one_line(exc))
        rec["status"] = "ok"
        rec["_perm"] = o.perm
    except (KeyboardInterrupt, SystemExit):
        raise
    except BaseException as exc:  # MemoryError included: record it, the run goes on
        rec["error"] = _one_line(exc)
    return rec
