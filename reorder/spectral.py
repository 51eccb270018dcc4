"""Fiedler vectors of graph Laplacians: operators, eigensolvers with fallbacks, level structures.

:func:`fiedler_vector` returns the eigenvector of the second-smallest eigenvalue of the combinatorial
or normalized Laplacian of a connected graph, by dense ``eigh`` (small graphs), shift-invert Lanczos
(medium graphs) or LOBPCG preconditioned by a smoothed-aggregation AMG V-cycle (large graphs), and
falls back along a chain that ends with a breadth-first level structure, so it never raises.

References
----------
.. [1] M. Fiedler, "Algebraic connectivity of graphs", Czechoslovak Math. J. 23 (1973) 298–305.
.. [2] F. R. K. Chung, "Spectral Graph Theory", AMS CBMS 92 (1997) (normalized Laplacian).
.. [3] A. V. Knyazev, "Toward the optimal preconditioned eigensolver: locally optimal block
       preconditioned conjugate gradient method", SIAM J. Sci. Comput. 23 (2001) 517–541.
.. [4] P. Vaněk, J. Mandel and M. Brezina, "Algebraic multigrid by smoothed aggregation for second
       and fourth order elliptic problems", Computing 56 (1996) 179–196.
.. [5] R. B. Lehoucq, D. C. Sorensen and C. Yang, "ARPACK Users' Guide", SIAM (1998)
       (implicitly restarted Lanczos, shift-invert mode).
.. [6] A. George and J. W. H. Liu, "An implementation of a pseudoperipheral node finder",
       ACM Trans. Math. Softw. 5 (1979) 284–295.
"""

from __future__ import annotations

import time
from dataclasses import dataclass, field

import numpy as np
import scipy.sparse as sp

from .defaults import OPERATORS, SOLVERS, WEIGHTS
from .eigensolvers import fix_sign, run_plan
from .errors import InputError
from .graph import Graph
from .kernels import traversal as _kt
from .threads import blas_limit

__all__ = [
    "FiedlerResult",
    "fiedler_vector",
    "laplacian",
    "normalized_laplacian",
    "level_structure_vector",
    "pseudo_peripheral_pair",
    "SOLVERS",
]

# SOLVERS (reorder.defaults): names accepted by ``fiedler_vector(solver=...)`` (besides "auto"),
# also the ``path`` values.


@dataclass(frozen=True, eq=False)
class FiedlerResult:
    """Fiedler vector of one connected graph.

    Attributes
    ----------
    vector : ndarray, shape (n,)
        Eigenvector of the second-smallest eigenvalue (unit 2-norm, sign fixed so that its first
        nonzero entry is negative).
    value : float
        The eigenvalue λ₂.
    path : str
        Which solver produced it ("trivial", "dense", "eigsh", "lobpcg-amg", "lobpcg",
        "level-structure").
    residual : float
        ``‖A x − λ x‖₂ / ‖A‖`` for the returned vector, with ``‖A‖`` bounded by twice the largest
        weighted degree (combinatorial) or by 2 (normalized).
    iterations : int
        Eigensolver iterations of the successful attempt (0 for dense).
    vectors : ndarray or None
        ``n × k`` eigenvectors (the Fiedler vector first) when ``k > 1`` was asked for, else None.
        At most ``n − 1`` columns.
    info : dict
        ``operator``, ``weights``, ``n``, ``attempts`` (one dict per solver tried, with its outcome),
        ``seconds``, ``values`` (the k computed eigenvalues), ``residual_over_lambda``.
    """

    vector: np.ndarray
    value: float
    path: str
    residual: float = 0.0
    iterations: int = 0
    vectors: np.ndarray | None = None
    info: dict = field(default_factory=dict)


# --------------------------------------------------------------------------------------------------
# operators


def _check(operator: str, weights: str) -> None:
    if operator not in OPERATORS:
        raise InputError(f"operator must be one of {', '.join(OPERATORS)}, not {operator!r}")
    if weights not in WEIGHTS:
        raise InputError(f"weights must be one of {', '.join(WEIGHTS)}, not {weights!r}")


def _adjacency(graph: Graph, weights: str) -> sp.csr_matrix:
    return graph.to_csr(weighted=(weights == "values"))


def laplacian(graph: Graph, *, weights: str = "pattern") -> sp.csr_matrix:
    """Combinatorial Laplacian ``L = D − W`` of the graph.

    Parameters
    ----------
    graph : Graph
    weights : {"pattern", "values"}
        ``"pattern"``: all edge weights 1; ``"values"``: the graph's weights (|a_ij|) if it has any.

    Returns
    -------
    scipy.sparse.csr_matrix
        Symmetric, positive semidefinite, rows summing to zero.

    References
    ----------
    Fiedler (1973), Czechoslovak Math. J.
    """
    _check("laplacian", weights)
    W = _adjacency(graph, weights)
    d = np.asarray(W.sum(axis=1)).ravel()
    return sp.csr_matrix(sp.diags(d) - W)


def normalized_laplacian(graph: Graph, *, weights: str = "pattern") -> sp.csr_matrix:
    """Normalized Laplacian ``I − D^{-1/2} W D^{-1/2}`` (isolated vertices get a zero row).

    Its null vector is ``D^{1/2}·1``; its spectrum lies in ``[0, 2]``.

    Parameters
    ----------
    graph : Graph
    weights : {"pattern", "values"}

    Returns
    -------
    scipy.sparse.csr_matrix

    References
    ----------
    F. R. K. Chung, "Spectral Graph Theory", AMS CBMS 92 (1997), chapter 1.
    """
    _check("normalized", weights)
    W = _adjacency(graph, weights)
    d = np.asarray(W.sum(axis=1)).ravel()
    s = np.zeros_like(d)
    s[d > 0] = 1.0 / np.sqrt(d[d > 0])
    S = sp.diags(s)
    return sp.csr_matrix(sp.diags((d > 0).astype(np.float64)) - S @ W @ S)


def _operator(graph: Graph, operator: str, weights: str):
    """(matrix, unit trivial vector, norm bound, degrees, combinatorial Laplacian)."""
    W = _adjacency(graph, weights)
    d = np.asarray(W.sum(axis=1)).ravel()
    L = sp.csr_matrix(sp.diags(d) - W)
    if operator == "laplacian":
        A = L
        y = np.ones(graph.n)
        bound = 2.0 * float(d.max()) if d.size else 1.0
    else:
        s = np.zeros_like(d)
        s[d > 0] = 1.0 / np.sqrt(d[d > 0])
        S = sp.diags(s)
        A = sp.csr_matrix(sp.diags((d > 0).astype(np.float64)) - S @ W @ S)
        y = np.sqrt(d)
        bound = 2.0
    y = y / (np.linalg.norm(y) or 1.0)
    return A, y, (bound or 1.0), d, L


def _dense_operator(graph: Graph, operator: str, weights: str):
    """As :func:`_operator` with dense NumPy arrays (small graphs: no sparse-matrix overhead)."""
    n = graph.n
    W = np.zeros((n, n))
    rows = np.repeat(np.arange(n), np.diff(graph.indptr))
    w = graph.weights if (weights == "values" and graph.weights is not None) else 1.0
    W[rows, graph.indices] = w
    d = W.sum(axis=1)
    L = np.diag(d) - W
    if operator == "laplacian":
        A, y, bound = L, np.ones(n), 2.0 * float(d.max())
    else:
        s = np.zeros_like(d)
        s[d > 0] = 1.0 / np.sqrt(d[d > 0])
        A = np.diag((d > 0).astype(np.float64)) - s[:, None] * W * s[None, :]
        y, bound = np.sqrt(d), 2.0
    y = y / (np.linalg.norm(y) or 1.0)
    return A, y, (bound or 1.0), d, L


# --------------------------------------------------------------------------------------------------
# level structures


def pseudo_peripheral_pair(graph: Graph, start: int | None = None, max_sweeps: int = 8):
    """A pair of vertices far apart, by repeated breadth-first search.

    Starting from ``start`` (default: a vertex of minimum degree, smallest index), search from a
    minimum-degree vertex of the deepest level until the eccentricity stops growing.

    Parameters
    ----------
    graph : Graph
        Connected (otherwise only the component of ``start`` is explored).
    start : int, optional
    max_sweeps : int

    Returns
    -------
    (s, e, levels_s, levels_e)
        The two vertices and the breadth-first distances from each.

    References
    ----------
    A. George and J. W. H. Liu, "An implementation of a pseudoperipheral node finder",
    ACM Trans. Math. Softw. 5 (1979) 284–295.
    """
    deg = graph.degrees()
    if start is None:
        start = int(np.argmin(deg))
    s = int(start)
    ls = _kt.bfs_levels(graph.indptr, graph.indices, s)
    ecc = int(ls.max())
    for _ in range(max_sweeps):
        last = np.flatnonzero(ls == ecc)
        e = int(last[np.argmin(deg[last])])
        le = _kt.bfs_levels(graph.indptr, graph.indices, e)
        ecc_e = int(le.max())
        if ecc_e > ecc:
            s, ls, ecc = e, le, ecc_e
            continue
        return s, e, ls, le
    last = np.flatnonzero(ls == ecc)
    e = int(last[np.argmin(deg[last])])
    return s, e, ls, _kt.bfs_levels(graph.indptr, graph.indices, e)


def level_structure_vector(graph: Graph, *, start: int | None = None) -> np.ndarray:
    """Breadth-first distances from a pseudo-peripheral vertex, as a float vector.

    A cheap stand-in for the Fiedler vector (its order is a Cuthill–McKee-like level order); used
    as the last fallback of :func:`fiedler_vector` and as an envelope candidate.

    Parameters
    ----------
    graph : Graph
    start : int, optional
        Where the pseudo-peripheral search starts.

    Returns
    -------
    ndarray of float64, shape (n,)
        Unreachable vertices get level ``max + 1``.

    References
    ----------
    George & Liu (1979), ACM TOMS; E. Cuthill and J. McKee, Proc. 24th ACM Nat. Conf. (1969).
    """
    if graph.n == 0:
        return np.zeros(0)
    s, _, ls, _ = pseudo_peripheral_pair(graph, start)
    x = ls.astype(np.float64)
    x[ls < 0] = ls.max() + 1
    return x


# --------------------------------------------------------------------------------------------------
# the Fiedler vector (solvers: reorder.eigensolvers)


def fiedler_vector(graph: Graph, *, operator: str = "laplacian", weights: str = "pattern", seed: int = 0,
                   tol: float = 1e-3, maxiter: int = 200, k: int = 1, x0=None, solver: str = "auto",
                   dense_max: int = 200, eigsh_max: int = 5000, fallback_eigsh_max: int = 50_000,
                   fallbacks=("eigsh", "lobpcg", "level-structure"), accept: float = 2.0,
                   blas_threads: int | None = 1) -> FiedlerResult:
    """Fiedler vector (and optionally the next eigenvectors) of a connected graph.

    The trivial eigenvector (constant for ``L = D − W``, ``D^{1/2}·1`` for the normalized operator)
    is deflated. The solver is chosen by size unless ``solver`` names one: dense ``eigh`` up to
    ``dense_max`` vertices, shift-invert Lanczos (ARPACK) up to ``eigsh_max``, LOBPCG preconditioned
    by one smoothed-aggregation V-cycle built on ``L + εI`` beyond (one vector for ``k = 1``, a block
    of ``k + 1`` otherwise, started from the breadth-first level vector unless ``x0`` is given).
    An attempt that raises or does not reach the tolerance is recorded in ``info["attempts"]`` and
    the next strategy of ``fallbacks`` is tried (shift-invert Lanczos if the graph has at most ``fallback_eigsh_max``
    vertices; LOBPCG again with four times the iterations and a fresh start; the breadth-first level
    structure, which always succeeds). The function does not raise on a connected graph.

    Parameters
    ----------
    graph : Graph
        Connected (the registry splits components); ``n = 1`` gives path ``"trivial"``.
    operator : {"laplacian", "normalized"}
    weights : {"pattern", "values"}
    seed : int
        Seed of the random starting block; same input and seed give the same vector.
    tol : float
        Relative accuracy for LOBPCG: it stops when the residual ``‖A x_i − λ_i x_i‖`` of each wanted
        unit vector is below ``tol · max(λ_i, 1e-3·‖A‖/n)``; an attempt ending above ``accept`` times
        that counts as failed. The default suits ordering (the order of the entries matters, not
        ten digits).
    maxiter : int
        LOBPCG iteration limit (the retry uses four times as many).
    k : int
        Number of nontrivial eigenvectors wanted (``vectors`` holds them when ``k > 1``).
    x0 : ndarray (n,) or (n, j), optional
        Warm start (e.g. prolonged from a coarser graph) for the iterative solvers.
    solver : {"auto", "dense", "eigsh", "lobpcg-amg", "lobpcg", "level-structure"}
    dense_max, eigsh_max, fallback_eigsh_max : int
        Size thresholds described above.
    fallbacks : sequence of str
        Strategies tried, in order, after the first one fails.
    accept : float
        Slack of the LOBPCG convergence test (see ``tol``).
    blas_threads : int or None
        BLAS threads while solving (None leaves the setting alone).

    Returns
    -------
    FiedlerResult

    References
    ----------
    Fiedler (1973); Knyazev (2001), SIAM J. Sci. Comput. (LOBPCG); Vaněk, Mandel & Brezina (1996),
    Computing (smoothed aggregation); Lehoucq, Sorensen & Yang (1998), ARPACK Users' Guide.
    """
    _check(operator, weights)
    if solver != "auto" and solver not in SOLVERS:
        raise InputError(f"solver must be 'auto' or one of {', '.join(SOLVERS)}, not {solver!r}")
    t_start = time.perf_counter()
    n = graph.n
    k = max(1, int(k))
    info = {"operator": operator, "weights": weights, "n": n, "attempts": []}
    if n <= 1:
        v = np.zeros(n)
        info["seconds"] = time.perf_counter() - t_start
        return FiedlerResult(v, 0.0, "trivial", 0.0, 0, v.reshape(n, 1) if k > 1 else None, info)
    kk = min(k, n - 1)
    if solver == "auto":
        first = "dense" if n <= dense_max else ("eigsh" if n <= eigsh_max else "lobpcg-amg")
    else:
        first = solver
    if first == "dense" and n <= dense_max:
        A, y, scale, deg, L = _dense_operator(graph, operator, weights)
    else:
        A, y, scale, deg, L = _operator(graph, operator, weights)
    plan = [first]
    for f in fallbacks:
        if f == "eigsh" and n > fallback_eigsh_max:
            continue
        if f not in plan or f == "lobpcg":
            plan.append(f)
    if "level-structure" not in plan:
        plan.append("level-structure")

    with blas_limit(blas_threads):
        result, retry = run_plan(graph, A, y, L, deg, scale, plan, kk, info, seed=seed, tol=tol,
                                  maxiter=maxiter, x0=x0, operator=operator, accept=accept)
    name, w, V, its, res = result
    V = np.column_stack([fix_sign(V[:, j]) for j in range(V.shape[1])])
    info["values"] = [float(v) for v in w]
    info["residual_over_lambda"] = float(res[0] / w[0]) if w[0] > 0 else float("inf")
    info["seconds"] = time.perf_counter() - t_start
    return FiedlerResult(
        vector=V[:, 0].copy(), value=float(w[0]), path=name, residual=float(res[0] / scale),
        iterations=int(its), vectors=V if k > 1 else None, info=info,
    )
