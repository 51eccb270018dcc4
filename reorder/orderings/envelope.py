"""Envelope (profile) orderings: the spectral ordering, refined by Sloan's priority-queue numbering.

``spectral`` sorts the vertices by their Fiedler-vector entries and then keeps the smallest profile
among its own candidates: the plain sort, Sloan numberings whose global priority is the spectral
position (the hybrid of Kumfert & Pothen), classic Sloan numberings from a pseudo-peripheral pair,
and a Sloan refinement of reverse Cuthill–McKee, each read forwards and backwards.

References
----------
.. [1] S. T. Barnard, A. Pothen and H. D. Simon, "A spectral algorithm for envelope reduction of
       sparse matrices", Numer. Linear Algebra Appl. 2 (1995) 317–334.
.. [2] S. W. Sloan, "An algorithm for profile and wavefront reduction of sparse matrices",
       Int. J. Numer. Methods Eng. 23 (1986) 239–251.
.. [3] G. Kumfert and A. Pothen, "Two improved algorithms for envelope and wavefront reduction",
       BIT 37 (1997) 559–590.
"""

from __future__ import annotations

import time

import numpy as np
from scipy.sparse.csgraph import reverse_cuthill_mckee

from ..graph import Graph, subgraph
from ..kernels import envelope as _ke
from ..spectral import fiedler_vector, pseudo_peripheral_pair
from . import register
from .peel import dense_rows, order_by_components
from .records import SpectralSettings

#: rows of degree above ``DENSE · √n`` are set aside and numbered last
DENSE = 10.0

__all__ = ["spectral_envelope", "sloan_order", "profile_of", "spectral_sort"]

#: (w1, w2) pairs tried for the hybrid (spectral global priority); larger w1 favours a thin front.
HYBRID_WEIGHTS = ((2.0, 1.0), (4.0, 1.0), (8.0, 1.0), (16.0, 1.0), (1.0, 2.0))
#: the reduced set used above ``large`` vertices
HYBRID_WEIGHTS_LARGE = ((2.0, 1.0), (8.0, 1.0))
#: weights of the polishing passes, which use the best order so far as global priority
POLISH_WEIGHTS = ((2.0, 1.0), (4.0, 1.0))


def profile_of(graph: Graph, perm: np.ndarray) -> int:
    """Row profile of ``A[perm][:, perm]`` (same definition as :func:`reorder.analysis.bandwidth_profile`)."""
    inv = np.empty(graph.n, dtype=np.int64)
    inv[perm] = np.arange(graph.n, dtype=np.int64)
    return int(_ke.row_profile(graph.n, graph.indptr, graph.indices, inv))


def spectral_sort(x: np.ndarray) -> np.ndarray:
    """Vertices in increasing order of ``x``; ties broken by vertex index (stable sort)."""
    return np.argsort(np.asarray(x), kind="stable").astype(np.int64)


def sloan_order(graph: Graph, start: int, global_priority: np.ndarray, w1: float = 2.0,
                w2: float = 1.0) -> np.ndarray:
    """Sloan's numbering from ``start`` with the given global priority.

    Parameters
    ----------
    graph : Graph
    start : int
        First vertex numbered.
    global_priority : ndarray (n,)
        Larger means "number earlier": the distance to the end vertex in Sloan's algorithm, or
        ``diameter · (1 − rank / (n − 1))`` of a spectral (or other) order for the hybrid.
    w1, w2 : float
        Weights of the local term (growth of the front) and of the global priority.

    Returns
    -------
    ndarray of int64
        ``perm`` (position → vertex).

    References
    ----------
    Sloan (1986), Int. J. Numer. Methods Eng.; Kumfert & Pothen (1997), BIT (priority form and the
    spectral global priority).
    """
    g = np.ascontiguousarray(global_priority, dtype=np.float64)
    return _ke.sloan(graph.n, graph.indptr, graph.indices, int(start), g, float(w1), float(w2))


def _rank_priority(perm: np.ndarray, depth: float) -> np.ndarray:
    """Global priority falling linearly from ``depth`` (first in ``perm``) to 0 (last)."""
    n = perm.size
    g = np.empty(n, dtype=np.float64)
    g[perm] = depth * (1.0 - np.arange(n, dtype=np.float64) / max(n - 1, 1))
    return g


def _value_priority(x: np.ndarray, depth: float) -> np.ndarray:
    """Global priority ``depth · (x_max − x) / (x_max − x_min)``: largest where ``x`` is smallest."""
    span = float(np.ptp(x)) or 1.0
    return depth * (float(x.max()) - x) / span


_FIEDLER_OPTIONS = ("tol", "maxiter", "solver", "fallbacks", "dense_max", "eigsh_max", "fallback_eigsh_max", "accept",
                    "blas_threads")


@register("spectral", SpectralSettings, summary="Fiedler-vector envelope ordering refined by Sloan's algorithm",
          rank=20)
def spectral_envelope(graph: Graph, s: SpectralSettings, seed: int = 0):
    """Spectral envelope ordering of a connected graph, with profile refinement.

    The vertices are sorted by the Fiedler vector of the chosen Laplacian (ties by index). With
    ``refine`` the ordering keeps the smallest profile among these candidates, each read in both
    directions: ``"spectral"`` (the plain sort), ``"hybrid"`` (Sloan's numbering with the scaled
    Fiedler value as global priority, started at either end, for several weight pairs),
    ``"sloan"`` (classic Sloan from a pseudo-peripheral pair), ``"rcm"`` (SciPy's reverse
    Cuthill–McKee) and ``"polish"`` (Sloan passes whose global priority is the position in the best
    order found so far, repeated ``polish_rounds`` times). With ``"rcm"`` among the candidates the
    profile is never larger than RCM's.

    Parameters
    ----------
    graph : Graph
        Connected, ``n >= 3`` (the registry splits components).
    seed : int
        Seed of the eigensolver's starting block.
    operator : {"laplacian", "normalized"}
    weights : {"pattern", "values"}
        Passed to :func:`reorder.spectral.fiedler_vector`; the profile itself depends only on the
        pattern.
    refine : bool
        False gives the plain Fiedler sort (Barnard, Pothen & Simon 1995).
    candidates : sequence of str
        Which candidate families to try when refining.
    polish_rounds : int
    large : int
        Above this many vertices fewer weight pairs are tried and only one eigenvector is computed.
    near_double : float
        When ``λ₃ − λ₂ <= near_double · λ₂`` (up to ``large`` vertices) the second eigenvector and the
        mixes ``v₂ ± v₃`` drive further hybrid candidates.
    tol, maxiter, solver, fallbacks, dense_max, eigsh_max, fallback_eigsh_max, accept, blas_threads
        Passed to :func:`reorder.spectral.fiedler_vector`.

    Returns
    -------
    perm : ndarray of int64
    info : dict
        ``fiedler_path``, ``fiedler_residual``, ``lambda2``, ``fiedler_iterations``,
        ``fiedler_attempts``, ``winner`` (candidate name), ``profile``, ``profiles`` (candidate →
        profile), ``seconds_fiedler``, ``seconds_refine``.

    References
    ----------
    Barnard, Pothen & Simon (1995), Numer. Linear Algebra Appl.; Sloan (1986), Int. J. Numer.
    Methods Eng.; Kumfert & Pothen (1997), BIT.
    """
    n = graph.n
    heavy = dense_rows(graph, DENSE)
    if heavy.size and heavy.size < n:
        # dense rows last (each adds its position to the profile, the least there), the rest by
        # component: a hub joining everything slows the eigensolver down by orders of magnitude
        keep = np.setdiff1d(np.arange(n, dtype=np.int64), heavy)
        p, info = order_by_components(subgraph(graph, keep), lambda g: spectral_envelope.impl(g, s, seed))
        return np.concatenate((keep[p], heavy)), dict(info, dense_rows=int(heavy.size))
    operator, weights, refine, candidates = s.operator, s.weights, s.refine, s.candidates
    polish_rounds, large, near_double = s.polish_rounds, s.large, s.near_double
    fopts = {k: getattr(s, k) for k in _FIEDLER_OPTIONS}
    t0 = time.perf_counter()
    k = 2 if (refine and n <= large and n >= 8) else 1
    fr = fiedler_vector(graph, operator=operator, weights=weights, seed=seed, k=k, **fopts)
    t1 = time.perf_counter()
    x = fr.vector
    # near-double λ₂ (square grids, symmetric parts): the computed vector is one arbitrary mix of the
    # eigenspace, so the second vector and the diagonal mixes also drive hybrid candidates
    extra = []
    if fr.vectors is not None and fr.vectors.shape[1] > 1:
        lam = fr.info.get("values", [fr.value])
        if len(lam) > 1 and lam[1] - lam[0] <= near_double * max(lam[0], 1e-300):
            x2 = fr.vectors[:, 1]
            extra = [("v2", x2), ("v1+v2", x + x2), ("v1-v2", x - x2)]
    base = spectral_sort(x)
    info = {
        "fiedler_path": fr.path,
        "fiedler_residual": fr.residual,
        "lambda2": fr.value,
        "fiedler_iterations": fr.iterations,
        "fiedler_attempts": fr.info.get("attempts", []),
        "operator": operator,
        "weights": weights,
        "seconds_fiedler": t1 - t0,
    }
    if not refine or n < 3:
        info["winner"] = "spectral"
        return base, info

    profiles: dict[str, int] = {}
    best = [None, None, None]  # name, perm, profile

    def add(name, perm):
        # each candidate counts in its better direction
        for nm, p in ((name, perm), (name + "-reversed", perm[::-1])):
            prof = profile_of(graph, p)
            profiles[nm] = prof
            if best[2] is None or prof < best[2]:
                best[:] = [nm, p, prof]

    if "spectral" in candidates:
        add("spectral", base)
    s, e, ls, le = pseudo_peripheral_pair(graph)
    depth = float(max(int(ls.max()), 1))
    if "hybrid" in candidates:
        pairs = HYBRID_WEIGHTS if n <= large else HYBRID_WEIGHTS_LARGE
        for direction, xv, start in (("", x, int(base[0])), ("-from-end", -x, int(base[-1]))):
            g = _value_priority(xv, depth)
            for w1, w2 in pairs:
                add(f"hybrid{direction}-{w1:g}-{w2:g}", sloan_order(graph, start, g, w1, w2))
        for tag, xe in extra:
            be = spectral_sort(xe)
            for direction, xv, start in (("", xe, int(be[0])), ("-from-end", -xe, int(be[-1]))):
                g = _value_priority(xv, depth)
                for w1, w2 in HYBRID_WEIGHTS[:3]:
                    add(f"hybrid-{tag}{direction}-{w1:g}-{w2:g}", sloan_order(graph, start, g, w1, w2))
    if "sloan" in candidates:
        add("sloan-2-1", sloan_order(graph, s, le.astype(np.float64), 2.0, 1.0))
    if "rcm" in candidates:
        add("rcm", np.asarray(reverse_cuthill_mckee(graph.to_csr(), symmetric_mode=True), dtype=np.int64))
    if "polish" in candidates:
        for r in range(polish_rounds if n <= large else 1):
            p = np.ascontiguousarray(best[1])
            for w1, w2 in POLISH_WEIGHTS if n <= large else POLISH_WEIGHTS[1:]:
                for tag, o in (("", p), ("-from-end", p[::-1])):
                    add(f"polish{r + 1}{tag}-{w1:g}-{w2:g}",
                        sloan_order(graph, int(o[0]), _rank_priority(o, depth), w1, w2))
    info["winner"] = best[0]
    info["profile"] = int(best[2])
    info["profiles"] = profiles
    info["seconds_refine"] = time.perf_counter() - t1
    return np.ascontiguousarray(best[1], dtype=np.int64), info

