"""The multisector graph of a subtree: its separator and halo vertices once its leaves are
eliminated (Ashcraft & Liu 1998)."""

from __future__ import annotations

import numpy as np
import scipy.sparse as sp

from ...graph import Graph
from ...kernels import separators as _k

__all__ = ["multisector_graph", "MULTISECTOR_MAX_GROWTH"]

#: multisection is not tried where the cliques of the leaf boundaries would hold more than this many
#: times the entries of the subtree's graph (meshes: 3-8 times)
MULTISECTOR_MAX_GROWTH = 30


def multisector_graph(g: Graph, leaf_loc: np.ndarray, sep_loc: np.ndarray, halo_loc: np.ndarray) -> Graph:
    """Graph of the separator and halo vertices once the leaf vertices are eliminated.

    Vertices ``sep_loc`` then ``halo_loc`` (in that order) of ``g``; two of them are joined if they
    are adjacent in ``g`` or both touch one connected component of the leaf vertices (eliminating
    a connected set makes its boundary a clique). None if those cliques would hold more than
    ``MULTISECTOR_MAX_GROWTH`` times the entries of ``g``.
    """
    A = g.to_csr()
    t_loc = np.concatenate((sep_loc, halo_loc))
    ip, ix = _k.induced_subgraph(g.indptr, g.indices, leaf_loc, np.full(g.n, -1, dtype=np.int64))
    _, lab = _k.component_labels(ip, ix)
    comp = np.full(g.n, -1, dtype=np.int64)
    comp[leaf_loc] = lab
    At = A[t_loc]
    B = At.tocoo()
    keep = comp[B.col] >= 0
    nc = int(lab.max()) + 1 if lab.size else 0
    B = sp.csr_matrix((np.ones(int(keep.sum())), (B.row[keep], comp[B.col[keep]])), shape=(t_loc.size, nc))
    boundary = np.diff(B.tocsc().indptr).astype(np.float64)
    if float(np.sum(boundary ** 2)) > MULTISECTOR_MAX_GROWTH * max(g.indices.size, 1000):
        return None  # the cliques would be far denser than the graph (hubs of power-law graphs)
    R = (B @ B.T + At[:, t_loc]).tocsr()
    R.setdiag(0)
    R.eliminate_zeros()
    R.sort_indices()
    return Graph(n=t_loc.size, indptr=R.indptr.astype(np.int64), indices=R.indices.astype(np.int64),
                 weights=None, info={})
