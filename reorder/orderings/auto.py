"""``auto``: compute a few candidate orderings and keep the one with the smallest exact nnz(L).

The candidates (nested dissection, minimum degree, RCM by default, and SciPy SuperLU's minimum degree
on small inputs) are counted by the symbolic
factorization of :mod:`reorder.analysis`, so the result is never worse than the best candidate.
"""

from __future__ import annotations

import time

import numpy as np

from ..analysis import symbolic_factor
from ..graph import Graph
from ..permutation import inverse_permutation
from ..errors import InputError
from . import Ordering, register
from .records import AutoSettings

__all__ = ["auto"]


def _candidates(candidates) -> list[str]:
    if candidates is not None:
        return list(candidates)
    from . import available

    names = available()
    out = [c for c in ("nd", "mindegree", "rcm") if c in names]
    return out or ["rcm"]


def _superlu_md(graph: Graph) -> np.ndarray:
    """SciPy SuperLU's minimum degree on A + Aᵀ, as an ordering in our convention (inverse of
    ``perm_c``), from the factorization of an M-matrix with the graph's pattern (no pivoting)."""
    import scipy.sparse as sp
    from scipy.sparse.linalg import splu

    W = graph.to_csr()
    d = np.asarray(W.sum(axis=1)).ravel()
    M = sp.csc_matrix(sp.diags(d + 1.0) - W)
    lu = splu(M, permc_spec="MMD_AT_PLUS_A", diag_pivot_thresh=0, options={"SymmetricMode": True})
    return inverse_permutation(lu.perm_c)


@register("auto", AutoSettings, summary="best of nd, minimum degree and RCM by exact nnz(L)", split_components=False,
          rank=5)
def auto(graph: Graph, s: AutoSettings, seed: int = 0):
    """Order by every candidate method and keep the smallest nnz(L) (ties: fewer operations, then
    the earlier candidate).

    Parameters
    ----------
    graph : Graph
    s : AutoSettings
        The settings below (called with keywords, ``auto(graph, candidates="nd,rcm")``).
    seed : int
    candidates : sequence of str, optional
        Method names (comma-separated string allowed); default ``nd, mindegree, rcm`` (those
        registered).
    superlu_max : int
        Graphs with at most this many vertices also try SciPy SuperLU's minimum degree on A + Aᵀ
        (candidate ``"superlu-md"``; it needs a numerical factorization of an M-matrix with the same
        pattern, so it is kept to small inputs). 0 turns it off.
    effort : {"fast", "normal", "best"}, optional
        Passed to the ``nd`` candidate (see :class:`reorder.orderings.nd.NdSettings`).
    multisection : bool, optional
        Passed to the ``nd`` candidate (default: its own).

    The other candidates run with their defaults; a candidate may be a method spec
    (``nd:leaf_size=100``, see :func:`reorder.orderings.parse_method`).

    Returns
    -------
    perm : ndarray of int64
    info : dict
        ``chosen``; ``candidates``: per method ``{"nnz_factor", "factor_ops", "seconds"}`` (or
        ``{"error": ...}`` if a candidate failed).

    References
    ----------
    J. R. Gilbert, E. G. Ng and B. W. Peyton, SIAM J. Matrix Anal. Appl. 15 (1994) 1075–1091 (the
    exact column counts that make comparing candidates cheap).
    """
    from . import order, resolve

    n = graph.n
    candidates, superlu_max = s.candidates, s.superlu_max
    names = _candidates(candidates)
    for name in names:  # unknown names and bad specs are the user's to fix, before any work
        if resolve(name)[0] == "auto":
            raise InputError("auto: option candidates cannot include auto itself")
    results = {}
    best = None
    for name in names:
        t0 = time.perf_counter()
        try:
            nd_opts = {}
            if name == "nd":
                nd_opts = {k: v for k, v in (("effort", s.effort), ("multisection", s.multisection)) if v is not None}
            o = order(graph, name, seed=seed, **nd_opts)
        except Exception as exc:  # a failing candidate must not sink the others
            results[name] = {"error": f"{type(exc).__name__}: {exc}"}
            continue
        sym = symbolic_factor(graph, o.perm)
        key = (sym.nnz_factor, sym.factor_ops)
        results[name] = {"nnz_factor": int(sym.nnz_factor), "factor_ops": int(sym.factor_ops),
                         "seconds": round(time.perf_counter() - t0, 4)}
        if best is None or key < best[0]:
            best = (key, name, o)
    if 2 < n <= superlu_max and candidates is None:
        t0 = time.perf_counter()
        try:
            p = _superlu_md(graph)
            sym = symbolic_factor(graph, p)
            results["superlu-md"] = {"nnz_factor": int(sym.nnz_factor), "factor_ops": int(sym.factor_ops),
                                     "seconds": round(time.perf_counter() - t0, 4)}
            key = (sym.nnz_factor, sym.factor_ops)
            if best is None or key < best[0]:
                best = (key, "superlu-md", Ordering(perm=p, method="superlu-md"))
        except Exception as exc:
            results["superlu-md"] = {"error": f"{type(exc).__name__}: {exc}"}
    if best is None:
        return order(graph, "rcm", seed=seed).perm, {"chosen": "rcm", "candidates": results}
    _, name, o = best
    info = {"chosen": name, "candidates": results}
    return o.perm, info
