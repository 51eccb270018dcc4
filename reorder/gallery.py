"""Small test matrices of our own: grid Laplacians and the M-matrix of a pattern.

One home for what the tests, the benchmarks and the warm-up build again and again. The grids are
the textbook stencils (Kronecker sums of 1-D second differences for 5 and 7 points; all neighbours
within the unit square or cube for 9 and 27 points) with Dirichlet boundary; the M-matrix of a
pattern is symmetric positive definite with the pattern's structure, so factoring it needs no
pivoting and no entry cancels (what the symbolic counts assume).

Examples
--------
>>> grid(3, 3).toarray()[0, :4].tolist()
[4.0, -1.0, 0.0, -1.0]
>>> m_matrix(grid(2, 2)).diagonal().tolist()
[3.0, 3.0, 3.0, 3.0]
"""

from __future__ import annotations

import numpy as np
import scipy.sparse as sp

__all__ = ["grid", "grid2d", "grid3d", "m_matrix"]


def _second_difference(k: int) -> sp.csr_matrix:
    return sp.csr_matrix(sp.diags([-1.0, 2.0, -1.0], [-1, 0, 1], shape=(k, k)))


def grid(*dims: int, points: int | None = None) -> sp.csr_matrix:
    """Laplacian of a grid of ``dims`` points (1-D, 2-D or 3-D), Dirichlet boundary.

    Parameters
    ----------
    *dims : int
        Points along each axis (the first axis varies slowest in the numbering).
    points : int, optional
        Stencil: 3 (1-D), 5 or 9 (2-D), 7 or 27 (3-D); default the smallest one. The 3/5/7-point
        operator is the Kronecker sum of 1-D second differences (diagonal ``2 · len(dims)``); the
        9/27-point one joins every pair within the unit square/cube (off-diagonals -1, diagonal
        8/26).

    Returns
    -------
    scipy.sparse.csr_matrix
    """
    d = len(dims)
    full = {1: 3, 2: 9, 3: 27}.get(d)
    smallest = 2 * d + 1
    points = smallest if points is None else int(points)
    if full is None or points not in (smallest, full):
        raise ValueError(f"no {points}-point stencil in {d} dimensions")
    if points == smallest:
        A = _second_difference(dims[0])
        for k in dims[1:]:
            A = sp.kron(A, sp.eye(k)) + sp.kron(sp.eye(A.shape[0]), _second_difference(k))
        return sp.csr_matrix(A)
    # all neighbours within the unit box: the product of (tridiagonal all-ones) minus the identity
    B = sp.csr_matrix(sp.diags([1.0, 1.0, 1.0], [-1, 0, 1], shape=(dims[0], dims[0])))
    for k in dims[1:]:
        B = sp.kron(B, sp.diags([1.0, 1.0, 1.0], [-1, 0, 1], shape=(k, k)))
    B = sp.csr_matrix(B)
    n = B.shape[0]
    return sp.csr_matrix(sp.diags(np.full(n, float(full - 1))) - (B - sp.eye(n)))


def grid2d(k: int, m: int | None = None, *, points: int = 5) -> sp.csr_matrix:
    """5-point (or 9-point) Laplacian on a ``k × m`` grid (``m = k`` by default)."""
    return grid(k, k if m is None else m, points=points)


def grid3d(k: int, *, points: int = 7) -> sp.csr_matrix:
    """7-point (or 27-point) Laplacian on a ``k × k × k`` grid."""
    return grid(k, k, k, points=points)


def m_matrix(pattern) -> sp.csc_matrix:
    """The SPD M-matrix with the symmetric pattern of ``pattern`` (A + Aᵀ): off-diagonals -1,
    diagonal = degree + 1.

    Parameters
    ----------
    pattern : sparse matrix or :class:`~reorder.graph.Graph`
        Stored entries (explicit zeros included) are the pattern; the diagonal is ignored.

    Returns
    -------
    scipy.sparse.csc_matrix
        Diagonally dominant with positive diagonal, so Cholesky (or LU without pivoting) runs
        without cancellation; its factor has exactly the symbolic structure.
    """
    if hasattr(pattern, "indptr") and hasattr(pattern, "n") and not sp.issparse(pattern):
        n = pattern.n
        P = sp.csr_matrix((np.ones(pattern.indices.size), pattern.indices, pattern.indptr), shape=(n, n))
    else:
        A = sp.csr_matrix(pattern)
        n = A.shape[0]
        P = sp.csr_matrix((np.ones(A.nnz), A.indices, A.indptr), shape=A.shape)
        P = sp.csr_matrix(((P + P.T) > 0).astype(np.float64))
        P.setdiag(0)
        P.eliminate_zeros()
    deg = np.asarray(P.sum(axis=1)).ravel()
    return sp.csc_matrix(sp.diags(deg + 1.0) - P)

