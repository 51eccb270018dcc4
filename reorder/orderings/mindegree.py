"""Minimum degree orderings: approximate external degrees on the quotient graph, and a halo variant.

:func:`minimum_degree` is the registered ``mindegree`` method; :func:`halo_minimum_degree` orders a
subset of the vertices while the rest stay in the graph (for the leaves of nested dissection). Both
call the compiled kernels of :mod:`reorder.kernels.mindegree` (approximate fill rules),
:mod:`reorder.kernels.mindegree_degree` (degree rule) and :mod:`reorder.kernels.mindegree_exact`
(exact rules).
"""

from __future__ import annotations

import math

import numpy as np

from ..analysis import etree_postorder, symbolic_factor
from ..graph import Graph
from ..kernels.mindegree import INT32_LIMIT, quotient_min_degree
from . import register
from .records import SCORES, MinDegreeSettings

__all__ = ["MinDegreeSettings", "minimum_degree", "halo_minimum_degree"]

_SCORES = {name: code for code, name in enumerate(SCORES)}  # rule name -> kernel rule number
#: up to this many vertices ``score="auto"`` tries the approximate-degree rules and keeps the
#: least nnz(L)
AUTO_TRY_ALL = 200_000
#: reversed tie orders and exact-degree rules join ``"auto"`` up to this many vertices, the latter
#: only where the best factor so far has at most ``AUTO_EXACT_MAX_FILL`` entries per row (exact
#: degrees cost more where the factor is dense: 5 s per run on a 20,000-vertex power-law graph)
AUTO_EXACT_MAX_N = 50_000
AUTO_EXACT_MAX_FILL = 300
# (score, reversed tie order, delta, first-in first-out); delta < 0: stage-end updates in reverse
# order. Each runs without and, where the graph has indistinguishable vertices, with initial
# supervariable detection.
_AUTO_FAST = [(s, r, 0, False) for s in ("degree", "mean_fill", "fill") for r in (False, True)]
_AUTO_EXACT = [
    ("exact", True, -1, False),
    ("exact_mean_fill", True, -1, False),
    ("exact", True, 0, False),
    ("exact_mean_fill", False, 0, False),
    ("exact", True, 1, True),
]
_COUNTER_NAMES = ("pivots", "mass_eliminated", "merged", "absorbed", "compactions", "workspace", "merged_initially")


def _index_type(graph: Graph):
    """int32 where the kernel's workspace fits 32-bit positions (see ``INT32_LIMIT``), else int64."""
    return np.int32 if 2 * graph.indices.size + 3 * graph.n + 64 < INT32_LIMIT else np.int64


def _tie_order(n: int, seed: int, reverse: bool = False, dtype=np.int64) -> np.ndarray:
    if not seed:
        tie = np.arange(n - 1, -1, -1, dtype=dtype) if reverse else np.arange(n, dtype=dtype)
    else:
        tie = np.random.default_rng(seed).permutation(n).astype(dtype)
        if reverse:
            tie = np.ascontiguousarray(tie[::-1])
    return tie


def _dense_flags(graph: Graph, role: np.ndarray, dense: float):
    """Vertices to postpone: degree above ``dense * sqrt(n)`` (never when ``dense <= 0``); None
    when there are none."""
    if dense is None or dense <= 0 or graph.n == 0:
        return None
    limit = dense * math.sqrt(graph.n)
    ptr = graph.indptr
    if ptr[-1] <= limit:  # no vertex can have more neighbours than there are entries
        return None
    degree = ptr[1:] - ptr[:-1]
    if degree.max() <= limit:  # (cheaper than np.diff and a mask on the thousands of leaf calls)
        return None
    heavy = (degree > limit) & (role == 1)
    return heavy if heavy.any() else None


def _run(graph: Graph, role: np.ndarray, seed: int, dense: float, aggressive: bool, fifo: bool, elbow: float, score: int = 0, delta: int = 0, reverse: bool = False, compress: bool = False, counters: bool = True, index_type=None):
    """One kernel run; returns the order and (``counters=True``) the dict of counters, else None.

    The kernel puts the members of each pivot supervariable (indistinguishable: any order among
    them gives the same factor) by increasing degree, so that e.g. the hub of an arrow comes last.
    """
    n = graph.n
    heavy = _dense_flags(graph, role, dense)
    nheavy = int(np.count_nonzero(heavy)) if heavy is not None else 0
    if nheavy:
        role = role.copy()
        role[heavy] = -1
    itype = _index_type(graph) if index_type is None else index_type
    ptr = np.ascontiguousarray(graph.indptr, dtype=np.int64)  # no copy for a Graph (int64 already)
    idx = np.ascontiguousarray(graph.indices, dtype=np.int64)
    tie = _tie_order(n, seed, reverse, itype)
    # (the exact rules and the degree rule have kernels of their own, compiled only where they run)
    order, cnt, _ = quotient_min_degree(n, ptr, idx, role, tie, bool(aggressive), bool(fifo), float(elbow), int(score),
                                        int(delta), bool(compress))
    if nheavy:
        # postponed rows go last, lightest first (ties by vertex number)
        ids = np.flatnonzero(heavy)
        ids = ids[np.argsort(np.diff(graph.indptr)[ids], kind="stable")]
        order = np.concatenate((order, ids.astype(np.int64)))
    if not counters:
        return order, None
    info = dict(zip(_COUNTER_NAMES, (int(c) for c in cnt)))
    info["dense"] = nheavy
    return order, info


@register("mindegree", MinDegreeSettings, summary="minimum degree (approximate external degrees, quotient graph)",
          split_components=False, rank=30)
def minimum_degree(graph: Graph, s: MinDegreeSettings, seed: int = 0):
    """Minimum degree ordering with approximate external degrees on the quotient graph.

    Repeatedly eliminates a (super)variable of least approximate external degree. The graph of the
    partly factored matrix is kept as a quotient graph (elements = cliques of eliminated vertices)
    in O(nnz) memory; indistinguishable vertices are merged into supervariables (hash-based
    detection) and eliminated together, vertices left without outside neighbours are eliminated
    with the pivot (mass elimination), and elements contained in the new element are absorbed.

    Parameters
    ----------
    graph : Graph
        Any graph (components and isolated vertices are handled here).
    seed : int
        ``0`` breaks ties of equal degree by vertex number; another value breaks them by a random
        permutation drawn from ``np.random.default_rng(seed)``.
    dense : float
        Vertices of degree above ``dense * sqrt(n)`` are left out and ordered last (lightest
        first); ``dense <= 0`` disables this.
    aggressive : bool
        Absorb every element whose variables all lie in the new element (not only the adjacent
        ones).
    score : {"auto", "degree", "mean_fill", "fill", "exact", "exact_fill", "exact_mean_fill"}, optional
        Pivot rule. ``"degree"``: least approximate external degree. ``"mean_fill"``: least
        approximate local fill per column of the supervariable (Rothberg & Eisenstat 1998).
        ``"fill"``: that fill divided by the square root of the supervariable size (our variant).
        ``"exact"``: least exact external degree with multiple elimination (Liu 1985): within a
        stage, independent pivots of the stage's least degree (plus ``delta``) are eliminated, and
        the exact degrees of their neighbours are computed once at the stage's end (vertices whose
        approximate degree is far above the least keep the approximate one). ``"exact_fill"``: the
        same, ties of equal degree broken towards the larger adjacent element.
        ``"exact_mean_fill"``: the mean-fill score from exact degrees and element sizes, in stages.
        ``"auto"`` (default): on graphs up to ``AUTO_TRY_ALL`` vertices run ``"degree"``,
        ``"mean_fill"`` and ``"fill"``, and, up to ``AUTO_EXACT_MAX_N`` vertices, each also with
        the reversed tie order and, where the factor is not too dense, five exact-degree
        variants; all of them with and (where vertices merge initially) without initial
        supervariables; keep the least nnz(L) (exact symbolic count). On larger graphs
        ``"fill"`` with initial supervariables.
    fifo : bool, optional
        Degree buckets first-in first-out (default False: last-in first-out).
    reverse : bool, optional
        Break ties by the reversed tie order (explicit ``score`` only).
    delta : int, optional
        Degree tolerance of a multiple-elimination stage (exact rules only; default 0). A negative
        value ``-1 - t`` means tolerance ``t`` with the stage-end updates in reverse order.
    compress : bool or "auto", optional
        Merge vertices with identical closed neighbourhoods into supervariables before the first
        elimination (default: ``"auto"`` with ``score="auto"``, which tries both, else False).
    elbow : float, optional
        Extra workspace as a fraction of the stored entries (default 0.2); the workspace is
        compacted when it runs full and grows only if compaction is not enough.

    Returns
    -------
    perm : ndarray of int64
        New position ``k`` holds old vertex ``perm[k]``; a postorder of its elimination tree.
    info : dict
        Counts of pivots, mass-eliminated and merged vertices (``merged_initially`` of them
        before the first elimination), absorbed elements, workspace compactions, and postponed
        dense vertices; with several candidates, ``score`` names the one kept and
        ``nnz_factor_by_score`` lists nnz(L) of each.

    References
    ----------
    J. W. H. Liu, "Modification of the minimum-degree algorithm by multiple elimination", ACM
    Trans. Math. Software 11 (1985) 141–153 (exact degrees, multiple elimination).
    E. Rothberg and S. C. Eisenstat, "Node selection strategies for bottom-up sparse matrix
    ordering", SIAM J. Matrix Anal. Appl. 19 (1998) 682–695 (approximate fill scores).
    A. George and J. W. H. Liu, "The evolution of the minimum degree ordering algorithm", SIAM Review
    31 (1989) 1–19. P. R. Amestoy, T. A. Davis and I. S. Duff, "An approximate minimum degree
    ordering algorithm", SIAM J. Matrix Anal. Appl. 17 (1996) 886–905.
    """
    n = graph.n
    if n <= 1:
        return np.arange(n, dtype=np.int64), {"pivots": n, "dense": 0}
    score, fifo, dense, aggressive = s.score, s.fifo, s.dense, s.aggressive
    if score == "auto":
        if n <= AUTO_EXACT_MAX_N:
            runs = _AUTO_FAST
        elif n <= AUTO_TRY_ALL:
            runs = [run for run in _AUTO_FAST if not run[1]]  # given tie order only
        else:
            runs = [("fill", False, 0, fifo)]
    elif score in _SCORES:
        runs = [(score, s.reverse, s.delta, fifo)]
    role = np.ones(n, dtype=np.int8)
    elbow = float(s.elbow)
    # initial supervariables: both ways in "auto" on graphs up to AUTO_TRY_ALL vertices, always above
    compress = s.compress
    if compress is None:
        compress = ("auto" if n <= AUTO_TRY_ALL else True) if score == "auto" else False
    best = None
    tried = {}

    def attempt(name, reverse, delta, fifo, comp):
        nonlocal best
        perm, info = _run(graph, role, seed, dense, aggressive, fifo, elbow, _SCORES[name], delta, reverse, comp)
        if len(runs) == 1 and compress != "auto":
            best = (perm, info, name, 0)
            return info
        nnz_l = symbolic_factor(graph, perm).nnz_factor
        label = name + ("/reverse" if reverse else "") + (f"/delta{delta}" if delta else "")
        label += ("/fifo" if fifo else "") + ("/compressed" if comp else "")
        tried[label] = nnz_l
        if best is None or nnz_l < best[3]:
            best = (perm, info, label, nnz_l)
        return info

    # with compress="auto", the compressed variants run only where some vertices merge initially
    variants = [False, True] if compress == "auto" else [bool(compress)]
    for comp in variants:
        for k, run in enumerate(runs):
            info = attempt(*run, comp)
            if comp and k == 0 and info["merged_initially"] == 0:
                break
        else:
            if score == "auto" and n <= AUTO_EXACT_MAX_N and best[3] <= AUTO_EXACT_MAX_FILL * n:
                for run in _AUTO_EXACT:
                    attempt(*run, comp)
    perm, info, name, _ = best
    info["score"] = name
    if tried:
        info["nnz_factor_by_score"] = tried
    # the same factor, with every elimination subtree in consecutive columns (what a supernodal
    # factorization wants; see analysis.etree_postorder)
    return etree_postorder(graph, perm), info


def halo_minimum_degree(graph: Graph, ordered_mask, *, seed: int = 0, score: str = "degree",
                        dense: float = MinDegreeSettings.dense, aggressive: bool = MinDegreeSettings.aggressive,
                        fifo: bool = MinDegreeSettings.fifo, elbow: float = MinDegreeSettings.elbow) -> np.ndarray:
    """Minimum degree order of the vertices in ``ordered_mask``; the others form a halo.

    Halo vertices stay in the graph and count in the degrees of the ordered vertices, but are never
    eliminated (edges between two halo vertices play no role and are ignored). Used for the leaves
    of nested dissection, where the halo is the surrounding separator.

    Parameters
    ----------
    graph : Graph
        The leaf and its halo.
    ordered_mask : array_like of bool, shape (n,)
        ``True`` for the vertices to order.
    seed : int
        Tie-breaking, as in :func:`minimum_degree`.
    dense, aggressive, fifo, elbow
        As in :func:`minimum_degree` (defaults from :class:`MinDegreeSettings`).
    score : str
        One of ``"degree"`` (default), ``"mean_fill"``, ``"fill"``; no ``"auto"`` here, since
        the fill of a leaf is only known with its separator).

    Returns
    -------
    ndarray of int64
        The vertices with ``ordered_mask[v]`` true, in elimination order.

    References
    ----------
    F. Pellegrini, J. Roman and P. Amestoy, "Hybridizing nested dissection and halo approximate
    minimum degree for efficient sparse matrix ordering", Concurrency: Practice and Experience 12
    (2000) 69–84.
    """
    mask = np.asarray(ordered_mask, dtype=bool)
    if mask.shape != (graph.n,):
        raise ValueError(f"ordered_mask has shape {mask.shape}, expected ({graph.n},)")
    if graph.n == 0 or not mask.any():
        return np.zeros(0, dtype=np.int64)
    role = mask.astype(np.int8)
    order, _ = _run(graph, role, seed, dense, aggressive, fifo, elbow, _SCORES[score], counters=False)
    return order
