"""The bottom-up subtree choice of nested dissection: each small subtree keeps its dissection
order, the halo minimum degree of its whole vertex set, or its multisection order, whichever has
the least exact symbolic count (Ashcraft & Liu 1998)."""

from __future__ import annotations

from concurrent.futures import ThreadPoolExecutor

import numpy as np

from ...analysis import factor_column_counts
from ...graph import Graph
from ...kernels import separators as _k
from ..mindegree import halo_minimum_degree, minimum_degree
from ..seeds import rule_seed
from .multisector import multisector_graph

__all__ = ["subtree_choice", "EXACT_MAX_FILL"]

#: the subtree choice skips exact-degree pivot rules where the best order so far has more than this
#: many factor entries per column (they cost seconds on dense factors, e.g. power-law graphs)
EXACT_MAX_FILL = 100


def subtree_choice(graph: Graph, perm: np.ndarray, nodes: list[dict], *, hybrid_max: int, scores, key: str,
                    seed: int, wide: int | None = None, wide_scores=("degree",),
                    multisection: bool = True, multisection_min: int = 0, climb: int = 0,
                    gate: float | None = None, threads: int = 1,
                    single: int | None = None) -> tuple[list[dict], dict]:
    """Bottom-up choice between the nested-dissection order of each small subtree, minimum degree,
    and multisection.

    For every node of at most ``hybrid_max`` vertices (children before parents; up to ``climb``
    vertices where minimum degree won one of the node's separator-node children), the vertices of its
    range and their halo (neighbours outside the range, all in later separators) form a small graph;
    the current order of the range (nested dissection below it, already improved) competes with
    (a) the halo minimum degree of the whole range and (b) with ``multisection``, for separator
    nodes (of at least ``multisection_min`` vertices), the multisection order: the leaves of the
    subtree first in their current order, then all separator vertices of the subtree together (the multisector) in the minimum-degree order of the
    graph left once the leaves are eliminated, each under every pivot rule in ``scores`` (and, for a
    multisector without halo, e.g. the root's, with several rules, also :func:`minimum_degree`'s
    ``"auto"``). The least cost of the range's own columns (``key``: ``"nnz"`` = Σ c_j, ``"ops"`` =
    Σ c_j²; exact symbolic counts with the halo eliminated last) wins. The columns of the range do
    not depend on the order outside it, and the halo's columns do not depend on the order inside
    (eliminating a connected set joins all its halo), so the choices add up exactly. A node won by minimum degree becomes a
    leaf and its subtree is pruned; a node won by multisection keeps its leaves, split into two
    groups of consecutive leaves (``"components"`` nodes: no edge joins two leaves once the
    multisector is removed), and the multisector as its separator (node key ``"multisector"``).
    Nodes of more than ``wide`` vertices try only ``wide_scores``, and nodes of more than ``single``
    (when given) only the first of them (time: each rule costs one
    minimum degree and one symbolic count per level of the tree). With ``gate``, a candidate whose
    first rule costs more than ``1 + gate`` times the best so far tries no further rules. With
    ``threads`` > 1, disjoint subtrees are chosen in worker threads (same result). Returns the
    rebuilt node list and counters.

    References
    ----------
    C. Ashcraft and J. W. H. Liu, "Robust ordering of sparse matrices using multisection", SIAM J.
    Matrix Anal. Appl. 19 (1998) 816–832 (multisection, and choosing between dissection and minimum
    degree by exact counts); Pellegrini, Roman & Amestoy (2000) for the halo minimum degree.
    """

    stats = {"subtrees_tried": 0, "subtrees_to_mindegree": 0, "subtrees_multisected": 0, "leaves_rescored": 0}
    if not nodes:
        return nodes, stats
    wide = graph.n if wide is None else int(wide)
    power = 2 if key == "ops" else 1
    # The columns of a node's range depend only on the order inside it: its cost is the cost of its
    # own separator columns (fixed by the order of the separator alone) plus its children's, so one
    # global count serves for the whole bottom-up pass.
    cc = factor_column_counts(graph, perm).astype(np.float64)
    st = _State(graph=graph, perm=perm, nodes=nodes, hybrid_max=hybrid_max, scores=scores, seed=seed, wide=wide,
                wide_scores=wide_scores, single=graph.n if single is None else int(single),
                multisection=multisection, climb=climb, gate=gate, power=power,
                multisection_min=int(multisection_min),
                pre_c=np.concatenate(([0.0], np.cumsum(cc ** power))), pre_z=np.concatenate(([0.0], np.cumsum(cc))))
    # disjoint subtrees (consecutive id ranges in preorder) in worker threads, then the nodes above
    # them; a node's choice reads and writes only its own subtree, so the result is the same
    parts, rest = _parts(nodes, max(1, int(threads)))
    results = []
    if len(parts) > 1:
        with ThreadPoolExecutor(max_workers=int(threads), thread_name_prefix="reorder-subtree") as pool:
            results = list(pool.map(lambda r: _pass(st, range(r[1] - 1, r[0] - 1, -1)), parts))
    else:
        rest = list(range(len(nodes)))
    results.append(_pass(st, sorted(rest, reverse=True)))
    changed = False
    for ch, counts in results:
        changed |= ch
        for k, v in counts.items():
            stats[k] += v
    leaves, ms_node = st.leaves, st.ms_node
    if not changed:
        return nodes, stats
    return _rebuild_tree(nodes, leaves, ms_node), stats


class _State:
    """What every node of the subtree choice reads and writes (each node only its own entries and
    its children's, and ``perm`` on its own range)."""

    def __init__(self, **kw):
        self.__dict__.update(kw)
        k = len(self.nodes)
        self.cost_c = np.zeros(k)
        self.cost_z = np.zeros(k)
        # leaf ranges (start, stop) of each node's subtree in position order; a node won by minimum
        # degree has one, a multisected node the compacted ranges of its leaves
        self.leaves: list = [None] * k
        self.ms_node = np.zeros(k, dtype=bool)
        self.md_won = np.zeros(k, dtype=bool)  # separator nodes replaced by minimum degree


#: the subtree choice splits subtrees of at least this many vertices among the worker threads
PARTS_MIN = 20_000


def _parts(nodes: list[dict], threads: int, parts_per_thread: int = 4):
    """Disjoint subtrees for the worker threads: ``(parts, rest)``, ``parts`` as half-open node-id
    ranges (a subtree is consecutive in preorder), ``rest`` the ids of the nodes above them. The
    largest part (in vertices) is split into its children while there are fewer than
    ``parts_per_thread · threads`` parts and it holds at least :data:`PARTS_MIN` vertices."""
    if threads <= 1 or not nodes:
        return [], []
    end = list(range(1, len(nodes) + 1))
    for i in range(len(nodes) - 1, -1, -1):
        for c in nodes[i]["children"]:
            end[i] = max(end[i], end[c])
    size = lambda i: nodes[i]["stop"] - nodes[i]["start"]  # noqa: E731
    parts, rest = [0], []
    while len(parts) < parts_per_thread * threads:
        j = max(range(len(parts)), key=lambda q: size(parts[q]))
        i = parts[j]
        if size(i) < PARTS_MIN or not nodes[i]["children"]:
            break
        parts[j:j + 1] = nodes[i]["children"]
        rest.append(i)
    if len(parts) < 2:
        return [], []
    return [(i, end[i]) for i in parts], rest


def _pass(st: _State, ids) -> tuple[bool, dict]:
    """The bottom-up choice over the node ids ``ids`` (children before parents): ``(changed,
    counters)``."""
    graph, perm, nodes = st.graph, st.perm, st.nodes
    cost_c, cost_z, leaves, md_won, ms_node = st.cost_c, st.cost_z, st.leaves, st.md_won, st.ms_node
    pre_c, pre_z, scores = st.pre_c, st.pre_z, st.scores
    stats = {"subtrees_tried": 0, "subtrees_to_mindegree": 0, "subtrees_multisected": 0, "leaves_rescored": 0}
    mark = np.zeros(graph.n, dtype=np.int8)
    local = np.full(graph.n, -1, dtype=np.int64)
    changed = False
    for nid in ids:
        nd = nodes[nid]
        s, t = nd["start"], nd["stop"]
        m = t - s
        own = s if nd["kind"] == "leaf" else t - nd["separator"]
        cost_c[nid] = pre_c[t] - pre_c[own] + sum(cost_c[c] for c in nd["children"])
        cost_z[nid] = pre_z[t] - pre_z[own] + sum(cost_z[c] for c in nd["children"])
        leaves[nid] = [(s, t)] if nd["kind"] == "leaf" else [r for c in nd["children"] for r in leaves[c]]
        if m < 3 or (m > st.hybrid_max and not (m <= st.climb and any(md_won[c] for c in nd["children"]))):
            continue
        if nd["kind"] == "leaf" and len(scores) <= 1:
            continue  # the global leaf pass already used this rule
        stats["subtrees_tried"] += 1
        # the gate skips rules only in the full list (the wide nodes' second rule, "fill", beats
        # "degree" by over a quarter on 9-point grids: gating it there cost 3% of fill)
        rules = scores if m <= st.wide else st.wide_scores if m <= st.single else st.wide_scores[:1]
        best, nnz_best, best_loc, best_kind, W = _compete(
            graph, perm[s:t], nd, leaves[nid], float(cost_c[nid]), float(cost_z[nid]),
            rules=rules, gate=st.gate if m <= st.wide else None,
            multisection=st.multisection and m >= st.multisection_min, power=st.power, seed=st.seed, mark=mark,
            local=local)
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
    return changed, stats


def _compete(graph: Graph, verts: np.ndarray, nd: dict, node_leaves, best: float, nnz_best: float, *, rules,
             gate, multisection: bool, power: int, seed: int, mark, local):
    """One node of the subtree choice: the halo minimum degree of its range under each rule in
    ``rules`` (and, for separator nodes with ``multisection``, the multisection order) against the
    current cost ``best`` (``nnz_best``: its Σ c_j). Returns ``(best, nnz_best, best_loc, best_kind,
    W)``: ``best_loc`` (None if nothing beat the current order) indexes ``W``, the range and its
    halo in increasing vertex order."""
    s = nd["start"]
    m = verts.size
    W, inside = _k.with_halo(graph.indptr, graph.indices, np.ascontiguousarray(verts), mark)
    ip, ix = _k.induced_subgraph(graph.indptr, graph.indices, W, local)
    g = Graph(n=W.size, indptr=ip, indices=ix, weights=None, info={})
    hl = np.flatnonzero(~inside)

    def cost(loc):
        c = factor_column_counts(g, np.concatenate((loc, hl)))[:m].astype(np.float64)
        return float(np.sum(c ** power)), float(np.sum(c))

    best_loc, best_kind = None, ""
    candidates = [("mindegree", g, inside, None)]
    if multisection and nd["kind"] == "separator":
        pos_loc = np.searchsorted(W, verts)  # W is sorted
        lp = np.zeros(m, dtype=bool)
        for a, b in node_leaves:
            lp[a - s:b - s] = True
        leaf_loc, sep_loc = pos_loc[lp], pos_loc[~lp]
        rg = multisector_graph(g, leaf_loc, sep_loc, hl)
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
            if gate is not None and first is not None and first > (1 + gate) * best:
                break  # far from winning under the first rule: the others are not tried
            name, tie_seed = rule_seed(sc)
            if name.startswith("exact") and nnz_best > EXACT_MAX_FILL * m:
                continue  # exact degrees are slow where the factor is dense (power-law graphs)
            if name == "auto":
                loc = np.asarray(minimum_degree(gg, seed=seed, score="auto")[0], dtype=np.int64)
            else:
                loc = np.asarray(halo_minimum_degree(gg, mask, seed=tie_seed, score=name), dtype=np.int64)
            if parts is not None:
                loc = np.concatenate((parts[0], parts[1][loc]))
            c, nz = cost(loc)
            first = c if first is None else first
            if c < best * (1 - 1e-12):
                best, nnz_best, best_loc, best_kind = c, nz, loc, kind
    return best, nnz_best, best_loc, best_kind, W


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
