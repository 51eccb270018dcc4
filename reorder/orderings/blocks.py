"""Ordering vertices block by block with one global call (the leaves of nested dissection, the
blocks of recursive spectral bisection)."""

from __future__ import annotations

import numpy as np
from scipy.sparse.csgraph import reverse_cuthill_mckee

from ..graph import Graph
from ..permutation import inverse_permutation
from .mindegree import halo_minimum_degree, minimum_degree

__all__ = ["order_blocks"]


def _edge_filtered(graph: Graph, keep_vertex: np.ndarray, block: np.ndarray) -> Graph:
    """Graph on all n vertices keeping only edges whose two ends are kept and in the same block."""
    n = graph.n
    rows = np.repeat(np.arange(n, dtype=np.int64), np.diff(graph.indptr))
    cols = graph.indices
    keep = keep_vertex[rows] & keep_vertex[cols] & (block[rows] == block[cols])
    r = rows[keep]
    c = cols[keep]
    indptr = np.zeros(n + 1, dtype=np.int64)
    np.cumsum(np.bincount(r, minlength=n), out=indptr[1:])
    return Graph(n=n, indptr=indptr, indices=np.ascontiguousarray(c), weights=None, info={})


def order_blocks(graph: Graph, block: np.ndarray, mask: np.ndarray | None = None, *, method: str = "auto",
                 seed: int = 0) -> tuple[np.ndarray, str]:
    """Order the vertices of every block (vertices with the same ``block`` value) with one global
    call, and return them sorted by block value, each block in its own elimination order.

    Parameters
    ----------
    graph : Graph
    block : ndarray of int64
        Block key per vertex; output is sorted by it.
    mask : ndarray of bool, optional
        Vertices to order (default all); the others are left out (and act as halo for the halo
        minimum degree).
    method : {"auto", "halo", "mindegree", "rcm"}
        "auto" and "halo": the halo minimum degree (the unmasked vertices stay in as halo);
        "mindegree": minimum degree of each block alone; "rcm": reverse Cuthill–McKee (SciPy) of
        each block alone.

    Returns
    -------
    order : ndarray of int64
        The masked vertices, grouped by block value (ascending), each group in elimination order.
    used : str
        The method actually used.
    """
    n = graph.n
    mask = np.ones(n, dtype=bool) if mask is None else mask
    verts = np.flatnonzero(mask)
    if verts.size == 0:
        return verts.astype(np.int64), "none"
    if method in ("auto", "halo"):
        # separators (unmasked) stay in as halo; blocks are disconnected once the halo is not eliminated
        elim = np.asarray(halo_minimum_degree(graph, mask, seed=seed), dtype=np.int64)
        rank = np.empty(n, dtype=np.int64)
        rank[elim] = np.arange(elim.size)
        used = "halo-mindegree"
    elif method == "mindegree":
        p, _ = minimum_degree(_edge_filtered(graph, mask, block), seed=seed)
        rank = inverse_permutation(p)
        used = "mindegree"
    else:
        sub = _edge_filtered(graph, mask, block)
        rank = inverse_permutation(reverse_cuthill_mckee(sub.to_csr(), symmetric_mode=True))
        used = "rcm"
    o = np.lexsort((rank[verts], block[verts]))
    return verts[o], used
