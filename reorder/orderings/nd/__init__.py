"""Nested dissection with multilevel spectral vertex separators (``nd``, and ``nd-fast``).

``nd`` splits the graph by a vertex separator (:func:`reorder.separators.vertex_separator`), orders
the two sides first and the separator last, and repeats on the sides until they have at most
``leaf_size`` vertices (:mod:`.dissect`); the leaves are ordered by the halo minimum degree, which
sees the surrounding separators. Then, bottom-up, every small subtree keeps either its dissection
order, the halo minimum degree of its whole vertex set under one of several pivot rules, or the
multisection order (its leaves first, then all its separators together by minimum degree),
whichever has the smaller exact symbolic count (:mod:`.subtree`, the hybrid of Ashcraft & Liu [6]).
The result carries a :class:`~.tree.SeparatorTree` (``info["separator_tree"]`` as a JSON-able dict).

The rooms: :mod:`.presets` (the effort table), :mod:`.dissect` (the dissection loop),
:mod:`.subtree` (the bottom-up choice), :mod:`.multisector` (the graph left once a subtree's leaves
are eliminated), :mod:`.tree` (the separator tree type).

References
----------
.. [1] A. George, "Nested dissection of a regular finite element mesh", SIAM J. Numer. Anal. 10
       (1973) 345–363.
.. [2] R. J. Lipton, D. J. Rose and R. E. Tarjan, "Generalized nested dissection", SIAM J. Numer.
       Anal. 16 (1979) 346–358.
.. [3] A. Pothen, H. D. Simon and K.-P. Liou, "Partitioning sparse matrices with eigenvectors of
       graphs", SIAM J. Matrix Anal. Appl. 11 (1990) 430–452.
.. [4] S. T. Barnard and H. D. Simon, "Fast multilevel implementation of recursive spectral
       bisection", Concurrency: Pract. Exper. 6 (1994) 101–117.
.. [5] B. Hendrickson and E. Rothberg, "Improving the run time and quality of nested dissection
       ordering", SIAM J. Sci. Comput. 20 (1998) 468–489.
.. [6] C. Ashcraft and J. W. H. Liu, "Robust ordering of sparse matrices using multisection", SIAM
       J. Matrix Anal. Appl. 19 (1998) 816–832.
"""

from __future__ import annotations

import numpy as np

from ...analysis import symbolic_factor
from ...graph import Graph
from ...threads import single_blas_thread
from .. import alias, register
from ..records import EFFORTS, NdSettings
from . import presets
from .dissect import dissect
from ..peel import is_forest, peel, wrap_tree
from .tree import SeparatorTree

#: rows of degree above ``DENSE · √n`` are set aside and ordered last (their elimination then
#: costs nothing a good order avoids; inside the graph they join every subproblem)
DENSE = 10.0

__all__ = ["NdSettings", "EFFORTS", "SeparatorTree", "nested_dissection", "nested_dissection_fast"]

@register("nd", NdSettings, summary="nested dissection: multilevel spectral vertex separators, minimum-degree leaves",
          split_components=False, rank=40)
def nested_dissection(graph: Graph, s: NdSettings, seed: int = 0):
    """Nested dissection ordering with multilevel spectral vertex separators.

    Parameters
    ----------
    graph : Graph
        Any graph; components are handled here.
    s : NdSettings
        The settings (each described by its help there); those left at None come from the effort
        table :data:`reorder.orderings.nd.presets.TABLE`. Called with keywords,
        ``nested_dissection(graph, seed=0, effort="fast", ...)``.
    seed : int
        Seeds the coarsening and eigensolvers (same seed, same permutation; restarts and trials
        derive theirs as :mod:`reorder.orderings.seeds` says).

    Returns
    -------
    perm : ndarray of int64
    info : dict
        ``separator_tree`` (:meth:`SeparatorTree.to_json` layout), ``top_separator`` (size of the
        first separator the dissection found), ``leaves``, ``separator_vertices``, ``leaf_order``
        (method used for the leaves), ``subtrees_tried``, ``subtrees_to_mindegree`` (subtrees
        replaced by minimum degree), ``subtrees_multisected`` (subtrees won by multisection; some
        may later be absorbed by a parent's choice), ``leaves_rescored`` (leaves reordered by
        another pivot rule), ``restarts`` (with more than one: ``[factor_ops, nnz_factor]`` of each);
        where isolated vertices or dense rows (degree above ``DENSE · √n``) were set aside,
        ``isolated`` and ``dense_rows`` (they are ordered first and last; the tree's root is then a
        ``"components"`` node with the dense rows as its separator); ``forest`` when what is left
        has no cycle (then minimum degree orders it without fill and the tree is one leaf).

    References
    ----------
    George (1973); Lipton, Rose & Tarjan (1979); Pothen, Simon & Liou (1990); Barnard & Simon (1994);
    Hendrickson & Rothberg (1998); Ashcraft & Liu (1998) for multisection and the choice between
    dissection and minimum degree by exact counts.
    """
    peeled = peel(graph, DENSE)
    core = peeled.graph
    if is_forest(core):
        # no cycle: minimum degree eliminates leaves first and makes no fill; nothing to dissect
        from .. import order

        perm = order(core, "mindegree", score="degree").perm if core.n > 1 else np.arange(core.n, dtype=np.int64)
        leaf = {"id": 0, "parent": -1, "depth": 0, "kind": "leaf", "children": [], "start": 0, "stop": int(core.n),
                "separator": 0, "sizes": []}
        tree = SeparatorTree(n=core.n, nodes=[leaf] if core.n else [])
        info = {"separator_tree": tree.to_json(), "top_separator": 0, "leaves": 1, "separator_vertices": 0,
                "leaf_order": "mindegree", "forest": True}
    else:
        perm, info = _restarts(core, s, seed)
    if peeled.trivial:
        return perm, info
    info["separator_tree"] = wrap_tree(info.get("separator_tree"), peeled, graph.n)
    info["isolated"] = int(peeled.isolated.size)
    info["dense_rows"] = int(peeled.dense.size)
    return peeled.assemble(perm), info


def _restarts(graph: Graph, s: NdSettings, seed: int):
    """The dissection of a graph without isolated vertices or dense rows, best of the restarts."""
    from ..seeds import restart_seed

    r = presets.resolve(s, graph.n)
    best = None
    tried = []
    with single_blas_thread():
        for k in range(max(1, r.restarts)):
            perm, info = dissect(graph, s, r, seed=restart_seed(seed, k))
            if r.restarts <= 1:
                return perm, info
            sym = symbolic_factor(graph, perm)
            key = (sym.factor_ops, sym.nnz_factor) if s.restart_key == "ops" else (sym.nnz_factor, sym.factor_ops)
            tried.append([int(key[0]), int(key[1])] if s.restart_key == "ops" else [int(key[1]), int(key[0])])
            if best is None or key < best[0]:
                best = (key, perm, info)
    _, perm, info = best
    info["restarts"] = tried  # [factor_ops, nnz_factor] of each restart
    return perm, info


alias("nd-fast", "nd", summary="nested dissection with cheaper settings (nd --effort fast), for a single "
      "factorization", rank=41, effort="fast")


def nested_dissection_fast(graph: Graph, *, seed: int = 0, **options):
    """:func:`nested_dissection` with ``effort="fast"`` (the ``nd-fast`` alias of the registry)."""
    return nested_dissection(graph, seed=seed, effort="fast", **options)
