"""Fiedler vectors of graph Laplacians (placeholder: dense and plain LOBPCG paths only).

The full engine (AMG-preconditioned LOBPCG, fallbacks, normalized operator) replaces this module
behind the same signature.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
import scipy.sparse as sp
from scipy.sparse.linalg import lobpcg

from .graph import Graph

__all__ = ["FiedlerResult", "fiedler_vector", "laplacian"]


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
        Which solver produced it ("dense", "lobpcg", "lobpcg-amg", "eigsh", "level-structure", ...).
    residual : float
        ``‖L x − λ x‖ / ‖L‖``-style relative residual reached.
    iterations : int
    vectors : ndarray or None
        Further eigenvectors (n × k) when more than one was asked for, else None.
    info : dict
    """

    vector: np.ndarray
    value: float
    path: str
    residual: float = 0.0
    iterations: int = 0
    vectors: np.ndarray | None = None
    info: dict = field(default_factory=dict)


def laplacian(graph: Graph, *, weights: str = "pattern") -> sp.csr_matrix:
    """Combinatorial Laplacian ``L = D − W`` of the graph."""
    W = graph.to_csr(weighted=(weights == "values"))
    d = np.asarray(W.sum(axis=1)).ravel()
    return sp.csr_matrix(sp.diags(d) - W)


def _fix_sign(x):
    nz = np.flatnonzero(np.abs(x) > 1e-12 * (np.abs(x).max() or 1.0))
    if nz.size and x[nz[0]] > 0:
        x = -x
    return x / (np.linalg.norm(x) or 1.0)


def fiedler_vector(graph: Graph, *, operator: str = "laplacian", weights: str = "pattern", seed: int = 0,
                   tol: float = 1e-5, maxiter: int = 200, k: int = 1, x0=None) -> FiedlerResult:
    """Fiedler vector of a connected graph (placeholder implementation)."""
    n = graph.n
    L = laplacian(graph, weights=weights)
    if n <= 400:
        w, V = np.linalg.eigh(L.toarray())
        return FiedlerResult(_fix_sign(V[:, 1]), float(w[1]), "dense", 0.0, 0,
                             V[:, 1:1 + k] if k > 1 else None)
    rng = np.random.default_rng(seed)
    X = rng.standard_normal((n, max(k, 1) + 1))
    Y = np.ones((n, 1)) / np.sqrt(n)
    w, V = lobpcg(L, X, Y=Y, tol=tol, maxiter=maxiter, largest=False)
    i = np.argsort(w)
    w, V = w[i], V[:, i]
    r = np.linalg.norm(L @ V[:, 0] - w[0] * V[:, 0])
    return FiedlerResult(_fix_sign(V[:, 0]), float(w[0]), "lobpcg", float(r), maxiter,
                         V[:, :k] if k > 1 else None)
