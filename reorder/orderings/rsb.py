"""Recursive spectral bisection (``rsb``): cut the graph into blocks along Fiedler vectors and
order the blocks one after another.

References
----------
H. D. Simon, "Partitioning of unstructured problems for parallel processing", Computing Systems in
Engineering 2 (1991) 135–148; A. Pothen, H. D. Simon and K.-P. Liou, SIAM J. Matrix Anal. Appl. 11
(1990) 430–452.
"""

from __future__ import annotations

import numpy as np

from ..graph import Graph
from ..kernels import separators as _k
from ..kernels import traversal as _kt
from ..spectral import fiedler_vector
from . import register
from .blocks import order_blocks
from .peel import dense_rows
from .seeds import node_seed
from .records import RsbSettings

__all__ = ["RsbSettings", "recursive_spectral_bisection"]

#: rows of degree above ``DENSE · √n`` are kept out of the bisections and put in the last block
DENSE = 10.0


@register("rsb", RsbSettings, summary="recursive spectral bisection into --parts blocks, ordered block by block",
          split_components=False, rank=45)
def recursive_spectral_bisection(graph: Graph, s: RsbSettings, seed: int = 0):
    """Recursive spectral bisection into ``parts`` blocks; blocks are ordered one after another.

    Each step splits a block at the weighted quantile of its Fiedler vector that gives the two halves
    sizes proportional to their numbers of final parts (the median for powers of two). A
    disconnected block is laid out component after component (each by its Fiedler vector) before
    the split. Within a block, vertices are ordered by minimum degree (or RCM, see ``within``).

    Parameters
    ----------
    graph : Graph
    s : RsbSettings
        ``parts``: number of blocks (any positive integer; 2**k gives the classic method);
        ``within``: ordering inside each block. Called with keywords,
        ``recursive_spectral_bisection(graph, parts=4)``.
    seed : int

    Returns
    -------
    perm : ndarray of int64
    info : dict
        ``labels``: block label of each original vertex (ndarray, length n); ``part_sizes``;
        ``cut_edges``: edges between different blocks; ``within``: method used in the blocks.

    References
    ----------
    H. D. Simon, Computing Systems in Engineering 2 (1991) 135–148; Pothen, Simon & Liou (1990).
    """
    n = graph.n
    parts, within = max(1, min(int(s.parts), n)), s.within  # capped by n: labels and part sizes stay O(n)
    labels = np.zeros(n, dtype=np.int64)
    local = np.full(n, -1, dtype=np.int64)
    # dense rows (degree above DENSE·√n) take no part in the bisections: a hub joins everything and
    # slows the eigensolvers down; they go to the last block, where minimum degree orders them last
    dense = dense_rows(graph, DENSE)
    rest = np.ones(n, dtype=bool)
    rest[dense] = False
    labels[dense] = parts - 1
    stack = [(np.flatnonzero(rest).astype(np.int64), parts, 0)]
    count = 0
    while stack:
        verts, k, off = stack.pop()
        m = verts.size
        if k <= 1 or m <= 1:
            labels[verts] = off
            continue
        k0 = k // 2
        ip, ix = _k.induced_subgraph(graph.indptr, graph.indices, verts, local)
        ncomp, lab = _k.component_labels(ip, ix)
        key = np.zeros(m, dtype=np.float64)
        comp_sizes = np.bincount(lab, minlength=ncomp)
        # vertices grouped by component (a stable sort keeps each group increasing); only components
        # of three or more vertices need a vector (smaller ones keep key 0: a diagonal matrix of 10⁶
        # rows is 10⁶ components, handled here in bulk)
        by_comp = np.argsort(lab, kind="stable")
        bounds = np.searchsorted(lab[by_comp], np.arange(ncomp + 1))
        for c in np.flatnonzero(comp_sizes >= 3):
            idx = by_comp[bounds[c]:bounds[c + 1]] if ncomp > 1 else np.arange(m)
            if ncomp > 1:
                sip, six = _k.induced_subgraph(ip, ix, idx, np.full(m, -1, dtype=np.int64))
            else:
                sip, six = ip, ix
            g = Graph(n=idx.size, indptr=sip, indices=six)
            try:
                v = fiedler_vector(g, seed=node_seed(seed, count + int(c))).vector
            except Exception:
                v = _kt.bfs_levels(sip, six, 0).astype(np.float64)
            r = np.argsort(np.argsort(v, kind="stable"), kind="stable")
            key[idx] = r / max(idx.size, 1)
        count += int(ncomp)
        # components one after another (largest first), each along its Fiedler vector
        comp_rank = np.empty(ncomp, dtype=np.int64)
        comp_rank[np.lexsort((np.arange(ncomp), -comp_sizes))] = np.arange(ncomp)
        order = np.lexsort((key, comp_rank[lab]))
        cut = int(round(m * k0 / k))
        cut = min(max(cut, 1), m - 1)
        left = np.sort(verts[order[:cut]])
        right = np.sort(verts[order[cut:]])
        stack.append((right, k - k0, off + k0))
        stack.append((left, k0, off))
    ordered, used = order_blocks(graph, labels, None, method="mindegree" if within == "auto" else within, seed=seed)
    rows = np.repeat(np.arange(n, dtype=np.int64), np.diff(graph.indptr))
    cut_edges = int(np.count_nonzero(labels[rows] != labels[graph.indices]) // 2)
    info = {"labels": labels, "part_sizes": np.bincount(labels, minlength=parts).tolist(),
            "cut_edges": cut_edges, "within": used, "parts": parts}
    return ordered, info
