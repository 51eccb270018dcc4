"""Nested dissection with multilevel spectral vertex separators, recursive spectral bisection, and
the separator tree that nested dissection exports.

``nd`` splits the graph by a vertex separator (:func:`reorder.separators.vertex_separator`), orders
the two sides first and the separator last, and repeats on the sides with an explicit stack until
they have at most ``leaf_size`` vertices; the leaves are ordered by minimum degree (the halo variant,
which sees the surrounding separators, when available). Then, bottom-up, every small subtree keeps
either its dissection order or the halo minimum degree of its whole vertex set under one of several
pivot rules, whichever has the smaller exact symbolic count with the surrounding separators
eliminated last (the hybrid of Ashcraft & Liu [6]; pruned subtrees become leaves), or the
multisection order of [6] (the subtree's leaves first, then all its separators together by minimum
degree). ``rsb`` cuts the graph into ``parts`` blocks by recursive spectral bisection and orders
the blocks one after another.

Separator tree layout (``info["separator_tree"]`` of ``nd``, JSON-able)::

    {"format": "reorder-separator-tree", "version": 1, "n": n, "root": 0,
     "leaf_size": ..., "balance": ...,
     "nodes": [{"id": i, "parent": p (-1 for the root), "depth": d, "kind": k,
                "children": [ids], "start": s, "stop": t, "separator": m, "sizes": [..]}, ...]}

Node ``i`` owns positions ``start:stop`` (half-open) of the new order, i.e. the old vertices
``perm[start:stop]``. ``kind`` is ``"separator"`` (two children and a separator of ``separator``
vertices placed last, at ``stop - separator:stop``), ``"components"`` (no separator; the children are
unions of connected components, no edge joins two of them) or ``"leaf"`` (ordered by minimum degree;
no children). Children's ranges are consecutive and tile ``start:stop - separator`` in the order
listed; ``sizes`` are the children's sizes. Node ids are assigned in depth-first preorder. A
separator node with ``"multisector": true`` holds the multisector of a subtree won by multisection:
its separator is all the separator vertices of that subtree (removing them disconnects its leaves
from each other), and its two children are its leaves in two consecutive groups (a leaf, or a
``"components"`` node over leaves), so its ``sizes`` need not meet the balance window.

References
----------
.. [1] A. George, "Nested dissection of a regular finite element mesh", SIAM J. Numer. Anal. 10
       (1973) 345–363.
.. [2] R. J. Lipton, D. J. Rose and R. E. Tarjan, "Generalized nested dissection", SIAM J. Numer.
       Anal. 16 (1979) 346–358.
.. [3] A. Pothen, H. D. Simon and K.-P. Liou, "Partitioning sparse matrices with eigenvectors of
       graphs", SIAM J. Matrix Anal. Appl. 11 (1990) 430–452.
.. [4] H. D. Simon, "Partitioning of unstructured problems for parallel processing", Computing
       Systems in Engineering 2 (1991) 135–148 (recursive spectral bisection).
.. [5] B. Hendrickson and E. Rothberg, "Improving the run time and quality of nested dissection
       ordering", SIAM J. Sci. Comput. 20 (1998) 468–489.
.. [6] C. Ashcraft and J. W. H. Liu, "Robust ordering of sparse matrices using multisection", SIAM
       J. Matrix Anal. Appl. 19 (1998) 816–832.
"""

from __future__ import annotations

import numpy as np
import scipy.sparse as sp
from scipy.sparse.csgraph import reverse_cuthill_mckee

from ..analysis import factor_column_counts, symbolic_factor
from ..graph import Graph
from ..kernels import separators as _k
from ..kernels import traversal as _kt
from ..separators import vertex_separator
from . import register

__all__ = ["EFFORTS", "nested_dissection", "nested_dissection_fast", "recursive_spectral_bisection", "tree_summary",
           "validate_tree", "order_blocks"]


#: the subtree choice skips exact-degree pivot rules where the best order so far has more than this
#: many factor entries per column (they cost seconds on dense factors, e.g. power-law graphs)
EXACT_MAX_FILL = 100

#: multisection is not tried where the cliques of the leaf boundaries would hold more than this many
#: times the entries of the subtree's graph (meshes: 3-8 times)
MULTISECTOR_MAX_GROWTH = 30

#: presets of :func:`nested_dissection` (``effort``), cheapest first
EFFORTS = ("fast", "normal", "best")


def _seed(seed: int, nid: int) -> int:
    return int((int(seed) * 1_000_003 + 7919 * int(nid)) % (2**31 - 1))


def _mindegree_funcs():
    """The minimum-degree functions of :mod:`reorder.orderings.mindegree`, if that module exists."""
    try:
        from . import mindegree as md  # noqa: PLC0415
    except ImportError:
        return None, None
    return getattr(md, "minimum_degree", None), getattr(md, "halo_minimum_degree", None)


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
        "auto" uses the halo minimum degree if available, then minimum degree, then RCM (SciPy).

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
    md, halo = _mindegree_funcs() if method in ("auto", "halo", "mindegree") else (None, None)
    rank = None
    used = "rcm"
    if method in ("auto", "halo") and halo is not None:
        # separators (unmasked) stay in as halo; blocks are disconnected once the halo is not eliminated
        elim = np.asarray(halo(graph, mask, seed=seed), dtype=np.int64)
        rank = np.empty(n, dtype=np.int64)
        rank[elim] = np.arange(elim.size)
        used = "halo-mindegree"
    elif method in ("auto", "halo", "mindegree") and md is not None:
        sub = _edge_filtered(graph, mask, block)
        p, _ = md(sub, seed=seed)
        rank = np.empty(n, dtype=np.int64)
        rank[np.asarray(p, dtype=np.int64)] = np.arange(n)
        used = "mindegree"
    if rank is None:
        sub = _edge_filtered(graph, mask, block)
        p = np.asarray(reverse_cuthill_mckee(sub.to_csr(), symmetric_mode=True), dtype=np.int64)
        rank = np.empty(n, dtype=np.int64)
        rank[p] = np.arange(n)
    o = np.lexsort((rank[verts], block[verts]))
    return verts[o], used


def _pack_components(labels: np.ndarray, ncomp: int, leaf_size: int) -> list[np.ndarray]:
    """Group local vertex ids by component: components above ``leaf_size`` alone, small ones packed
    consecutively into groups of at most ``leaf_size`` vertices."""
    order = np.argsort(labels, kind="stable")
    bounds = np.searchsorted(labels[order], np.arange(ncomp + 1))
    sizes = np.diff(bounds)
    groups, cur, cur_size = [], [], 0
    for c in range(ncomp):
        seg = order[bounds[c]:bounds[c + 1]]
        if sizes[c] > leaf_size:
            groups.append(np.sort(seg))
            continue
        if cur_size + sizes[c] > leaf_size and cur:
            groups.append(np.sort(np.concatenate(cur)))
            cur, cur_size = [], 0
        cur.append(seg)
        cur_size += int(sizes[c])
    if cur:
        groups.append(np.sort(np.concatenate(cur)))
    return groups


@register("nd", summary="nested dissection: multilevel spectral vertex separators, minimum-degree leaves",
          split_components=False, rank=40)
def nested_dissection(graph: Graph, *, seed: int = 0, leaf_size: int | None = None, balance: float = 0.3,
                      multilevel: bool = True, refine: bool = True, split: str = "window",
                      leaf_order: str = "auto", coarse_size: int = 100, eigenvectors: int = 2,
                      top_eigenvectors: int | None = None,
                      spectral_min: int | None = None, trials: int | None = None, trials_min: int = 0,
                      ratio_key: bool = True, top_trials: int | None = None, top_fraction: float = 0.1,
                      keep: int | None = None, smooth: int | None = None, hybrid_max: int | None = None,
                      hybrid_scores=None, hybrid_key: str = "nnz", hybrid_wide: int | None = None,
                      hybrid_wide_scores=("degree", "fill"), hybrid_climb: int | None = None,
                      hybrid_gate: float | None = 0.25,
                      multisection: bool | None = None, restarts: int | None = None, restart_key: str = "nnz",
                      effort: str = "normal", **options):
    """Nested dissection ordering with multilevel spectral vertex separators.

    Parameters
    ----------
    graph : Graph
        Any graph; components are handled here.
    seed : int
        Seeds the coarsening and eigensolvers (same seed, same permutation).
    effort : {"fast", "normal", "best"}
        Presets for the defaults below. ``"normal"`` polishes graphs up to 100 000 vertices fully
        (several coarse candidates, smoothed eigenvectors, every pivot rule in the subtree choice)
        and uses cheaper settings above; ``"fast"`` uses the cheaper settings at every size (about
        5-7x faster on 10⁴-vertex meshes, nnz(L) about 6% and operations about 15% higher in
        geometric mean over the bundled meshes; the choice when one factorization follows);
        ``"best"`` polishes fully at every size and keeps the best of three restarts. Explicit
        options below override the preset.
    leaf_size : int, optional
        Subgraphs with at most this many vertices are not split further. Default 50, 200
        above 100 000 vertices and 400 above 300 000 (time: on a 10⁶ grid 400 saved a fifth of
        the time against 200 for 0.3% more fill, measured).
    balance : float
        Balance window of each bisection: no side lighter than about ``balance`` of the subgraph.
    multilevel, refine : bool
        Heavy-edge coarsening with per-level refinement, and FM vertex refinement (turning both off
        gives the plain spectral method: Fiedler vector of each subgraph, cover of the cut).
    split : {"window", "median"}
        Split of the spectral vector (best cut in the balance window, or the median).
    leaf_order : {"auto", "halo", "mindegree", "rcm"}
        Ordering of the leaves (see :func:`order_blocks`).
    coarse_size, eigenvectors, spectral_min : int
        Passed to :func:`reorder.separators.vertex_separator` (``spectral_min`` default 500, or
        2000 above 100 000 vertices: the eigensolver call per small subproblem costs time).
    top_eigenvectors : int, optional
        Eigenvectors for the top subproblems (see ``top_fraction``). Default 3 (2 with the cheaper
        settings): with three, the 10 diagonal directions of their span are split as well, each
        smoothed up to the finest level where the four least covers are refined (more cut
        directions for 3-D meshes, whose coarsest-graph eigenvectors only roughly follow the
        fine graph's): on a 27-point 22³ grid the top separator became a plane (484-506 vertices
        instead of 507-590) and operations fell by 12-15%; over the bundled meshes, seeds 0-2,
        geometric means nnz(L) 0.2% and operations 0.9% lower for about 15% more time (measured).
    trials : int, optional
        Separators computed per subproblem (different seeds; the smallest is kept, or the best
        separator-versus-balance ratio with ``ratio_key``). Default: 2 for graphs up to 300 000
        vertices, 1 above and with ``effort="fast"`` (time: over the bundled meshes one trial
        cost 0.5% more fill for 12% less time).
    trials_min : int
        Subproblems smaller than this use one trial.
    top_trials, top_fraction : int, float
        Subproblems with at least ``top_fraction · n`` vertices (the top separators, which decide
        most of the operations) get ``top_trials`` trials. Default: 6; 2 with the cheaper settings
        from 30 000 vertices (those top subproblems carry three coarse candidates up instead of one:
        one coarsening serves three candidates, and on larger graphs the random coarsenings differ
        less. 7-point 40³ grid, ``effort="fast"``, seeds 0-3: 1.28 s instead of 1.66 s for the same
        nnz(L) and 2% fewer operations; 48³: 2.4 s instead of 3.0 s, 2% more operations; on the
        10⁴-vertex meshes it cost 4% operations, so they keep six); 1 above 300 000 vertices.
    keep, smooth : int, optional
        Passed to :func:`reorder.separators.vertex_separator` (coarse candidates carried to the
        finest level; smoothing steps per level of the interpolated eigenvectors). Default 3 and 4;
        1 and 0 above 100 000 vertices and with ``effort="fast"`` (time: smoothing five vectors on
        the top levels of a 10⁶ grid costs 4 s). An explicit ``keep`` applies to the top
        subproblems too.

    hybrid_max : int, optional
        Subtrees (and leaves) of at most this many vertices compete, bottom-up, with the halo
        minimum degree of their whole vertex set; the order of least exact cost is kept (see
        :func:`_subtree_choice`). Default: the whole graph, 1000 above 100 000 vertices
        and 2000 above 300 000 (time); 0 turns the choice off.
    hybrid_scores : sequence of str, optional
        Pivot rules of the halo minimum degree tried there, ``"rule"`` or ``"rule/tie_seed"``.
        Default ``("degree", "mean_fill", "fill", "exact", "degree/1")``, or ``("degree",)``
        above 100 000 vertices (then leaves keep the global leaf pass).
    hybrid_wide, hybrid_wide_scores : int, sequence of str
        Subtrees of more than ``hybrid_wide`` vertices try only ``hybrid_wide_scores`` (default
        ``("degree", "fill")``); default ``hybrid_wide``: the whole graph up to 30 000 vertices,
        else 2000 (each rule costs one minimum degree and one symbolic count per tree level:
        62 500-vertex grid 16 s with all rules, 12 s so).
    hybrid_key : {"nnz", "ops"}
        Cost of a subtree's columns: Σ c_j or Σ c_j².
    hybrid_gate : float, optional
        Where the first pivot rule's order costs more than ``1 + hybrid_gate`` times the best
        order so far, the other rules are not tried (they rarely differ from it by that much; None
        tries every rule). With 0.25, on the bundled meshes and 3-D grids to 40³, the same nnz(L)
        and operations for 8% less time (40³: 10.7 s instead of 12.9 s); 0.1 cost up to 1.6% of
        operations on single meshes (measured).
    hybrid_climb : int, optional
        Subtrees of more than ``hybrid_max`` but at most ``hybrid_climb`` vertices still compete
        when minimum degree won one of their separator-node children (the choice climbs while
        minimum degree keeps winning, which it does on 2-D meshes and not on 3-D ones). Default
        100 000, and 0 above 300 000 vertices (time: on the 10⁶ grid climbing doubled the ordering
        time, 11 s to 22 s, for 3% less fill). Measured with ``effort="fast"``: 9-point 300² grid
        nnz(L) / operations 1.029× / 0.985× SciPy's minimum degree → 0.978× / 0.896× for 1.6 s
        → 2.4 s; 9-point 500² 1.040× / 0.959× → 0.958× / 0.825× for 4.1 s → 7.3 s; 5-point 300²
        0.875× / 0.730× → 0.846× / 0.697×; on 3-D grids it costs nothing and changes nothing.
    multisection : bool, optional
        In the subtree choice, also try for each separator node the multisection order of its
        subtree (leaves first, then all its separators together by minimum degree of the graph
        left after the leaves; Ashcraft & Liu 1998). A node won so has ``"multisector": true`` in
        the tree, its whole multisector as separator and two groups of leaves as children (the
        tree is flatter there; turn this off where every separator node must be one bisection
        separator). Default on with ``"best"`` and with ``"normal"`` up to 30 000 vertices.
        Measured over the bundled meshes (n ≥ 10⁴, normal effort): geometric means of nnz(L)
        1.2% and operations 3% lower, up to 14% fewer operations on the heat sink, for about 25%
        more ordering time; with the cheaper settings under 1% gained for 10-25% more time (10⁶
        grid: 44 s instead of 30 s); on a 40³ grid nothing gained for 44 s instead of 31 s.
    restarts, restart_key : int, str
        Whole runs with different seeds (``seed + 1009 r``), keeping the least nnz(L) (or
        operations with ``restart_key="ops"``); default 1, 3 with ``effort="best"``. Three restarts
        lowered the suite's geometric means by about 0.5% (nnz) and 1% (operations) for three times
        the time.

    Returns
    -------
    perm : ndarray of int64
    info : dict
        ``separator_tree`` (layout in the module docstring), ``top_separator`` (size of the first
        separator the dissection found), ``leaves``, ``separator_vertices``, ``leaf_order``
        (method used for the leaves), ``subtrees_tried``, ``subtrees_to_mindegree`` (subtrees
        replaced by minimum degree), ``subtrees_multisected`` (subtrees won by multisection; some
        may later be absorbed by a parent's choice), ``leaves_rescored`` (leaves reordered by
        another pivot rule), ``restarts`` (with more than one).

    References
    ----------
    George (1973); Lipton, Rose & Tarjan (1979); Pothen, Simon & Liou (1990); Hendrickson & Rothberg
    (1998); S. T. Barnard and H. D. Simon, Concurrency: Pract. Exper. 6 (1994) 101–117; Ashcraft &
    Liu (1998) for the choice between dissection and minimum degree by exact counts.
    """
    if effort not in EFFORTS:
        raise ValueError(f"effort must be one of {', '.join(EFFORTS)}, not {effort!r}")
    # "fast" uses the settings of large graphs at every size, "best" those of small graphs
    big = effort == "fast" or (effort == "normal" and graph.n > 100_000)
    huge = graph.n > 300_000 and effort != "best"
    if trials is None:
        trials = 1 if huge or effort == "fast" else 2
    # cheaper settings on a mid-size graph: fewer top trials, each carrying three coarse candidates
    mid = big and not huge and graph.n >= 30_000
    if top_trials is None:
        top_trials = 1 if huge else 2 if mid else 6
    if spectral_min is None:
        spectral_min = 2000 if big else 500
    if leaf_size is None:
        leaf_size = 400 if huge else 200 if big else 50
    top_keep = (3 if mid or not big else 1) if keep is None else int(keep)
    top_smooth = (0 if big else 4) if smooth is None else int(smooth)
    if keep is None:
        keep = 1 if big else 3
    if smooth is None:
        smooth = 0 if big else 4
    if hybrid_max is None:
        hybrid_max = 2000 if huge else 1000 if big else graph.n
    if hybrid_wide is None:
        hybrid_wide = graph.n if graph.n <= 30_000 or effort == "best" else 2000
    if hybrid_scores is None:
        hybrid_scores = ("degree",) if big else ("degree", "mean_fill", "fill", "exact", "degree/1")
    if restarts is None:
        restarts = 3 if effort == "best" else 1
    if top_eigenvectors is None:
        top_eigenvectors = eigenvectors if big else max(int(eigenvectors), 3)
    if hybrid_climb is None:
        hybrid_climb = 0 if huge else 100_000
    if multisection is None:
        multisection = effort == "best" or (effort == "normal" and graph.n <= 30_000)
    best = None
    tried = []
    with _single_thread_blas():
        for r in range(max(1, int(restarts))):
            perm, info = _nested_dissection(
                graph, seed=seed + 1009 * r, leaf_size=leaf_size, balance=balance, multilevel=multilevel,
                refine=refine, split=split, leaf_order=leaf_order, coarse_size=coarse_size,
                eigenvectors=(int(eigenvectors), int(top_eigenvectors)), spectral_min=spectral_min, trials=trials,
                trials_min=trials_min,
                ratio_key=ratio_key, top_trials=top_trials, top_fraction=top_fraction,
                keep=(int(keep), top_keep), smooth=(int(smooth), top_smooth),
                hybrid_max=hybrid_max, hybrid_scores=hybrid_scores, hybrid_key=hybrid_key,
                hybrid_wide=hybrid_wide, hybrid_wide_scores=hybrid_wide_scores, multisection=multisection,
                hybrid_climb=int(hybrid_climb), hybrid_gate=hybrid_gate)
            if restarts <= 1:
                return perm, info
            sym = symbolic_factor(graph, perm)
            key = (sym.factor_ops, sym.nnz_factor) if restart_key == "ops" else (sym.nnz_factor, sym.factor_ops)
            tried.append([int(key[0]), int(key[1])] if restart_key == "ops" else [int(key[1]), int(key[0])])
            if best is None or key < best[0]:
                best = (key, perm, info)
    _, perm, info = best
    info["restarts"] = tried  # [factor_ops, nnz_factor] of each restart
    return perm, info


@register("nd-fast", summary="nested dissection with cheaper settings (nd --effort fast), for a single factorization",
          split_components=False, rank=41)
def nested_dissection_fast(graph: Graph, *, seed: int = 0, **options):
    """:func:`nested_dissection` with ``effort="fast"`` (the settings of large graphs at every size).

    A method of its own so that ``compare`` and ``demo`` show the trade-off between ordering time
    and fill next to ``nd``. Other options are passed on; ``effort`` is fixed.
    """
    options.pop("effort", None)
    return nested_dissection(graph, seed=seed, effort="fast", **options)


def _single_thread_blas():
    """Limit BLAS to one thread while ordering: the many tiny dense eigenproblems on coarsest graphs
    run 10-30x slower with a contended BLAS thread pool (measured on 2 shared cores)."""
    try:
        from threadpoolctl import threadpool_limits  # noqa: PLC0415
    except ImportError:  # optional dependency
        import contextlib  # noqa: PLC0415

        return contextlib.nullcontext()
    return threadpool_limits(1, user_api="blas")


def _nested_dissection(graph, *, seed, leaf_size, balance, multilevel, refine, split, leaf_order, coarse_size,
                       eigenvectors, spectral_min, trials, trials_min, ratio_key, top_trials,
                       top_fraction, keep=(1, 1), smooth=(0, 0), hybrid_max=0, hybrid_scores=("degree",),
                       hybrid_key="nnz", hybrid_wide=None, hybrid_wide_scores=("degree",), multisection=True,
                       hybrid_climb=0, hybrid_gate=None):
    n = graph.n
    leaf_size = max(int(leaf_size), 2)
    perm = np.full(n, -1, dtype=np.int64)
    leaf_key = np.full(n, -1, dtype=np.int64)  # start position of the leaf holding each vertex
    nodes: list[dict] = []
    local = np.full(n, -1, dtype=np.int64)
    # task: (vertices (increasing old ids), start, parent, known_connected)
    stack = [(np.arange(n, dtype=np.int64), 0, -1, False)]
    n_sep_vertices = 0

    def new_node(parent, start, stop, kind):
        nid = len(nodes)
        depth = 0 if parent < 0 else nodes[parent]["depth"] + 1
        nodes.append({"id": nid, "parent": int(parent), "depth": depth, "kind": kind, "children": [],
                      "start": int(start), "stop": int(stop), "separator": 0, "sizes": []})
        if parent >= 0:
            nodes[parent]["children"].append(nid)
        return nid

    def make_leaf(verts, start, parent):
        nid = new_node(parent, start, start + verts.size, "leaf")
        leaf_key[verts] = start
        return nid

    while stack:
        verts, start, parent, connected = stack.pop()
        m = verts.size
        if m <= leaf_size:
            make_leaf(verts, start, parent)
            continue
        ip, ix = _k.induced_subgraph(graph.indptr, graph.indices, verts, local)
        if not connected:
            ncomp, lab = _k.component_labels(ip, ix)
            if ncomp > 1:
                groups = _pack_components(lab, int(ncomp), leaf_size)
                nid = new_node(parent, start, start + m, "components")
                nodes[nid]["sizes"] = [int(g.size) for g in groups]
                pos = start
                tasks = []
                for g in groups:
                    tasks.append((verts[g], pos, nid, g.size > leaf_size))
                    pos += g.size
                stack.extend(reversed(tasks))
                continue
        part, best = None, None
        ntr = max(1, int(trials)) if m >= trials_min else 1
        top = m >= top_fraction * n
        if top:
            ntr = max(ntr, int(top_trials))
        for t in range(ntr):
            sep = vertex_separator(ip, ix, seed=_seed(seed + 7 * t, len(nodes)), balance=balance,
                                   multilevel=multilevel, refine=refine, mode=split, coarse_size=coarse_size,
                                   eigenvectors=eigenvectors[top], spectral_min=spectral_min,
                                   keep=keep[top], smooth=smooth[top])
            a, b, c = sep.sizes
            ok = c > 0 and a > 0 and b > 0
            key = (ok, -c * (a + b) ** 2 / max(4.0 * a * b, 1.0), -abs(a - b)) if ratio_key else (ok, -c, -abs(a - b))
            if best is None or key > best:
                part, best = sep.part, key
        A, B, S = verts[part == 0], verts[part == 1], verts[part == 2]
        if A.size == 0 or B.size == 0 or S.size == 0:  # no useful separator (e.g. a clique)
            make_leaf(verts, start, parent)
            continue
        nid = new_node(parent, start, start + m, "separator")
        nodes[nid]["separator"] = int(S.size)
        nodes[nid]["sizes"] = [int(A.size), int(B.size)]
        perm[start + m - S.size:start + m] = S
        n_sep_vertices += int(S.size)
        stack.append((B, start + A.size, nid, False))
        stack.append((A, start, nid, False))

    leaf_mask = leaf_key >= 0
    ordered, used = order_blocks(graph, leaf_key, leaf_mask, method=leaf_order, seed=seed)
    if ordered.size:
        keys = leaf_key[ordered]
        first = np.searchsorted(keys, keys, side="left")
        perm[keys + np.arange(keys.size) - first] = ordered
    hstats = {}
    top = next((nd["separator"] for nd in nodes if nd["kind"] == "separator"), 0)
    if hybrid_max and hybrid_max > 0:
        nodes, hstats = _subtree_choice(graph, perm, nodes, hybrid_max=int(hybrid_max), scores=tuple(hybrid_scores),
                                        wide=hybrid_wide, wide_scores=tuple(hybrid_wide_scores),
                                        key=hybrid_key, seed=seed, multisection=bool(multisection),
                                        climb=hybrid_climb, gate=hybrid_gate)
    tree = {"format": "reorder-separator-tree", "version": 1, "n": int(n), "root": 0,
            "leaf_size": leaf_size, "balance": float(balance), "nodes": nodes}
    info = {"separator_tree": tree, "top_separator": int(top), "separator_vertices": n_sep_vertices,
            "leaves": int(sum(1 for nd in nodes if nd["kind"] == "leaf")), "leaf_order": used,
            "nodes": len(nodes), **hstats}
    return perm, info


def _multisector_graph(g: Graph, leaf_loc: np.ndarray, sep_loc: np.ndarray, halo_loc: np.ndarray) -> Graph:
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


def _subtree_choice(graph: Graph, perm: np.ndarray, nodes: list[dict], *, hybrid_max: int, scores, key: str,
                    seed: int, wide: int | None = None, wide_scores=("degree",),
                    multisection: bool = True, climb: int = 0,
                    gate: float | None = None) -> tuple[list[dict], dict]:
    """Bottom-up choice between the nested-dissection order of each small subtree, minimum degree,
    and multisection.

    For every node of at most ``hybrid_max`` vertices (children before parents; up to ``climb``
    vertices where minimum degree won one of the node's separator-node children), the vertices of its
    range and their halo (neighbours outside the range, all in later separators) form a small graph;
    the current order of the range (nested dissection below it, already improved) competes with
    (a) the halo minimum degree of the whole range and (b) with ``multisection``, for separator
    nodes, the multisection order: the leaves of the subtree first in their current order, then all
    separator vertices of the subtree together (the multisector) in the minimum-degree order of the
    graph left once the leaves are eliminated, each under every pivot rule in ``scores`` (and, for a
    multisector without halo, e.g. the root's, with several rules, also :func:`minimum_degree`'s
    ``"auto"``). The least cost of the range's own columns (``key``: ``"nnz"`` = Σ c_j, ``"ops"`` =
    Σ c_j²; exact symbolic counts with the halo eliminated last) wins. The columns of the range do
    not depend on the order outside it, and the halo's columns do not depend on the order inside
    (eliminating a connected set joins all its halo), so the choices add up exactly. A node won by minimum degree becomes a
    leaf and its subtree is pruned; a node won by multisection keeps its leaves, split into two
    groups of consecutive leaves (``"components"`` nodes: no edge joins two leaves once the
    multisector is removed), and the multisector as its separator (node key ``"multisector"``).
    Nodes of more than ``wide`` vertices try only ``wide_scores`` (time: each rule costs one
    minimum degree and one symbolic count per level of the tree). With ``gate``, a candidate whose
    first rule costs more than ``1 + gate`` times the best so far tries no further rules. Returns
    the rebuilt node list and counters.

    References
    ----------
    C. Ashcraft and J. W. H. Liu, "Robust ordering of sparse matrices using multisection", SIAM J.
    Matrix Anal. Appl. 19 (1998) 816–832 (multisection, and choosing between dissection and minimum
    degree by exact counts); Pellegrini, Roman & Amestoy (2000) for the halo minimum degree.
    """

    md, halo = _mindegree_funcs()
    stats = {"subtrees_tried": 0, "subtrees_to_mindegree": 0, "subtrees_multisected": 0, "leaves_rescored": 0}
    if halo is None or not nodes:
        return nodes, stats
    wide = graph.n if wide is None else int(wide)
    n = graph.n
    mark = np.zeros(n, dtype=np.int8)
    local = np.full(n, -1, dtype=np.int64)
    changed = False
    power = 2 if key == "ops" else 1
    # The columns of a node's range depend only on the order inside it: its cost is the cost of its
    # own separator columns (fixed by the order of the separator alone) plus its children's, so one
    # global count serves for the whole bottom-up pass.
    cc = factor_column_counts(graph, perm).astype(np.float64)
    pre_c = np.concatenate(([0.0], np.cumsum(cc ** power)))
    pre_z = np.concatenate(([0.0], np.cumsum(cc)))
    cost_c = np.zeros(len(nodes))
    cost_z = np.zeros(len(nodes))
    # leaf ranges (start, stop) of each node's subtree in position order; a node won by minimum
    # degree has one, a multisected node the compacted ranges of its leaves
    leaves: list[list[tuple[int, int]] | None] = [None] * len(nodes)
    ms_node = np.zeros(len(nodes), dtype=bool)
    md_won = np.zeros(len(nodes), dtype=bool)  # separator nodes replaced by minimum degree
    for nid in range(len(nodes) - 1, -1, -1):
        nd = nodes[nid]
        s, t = nd["start"], nd["stop"]
        m = t - s
        own = s if nd["kind"] == "leaf" else t - nd["separator"]
        cost_c[nid] = pre_c[t] - pre_c[own] + sum(cost_c[c] for c in nd["children"])
        cost_z[nid] = pre_z[t] - pre_z[own] + sum(cost_z[c] for c in nd["children"])
        leaves[nid] = [(s, t)] if nd["kind"] == "leaf" else [r for c in nd["children"] for r in leaves[c]]
        if m < 3 or (m > hybrid_max and not (m <= climb and any(md_won[c] for c in nd["children"]))):
            continue
        if nd["kind"] == "leaf" and len(scores) <= 1:
            continue  # the global leaf pass already used this rule
        verts = perm[s:t]
        W, inside = _k.with_halo(graph.indptr, graph.indices, np.ascontiguousarray(verts), mark)
        ip, ix = _k.induced_subgraph(graph.indptr, graph.indices, W, local)
        g = Graph(n=W.size, indptr=ip, indices=ix, weights=None, info={})
        hl = np.flatnonzero(~inside)

        def cost(loc):
            c = factor_column_counts(g, np.concatenate((loc, hl)))[:m].astype(np.float64)
            return float(np.sum(c ** power)), float(np.sum(c))

        best, nnz_best = float(cost_c[nid]), float(cost_z[nid])
        best_loc, best_kind = None, ""
        stats["subtrees_tried"] += 1
        rules = scores if m <= wide else wide_scores
        # the gate skips rules only in the full list (the wide nodes' second rule, "fill", beats
        # "degree" by over a quarter on 9-point grids: gating it there cost 3% of fill)
        gated = gate is not None and m <= wide
        candidates = [("mindegree", g, inside, None)]
        if multisection and nd["kind"] == "separator":
            pos_loc = np.searchsorted(W, verts)  # W is sorted
            lp = np.zeros(m, dtype=bool)
            for a, b in leaves[nid]:
                lp[a - s:b - s] = True
            leaf_loc, sep_loc = pos_loc[lp], pos_loc[~lp]
            rg = _multisector_graph(g, leaf_loc, sep_loc, hl)
            if rg is not None:
                rmask = np.zeros(rg.n, dtype=bool)
                rmask[:sep_loc.size] = True
                candidates.append(("multisection", rg, rmask, (leaf_loc, sep_loc)))
        for kind, gg, mask, parts in candidates:
            # a multisector without halo (the root) is a graph of its own: minimum degree's "auto"
            # (every pivot rule and tie order, kept by its own exact count) joins the rules
            extra = ("auto",) if kind == "multisection" and hl.size == 0 and len(rules) > 1 else ()
            first = None  # cost of the first rule's order
            for sc in tuple(rules) + extra:
                if gated and first is not None and first > (1 + gate) * best:
                    break  # far from winning under the first rule: the others are not tried
                name, _, tie = sc.partition("/")
                if name.startswith("exact") and nnz_best > EXACT_MAX_FILL * m:
                    continue  # exact degrees are slow where the factor is dense (power-law graphs)
                if name == "auto":
                    loc = np.asarray(md(gg, seed=seed, score="auto")[0], dtype=np.int64)
                else:
                    loc = np.asarray(halo(gg, mask, seed=int(tie or 0), score=name), dtype=np.int64)
                if parts is not None:
                    loc = np.concatenate((parts[0], parts[1][loc]))
                c, nz = cost(loc)
                first = c if first is None else first
                if c < best * (1 - 1e-12):
                    best, nnz_best, best_loc, best_kind = c, nz, loc, kind
        if best_loc is None:
            continue
        cost_c[nid], cost_z[nid] = best, nnz_best
        perm[s:t] = W[best_loc]
        if nd["kind"] == "leaf":
            stats["leaves_rescored"] += 1
            continue
        changed = True
        if best_kind == "mindegree":
            stats["subtrees_to_mindegree"] += 1
            md_won[nid] = True
            leaves[nid] = [(s, t)]
            nd.update(kind="leaf", separator=0, sizes=[])
        else:
            stats["subtrees_multisected"] += 1
            sizes = [b - a for a, b in leaves[nid]]
            edges = s + np.concatenate(([0], np.cumsum(sizes)))
            leaves[nid] = [(int(edges[i]), int(edges[i + 1])) for i in range(len(sizes))]
            nd.update(separator=int(m - edges[-1] + s))
            ms_node[nid] = True
    if not changed:
        return nodes, stats
    return _rebuild_tree(nodes, leaves, ms_node), stats


def _rebuild_tree(nodes: list[dict], leaves, ms_node) -> list[dict]:
    """Node list after the subtree choice, in depth-first preorder with fresh ids and depths.

    Leaves keep no subtree; a multisected node gets two children, each a leaf or a ``"components"``
    node over consecutive leaves of its compacted leaf ranges (split where the sizes are closest to
    halves), and ``"multisector": True``.
    """
    out: list[dict] = []

    def add(nd, parent, depth):
        nd = dict(nd, id=len(out), parent=parent, depth=depth, children=[])
        out.append(nd)
        if parent >= 0:
            out[parent]["children"].append(nd["id"])
        return nd["id"]

    # stack of (old node id or a list of leaf ranges, new parent id, depth)
    todo: list = [(0, -1, 0)]
    while todo:
        item, parent, depth = todo.pop()
        if isinstance(item, list):  # a group of leaves under a multisected node
            if len(item) == 1:
                a, b = item[0]
                add({"kind": "leaf", "start": a, "stop": b, "separator": 0, "sizes": []}, parent, depth)
                continue
            gid = add({"kind": "components", "start": item[0][0], "stop": item[-1][1], "separator": 0,
                       "sizes": [b - a for a, b in item]}, parent, depth)
            todo.extend((([r], gid, depth + 1) for r in reversed(item)))
            continue
        nd = nodes[item]
        if nd["kind"] == "leaf":
            add(nd, parent, depth)
            continue
        if ms_node[item]:
            rs = leaves[item]
            sizes = np.array([b - a for a, b in rs])
            cut = int(np.argmin(np.abs(2 * np.cumsum(sizes)[:-1] - sizes.sum()))) + 1
            groups = [rs[:cut], rs[cut:]]
            nid = add(dict(nd, sizes=[int(sizes[:cut].sum()), int(sizes[cut:].sum())], multisector=True),
                      parent, depth)
            todo.extend(((grp, nid, depth + 1) for grp in reversed(groups)))
            continue
        nid = add(nd, parent, depth)
        todo.extend(((c, nid, depth + 1) for c in reversed(nd["children"])))
    return out


def validate_tree(tree: dict, perm, graph: Graph) -> bool:
    """Check a separator tree against its permutation and graph; raise ``ValueError`` if wrong.

    Checks: node ids and parent/child links agree; the root covers ``0:n``; children tile
    ``start:stop - separator`` in order; every leaf and separator range is covered exactly once; and
    no edge of the graph joins two different children of a node (each separator, or the component
    split, separates its children). Returns True.
    """
    perm = np.asarray(perm, dtype=np.int64)
    n = graph.n
    nodes = tree["nodes"]
    if int(tree["n"]) != n or perm.size != n:
        raise ValueError("tree size does not match the permutation")
    if n == 0:
        return True
    if nodes[tree.get("root", 0)]["start"] != 0 or nodes[tree.get("root", 0)]["stop"] != n:
        raise ValueError("root does not cover 0:n")
    inv = np.empty(n, dtype=np.int64)
    inv[perm] = np.arange(n)
    rows = inv[np.repeat(np.arange(n, dtype=np.int64), np.diff(graph.indptr))]
    cols = inv[graph.indices]
    covered = np.zeros(n, dtype=np.int64)
    for i, nd in enumerate(nodes):
        if nd["id"] != i:
            raise ValueError(f"node {i} has id {nd['id']}")
        s, t, m = nd["start"], nd["stop"], nd["separator"]
        if not 0 <= s <= t <= n or not 0 <= m <= t - s:
            raise ValueError(f"node {i}: bad range {s}:{t} with separator {m}")
        kids = nd["children"]
        if nd["kind"] == "leaf":
            if kids or m:
                raise ValueError(f"leaf {i} has children or a separator")
            covered[s:t] += 1
            continue
        covered[t - m:t] += 1
        if nd["kind"] == "separator" and len(kids) != 2:
            raise ValueError(f"separator node {i} has {len(kids)} children")
        pos = s
        childlab = np.full(n, -1, dtype=np.int64)
        for j, c in enumerate(kids):
            ch = nodes[c]
            if ch["parent"] != i or ch["start"] != pos:
                raise ValueError(f"child {c} of node {i} is not linked or not consecutive")
            if ch["stop"] - ch["start"] != nd["sizes"][j]:
                raise ValueError(f"node {i}: sizes disagree with child {c}")
            childlab[ch["start"]:ch["stop"]] = j
            pos = ch["stop"]
        if pos != t - m:
            raise ValueError(f"children of node {i} do not tile its range")
        # no edge between different children (removing the separator disconnects them)
        lr, lc = childlab[rows], childlab[cols]
        if np.any((lr >= 0) & (lc >= 0) & (lr != lc)):
            raise ValueError(f"node {i}: an edge joins two different children")
    if not np.all(covered == 1):
        raise ValueError("leaf and separator ranges do not cover every position exactly once")
    return True


def tree_summary(tree: dict, levels: int = 3) -> list[dict]:
    """Separator sizes and balance of the top ``levels`` separator levels.

    Levels count separator nodes only (component splits are looked through). Returns one dict per
    level: ``level``, ``separators`` (count), ``sizes`` (separator sizes, largest first, at most 16),
    ``separator_total``, ``balance_min`` and ``balance_mean`` (smaller side / (both sides) of each
    separator, 0.5 is perfect).
    """
    nodes = tree["nodes"]
    if not nodes:
        return []
    out = []
    frontier = [tree.get("root", 0)]
    for lev in range(levels):
        seps = []
        # descend through component nodes to the next separator nodes
        todo, found = list(frontier), []
        while todo:
            i = todo.pop()
            nd = nodes[i]
            if nd["kind"] == "separator":
                found.append(i)
            elif nd["kind"] == "components":
                todo.extend(nd["children"])
        if not found:
            break
        found.sort()
        for i in found:
            nd = nodes[i]
            a, b = nd["sizes"]
            seps.append((nd["separator"], min(a, b) / max(a + b, 1)))
        sizes = sorted((s for s, _ in seps), reverse=True)
        bal = [b for _, b in seps]
        out.append({"level": lev, "separators": len(seps), "sizes": sizes[:16], "separator_total": int(sum(sizes)),
                    "balance_min": float(min(bal)), "balance_mean": float(np.mean(bal))})
        frontier = [c for i in found for c in nodes[i]["children"]]
    return out


@register("rsb", summary="recursive spectral bisection into --parts blocks, ordered block by block",
          split_components=False, rank=45)
def recursive_spectral_bisection(graph: Graph, *, seed: int = 0, parts: int = 8, within: str = "auto",
                                 **options):
    """Recursive spectral bisection into ``parts`` blocks; blocks are ordered one after another.

    Each step splits a block at the weighted quantile of its Fiedler vector that gives the two halves
    sizes proportional to their numbers of final parts (the median for powers of two). A
    disconnected block is laid out component after component (each by its Fiedler vector) before
    the split. Within a block, vertices are ordered by minimum degree (RCM while unavailable).

    Parameters
    ----------
    graph : Graph
    seed : int
    parts : int
        Number of blocks (any positive integer; 2**k gives the classic method).
    within : {"auto", "mindegree", "rcm"}
        Ordering inside each block.

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
    from ..spectral import fiedler_vector

    n = graph.n
    parts = max(1, int(parts))
    labels = np.zeros(n, dtype=np.int64)
    local = np.full(n, -1, dtype=np.int64)
    stack = [(np.arange(n, dtype=np.int64), parts, 0)]
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
        for c in range(int(ncomp)):
            idx = np.flatnonzero(lab == c) if ncomp > 1 else np.arange(m)
            if idx.size >= 3:
                if ncomp > 1:
                    sip, six = _k.induced_subgraph(ip, ix, idx, np.full(m, -1, dtype=np.int64))
                else:
                    sip, six = ip, ix
                g = Graph(n=idx.size, indptr=sip, indices=six)
                try:
                    v = fiedler_vector(g, seed=_seed(seed, count)).vector
                except Exception:
                    v = _kt.bfs_levels(sip, six, 0).astype(np.float64)
                r = np.argsort(np.argsort(v, kind="stable"), kind="stable")
                key[idx] = r / max(idx.size, 1)
            count += 1
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
