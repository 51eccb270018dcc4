"""Degenerate parts of a graph handled in bulk: isolated vertices, tiny components and dense rows.

A diagonal matrix of 10⁶ rows is 10⁶ components; a constraint row couples one vertex to all others.
Handing such graphs vertex by vertex (or component by component) to the Python level, or asking a
spectral solver to bisect a star, costs minutes. The helpers here take those parts out with NumPy and
SciPy's compiled routines, so that the orderings see only the connected, sparse core:

* :func:`order_by_components` runs an ordering once per component of at least three vertices and
  places the components of one or two vertices (isolated vertices included) without any call;
* :func:`peel` splits off isolated vertices and dense rows (degree above ``dense · √n``), which
  nested dissection and recursive bisection then place first and last.
"""

from __future__ import annotations

import math

import numpy as np
from scipy.sparse.csgraph import connected_components

from ..graph import Graph, subgraph

__all__ = ["order_by_components", "peel", "dense_rows", "Peeled", "wrap_tree", "is_forest"]


def _labels(graph: Graph) -> tuple[int, np.ndarray]:
    if graph.n == 0:
        return 0, np.zeros(0, dtype=np.int64)
    ncomp, lab = connected_components(graph.to_csr(), directed=False)
    return int(ncomp), lab.astype(np.int64)


def order_by_components(graph: Graph, call, *, min_size: int = 3):
    """Order every connected component and lay them out one after another, in the order of their
    smallest vertex; components below ``min_size`` vertices keep their vertices in increasing order
    without a call (a connected graph of two or more vertices is always handed to ``call``).

    Parameters
    ----------
    graph : Graph
    call : callable
        ``call(subgraph) -> (perm, info)`` for one connected component (a permutation of its local
        vertex numbers).
    min_size : int
        Smallest component handed to ``call``.

    Returns
    -------
    perm : ndarray of int64
    info : dict
        ``{"components": count}`` when there are several, with the single component's info merged
        in or ``component_info`` (one dict per component ordered by ``call``).
    """
    n = graph.n
    ncomp, lab = _labels(graph)
    if ncomp <= 1:
        if n <= 1:
            return np.arange(n, dtype=np.int64), {}
        return call(graph)
    # vertices grouped by component, each group in increasing vertex order (a stable sort); the
    # groups sorted by their smallest vertex
    first = np.full(ncomp, n, dtype=np.int64)
    np.minimum.at(first, lab, np.arange(n, dtype=np.int64))
    rank = np.empty(ncomp, dtype=np.int64)
    rank[np.argsort(first, kind="stable")] = np.arange(ncomp)
    key = rank[lab]
    perm = np.argsort(key, kind="stable").astype(np.int64)
    bounds = np.searchsorted(key[perm], np.arange(ncomp + 1))
    sizes = np.diff(bounds)
    infos = []
    for c in np.flatnonzero(sizes >= min_size):
        a, b = bounds[c], bounds[c + 1]
        verts = perm[a:b]
        p, inf = call(subgraph(graph, verts))
        perm[a:b] = verts[np.asarray(p, dtype=np.int64)]
        infos.append(inf)
    info = {"components": ncomp}
    if len(infos) == 1:
        info.update(infos[0])
    elif infos:
        info["component_info"] = infos
    return perm, info


class Peeled:
    """The parts of a graph after :func:`peel`.

    Attributes
    ----------
    isolated : ndarray of int64
        Vertices without neighbours, increasing.
    dense : ndarray of int64
        Dense rows, lightest first (ties by vertex number).
    core : ndarray of int64
        The other vertices, increasing.
    graph : Graph
        The graph induced by ``core`` (the input graph itself when nothing was peeled).
    """

    def __init__(self, isolated, dense, core, graph):
        self.isolated, self.dense, self.core, self.graph = isolated, dense, core, graph

    @property
    def trivial(self) -> bool:
        """True when nothing was peeled."""
        return self.isolated.size == 0 and self.dense.size == 0

    def assemble(self, core_perm) -> np.ndarray:
        """The whole order: isolated vertices, the core in ``core_perm`` (local numbers), dense rows."""
        core_perm = np.asarray(core_perm, dtype=np.int64)
        return np.concatenate((self.isolated, self.core[core_perm], self.dense)).astype(np.int64)


def dense_rows(graph: Graph, dense: float = 10.0) -> np.ndarray:
    """Vertices of degree above ``dense · √n``, lightest first (ties by vertex number); none when
    ``dense <= 0``."""
    n = graph.n
    if dense is None or dense <= 0 or n == 0:
        return np.zeros(0, dtype=np.int64)
    deg = np.diff(graph.indptr)
    v = np.flatnonzero(deg > dense * math.sqrt(n)).astype(np.int64)
    return v[np.argsort(deg[v], kind="stable")]


def peel(graph: Graph, dense: float = 10.0) -> Peeled:
    """Split ``graph`` into isolated vertices, dense rows and the rest.

    A dense row is a vertex of degree above ``dense · √n`` (``dense <= 0``: none), the usual test of
    minimum-degree codes for rows to postpone (e.g. Amestoy, Davis & Duff 1996). Eliminating such
    rows last costs nothing a good order avoids, and keeping them out spares separators and
    eigenvectors the hub that joins everything.

    Parameters
    ----------
    graph : Graph
    dense : float

    Returns
    -------
    Peeled

    References
    ----------
    P. R. Amestoy, T. A. Davis and I. S. Duff, "An approximate minimum degree ordering algorithm",
    SIAM J. Matrix Anal. Appl. 17 (1996) 886–905.
    """
    n = graph.n
    deg = np.diff(graph.indptr)
    if dense is not None and dense > 0 and n > 0:
        heavy = deg > dense * math.sqrt(n)
    else:
        heavy = np.zeros(n, dtype=bool)
    dense_v = np.flatnonzero(heavy).astype(np.int64)
    dense_v = dense_v[np.argsort(deg[dense_v], kind="stable")]
    if dense_v.size:
        # neighbours left once the dense rows are out (the leaves of a star become isolated)
        rows = np.repeat(np.arange(n, dtype=np.int64), deg)
        deg = deg - np.bincount(rows[heavy[graph.indices]], minlength=n)
    lone = (deg == 0) & ~heavy
    isolated = np.flatnonzero(lone).astype(np.int64)
    if isolated.size == 0 and dense_v.size == 0:
        return Peeled(isolated, dense_v, np.arange(n, dtype=np.int64), graph)
    keep = ~(heavy | lone)
    core = np.flatnonzero(keep).astype(np.int64)
    return Peeled(isolated, dense_v, core, subgraph(graph, core))


def wrap_tree(tree: dict | None, peeled: Peeled, n: int) -> dict | None:
    """The separator tree of the core (JSON layout of nested dissection's tree) extended to the whole
    graph: a ``"components"`` root over a leaf of the isolated vertices and the core's tree, with the
    dense rows as its separator (placed last; removing them leaves the isolated vertices and the core
    unconnected). Returns ``tree`` itself when nothing was peeled."""
    if tree is None or peeled.trivial:
        return tree
    n_iso, n_core, n_dense = peeled.isolated.size, peeled.core.size, peeled.dense.size
    nodes = [{"id": 0, "parent": -1, "depth": 0, "kind": "components", "children": [], "start": 0, "stop": int(n),
              "separator": int(n_dense), "sizes": []}]
    if n_iso:
        nodes[0]["children"].append(1)
        nodes[0]["sizes"].append(int(n_iso))
        nodes.append({"id": 1, "parent": 0, "depth": 1, "kind": "leaf", "children": [], "start": 0,
                      "stop": int(n_iso), "separator": 0, "sizes": []})
    core_nodes = tree.get("nodes") or []
    if n_core and core_nodes:
        off = len(nodes)
        root = int(tree.get("root", 0))
        nodes[0]["children"].append(root + off)
        nodes[0]["sizes"].append(int(n_core))
        for nd in core_nodes:
            nodes.append(dict(nd, id=nd["id"] + off, parent=(0 if nd["id"] == root else nd["parent"] + off),
                              depth=nd["depth"] + 1, start=nd["start"] + n_iso, stop=nd["stop"] + n_iso,
                              children=[c + off for c in nd["children"]]))
    elif n_core:  # a core without a tree of its own: one leaf
        nodes[0]["children"].append(len(nodes))
        nodes[0]["sizes"].append(int(n_core))
        nodes.append({"id": len(nodes), "parent": 0, "depth": 1, "kind": "leaf", "children": [],
                      "start": int(n_iso), "stop": int(n_iso + n_core), "separator": 0, "sizes": []})
    return dict(tree, n=int(n), root=0, nodes=nodes)


def is_forest(graph: Graph) -> bool:
    """True when ``graph`` has no cycle (edges = vertices − components). A forest has an elimination
    order without fill (leaves first; minimum degree finds one), so dissecting it is wasted work
    (textbook fact, e.g. George & Liu 1981, chapter 4)."""
    if graph.n == 0:
        return True
    ncomp, _ = _labels(graph)
    return int(graph.indices.size) // 2 == graph.n - ncomp
