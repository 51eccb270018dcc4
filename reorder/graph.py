"""The adjacency graph of a sparse matrix, as plain CSR arrays.

:class:`Graph` holds the symmetric pattern of ``A + Aᵀ`` without the diagonal: the graph whose
elimination a symmetric factorization performs. Helpers give connected components (SciPy), induced
subgraphs and conversion back to a SciPy matrix.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
import scipy.sparse as sp
from scipy.sparse.csgraph import connected_components

__all__ = ["Graph", "from_matrix", "from_edges", "components", "subgraph", "component_lists"]


@dataclass(frozen=True, eq=False)
class Graph:
    """Undirected simple graph in CSR form.

    Attributes
    ----------
    n : int
        Number of vertices.
    indptr : ndarray of int64, shape (n + 1,)
    indices : ndarray of int64, shape (indptr[-1],)
        Neighbours of vertex ``v`` are ``indices[indptr[v]:indptr[v + 1]]``, sorted, no self loops,
        each edge stored in both directions.
    weights : ndarray of float64 or None
        Edge weights aligned with ``indices`` (symmetric), or None for the pattern (all ones).
    info : dict
        Facts about where the graph came from, e.g. ``{"pattern_symmetric": False}``.
    """

    n: int
    indptr: np.ndarray
    indices: np.ndarray
    weights: np.ndarray | None = None
    info: dict = field(default_factory=dict)

    @property
    def nedges(self) -> int:
        """Number of undirected edges."""
        return int(self.indptr[-1]) // 2

    def degrees(self) -> np.ndarray:
        """Vertex degrees (int64)."""
        return np.diff(self.indptr)

    def neighbors(self, v: int) -> np.ndarray:
        return self.indices[self.indptr[v] : self.indptr[v + 1]]

    def to_csr(self, weighted: bool = False) -> sp.csr_matrix:
        """The adjacency matrix (ones, or the weights if ``weighted``) as a SciPy CSR matrix."""
        if weighted and self.weights is not None:
            data = self.weights
        else:
            data = np.ones(self.indices.size, dtype=np.float64)
        return sp.csr_matrix((data, self.indices, self.indptr), shape=(self.n, self.n))


def _canonical(mat: sp.csr_matrix) -> sp.csr_matrix:
    mat = sp.csr_matrix(mat)
    mat.sum_duplicates()
    mat.sort_indices()
    return mat


def from_matrix(matrix, *, weights: str = "pattern") -> Graph:
    """Build the graph of the symmetric pattern of ``A + Aᵀ`` without the diagonal.

    Parameters
    ----------
    matrix : sparse or dense square matrix
        Explicitly stored zeros are edges (they are structural entries).
    weights : {"pattern", "values"}
        ``"pattern"`` gives an unweighted graph; ``"values"`` weights edge ``{i, j}`` by
        ``(|a_ij| + |a_ji|) / 2`` (a zero stored value gives a tiny positive weight so the edge
        survives).

    Returns
    -------
    Graph
        ``info["pattern_symmetric"]`` says whether ``A``'s own pattern was already symmetric.
    """
    if weights not in ("pattern", "values"):
        raise ValueError(f"weights must be 'pattern' or 'values', not {weights!r}")
    g = _pattern_graph(matrix)  # None unless a canonical CSR/CSC matrix
    if g is not None and weights == "pattern":
        return g
    A = sp.csr_matrix(matrix, copy=True)
    if A.shape[0] != A.shape[1]:
        raise ValueError(f"matrix is not square {A.shape}")
    A = _canonical(A)
    if g is None:
        g = _pattern_graph(A)
    if weights == "pattern":
        return g
    # S: the pattern with ones, summed with its transpose (2 where both directions are stored): the
    # weights keep the tiny share of it they always had
    P = sp.csr_matrix((np.ones(A.nnz, dtype=np.float64), A.indices.copy(), A.indptr.copy()), shape=A.shape)
    P.setdiag(0)
    P.eliminate_zeros()
    S = P if g.info["pattern_symmetric"] else _canonical(P + P.T)
    data = np.abs(A.data).astype(np.float64)
    data[~np.isfinite(data)] = 0.0
    W = sp.csr_matrix((data, A.indices.copy(), A.indptr.copy()), shape=A.shape)
    W.setdiag(0)
    W = _canonical(W + W.T) * 0.5
    # align with S's structure: add S*tiny so every structural edge keeps a positive weight
    scale = float(W.data.max()) if W.nnz and W.data.max() > 0 else 1.0
    W = _canonical(W + S * (1e-12 * scale))
    W.setdiag(0)
    W.eliminate_zeros()
    w = np.ascontiguousarray(W.data, dtype=np.float64) if W.nnz == S.nnz else None  # (else: should not happen)
    return Graph(n=g.n, indptr=g.indptr, indices=g.indices, weights=w, info=g.info)


def _pattern_graph(matrix) -> Graph | None:
    """The pattern graph of a square CSR or CSC matrix in canonical form (sorted indices, no
    duplicates), read from its index arrays without a copy of the matrix; None for any other input
    (:func:`from_matrix` canonicalises a copy of those first). A CSC matrix's arrays are the CSR arrays of ``Aᵀ``, whose ``Aᵀ + A`` is the same graph.
    (The general path converts, copies and canonicalises the whole matrix: 1.6 ms against 0.6 ms
    here on a 16 000-row plate mesh, where the whole ordering takes 15 ms.)"""
    if not sp.issparse(matrix) or matrix.format not in ("csr", "csc") or matrix.ndim != 2:
        return None
    n, m = matrix.shape
    if n != m or not matrix.has_canonical_format:
        return None
    ptr = np.asarray(matrix.indptr)
    idx = np.asarray(matrix.indices)
    length = np.diff(ptr)
    rows = np.repeat(np.arange(n, dtype=idx.dtype), length)
    off = idx != rows
    ndiag = idx.size - int(np.count_nonzero(off))
    if ndiag == 0:
        indptr, indices = ptr, idx
    else:
        # canonical: at most one diagonal entry per row, so n of them means one in every row (the
        # usual case: no count per row needed)
        length = length - (1 if ndiag == n else np.bincount(rows[~off], minlength=n))
        indptr = np.zeros(n + 1, dtype=np.int64)
        np.cumsum(length, out=indptr[1:])
        indices = np.compress(off, idx)
    P = sp.csr_matrix((np.ones(indices.size, dtype=np.int8), indices, indptr), shape=(n, n))
    PT = P.T.tocsr()  # (SciPy's conversion leaves each row's indices sorted)
    pattern_symmetric = bool(np.array_equal(P.indptr, PT.indptr) and np.array_equal(P.indices, PT.indices))
    if pattern_symmetric:
        indptr, indices = P.indptr, P.indices
    else:
        S = _canonical(P + PT)
        indptr, indices = S.indptr, S.indices
    return Graph(n=n, indptr=np.array(indptr, dtype=np.int64), indices=np.array(indices, dtype=np.int64),
                 info={"pattern_symmetric": pattern_symmetric})


def from_edges(n: int, rows, cols) -> Graph:
    """Graph on ``n`` vertices from edge lists (either direction; duplicates and loops ignored)."""
    rows = np.asarray(rows, dtype=np.int64)
    cols = np.asarray(cols, dtype=np.int64)
    A = sp.csr_matrix((np.ones(rows.size), (rows, cols)), shape=(n, n))
    return from_matrix(A)


def components(graph: Graph) -> tuple[int, np.ndarray]:
    """Connected components (SciPy ``connected_components``): ``(count, labels)``.

    Labels are renumbered so that components appear in the order of their smallest vertex.
    """
    if graph.n == 0:
        return 0, np.zeros(0, dtype=np.int64)
    k, labels = connected_components(graph.to_csr(), directed=False)
    first = np.full(k, graph.n, dtype=np.int64)
    np.minimum.at(first, labels, np.arange(graph.n))
    rank = np.empty(k, dtype=np.int64)
    rank[np.argsort(first, kind="stable")] = np.arange(k)
    return int(k), rank[labels]


def component_lists(graph: Graph) -> list[np.ndarray]:
    """Vertex lists (sorted) of the connected components, in the order of :func:`components`."""
    k, labels = components(graph)
    order = np.argsort(labels, kind="stable")
    bounds = np.searchsorted(labels[order], np.arange(k + 1))
    return [order[bounds[i] : bounds[i + 1]] for i in range(k)]


def subgraph(graph: Graph, vertices) -> Graph:
    """Induced subgraph on ``vertices`` (relabelled ``0..len-1`` in the given order).

    Runs in O(sum of degrees of ``vertices``) with NumPy operations only.
    """
    vertices = np.asarray(vertices, dtype=np.int64)
    m = vertices.size
    local = np.full(graph.n, -1, dtype=np.int64)
    local[vertices] = np.arange(m, dtype=np.int64)
    starts = graph.indptr[vertices]
    lens = graph.indptr[vertices + 1] - starts
    total = int(lens.sum())
    if total:
        offs = np.repeat(starts - np.concatenate(([0], np.cumsum(lens)[:-1])), lens)
        pos = offs + np.arange(total, dtype=np.int64)
        nb = local[graph.indices[pos]]
        keep = nb >= 0
        rowid = np.repeat(np.arange(m, dtype=np.int64), lens)[keep]
        nb = nb[keep]
        w = graph.weights[pos][keep] if graph.weights is not None else None
    else:
        rowid = nb = np.zeros(0, dtype=np.int64)
        w = np.zeros(0) if graph.weights is not None else None
    counts = np.bincount(rowid, minlength=m)
    indptr = np.zeros(m + 1, dtype=np.int64)
    np.cumsum(counts, out=indptr[1:])
    # rows arrive grouped by rowid already; sort neighbours within each row
    order = np.lexsort((nb, rowid))
    return Graph(
        n=m,
        indptr=indptr,
        indices=np.ascontiguousarray(nb[order]),
        weights=None if w is None else np.ascontiguousarray(w[order]),
        info={},
    )
