"""The dissection loop of nested dissection: split by vertex separators down to the leaves, order
the leaves, then let the subtrees choose (:mod:`.subtree`)."""

from __future__ import annotations

import numpy as np

from ...graph import Graph
from ...kernels import separators as _k
from ...separators import vertex_separator
from ..blocks import order_blocks
from ..seeds import trial_seed
from .presets import Resolved
from .subtree import subtree_choice
from .tree import FORMAT, VERSION

__all__ = ["dissect"]


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


def _best_separator(ip, ix, s, r: Resolved, *, seed: int, node: int, top: bool) -> np.ndarray:
    """Part labels (0, 1, 2 = separator) of the best of the trials on one connected subproblem."""
    m = ip.size - 1
    part, best = None, None
    ntr = max(1, r.trials) if m >= s.trials_min else 1
    if top:
        ntr = max(ntr, r.top_trials)
    for t in range(ntr):
        sep = vertex_separator(ip, ix, seed=trial_seed(seed, t, node), balance=s.balance,
                               multilevel=s.multilevel, refine=s.refine, mode=s.split, coarse_size=s.coarse_size,
                               eigenvectors=r.eigenvectors[top], spectral_min=r.spectral_min,
                               keep=r.keep[top], smooth=r.smooth[top])
        a, b, c = sep.sizes
        ok = c > 0 and a > 0 and b > 0
        key = (ok, -c * (a + b) ** 2 / max(4.0 * a * b, 1.0), -abs(a - b)) if s.ratio_key else (ok, -c, -abs(a - b))
        if best is None or key > best:
            part, best = sep.part, key
    return part


def _split(graph: Graph, s, r: Resolved, seed: int):
    """Dissect down to the leaves: ``(perm with the separators placed, leaf_key, nodes,
    separator vertex count)``; ``leaf_key[v]`` is the start position of the leaf holding ``v``
    (-1 for separator vertices)."""
    n = graph.n
    leaf_size = r.leaf_size
    perm = np.full(n, -1, dtype=np.int64)
    leaf_key = np.full(n, -1, dtype=np.int64)
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
        new_node(parent, start, start + verts.size, "leaf")
        leaf_key[verts] = start

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
        part = _best_separator(ip, ix, s, r, seed=seed, node=len(nodes), top=m >= s.top_fraction * n)
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
    return perm, leaf_key, nodes, n_sep_vertices


def dissect(graph: Graph, s, r: Resolved, *, seed: int):
    """One nested-dissection run with settings ``s`` resolved to ``r``: ``(perm, info)`` as
    :func:`reorder.orderings.nd.nested_dissection` returns them."""
    perm, leaf_key, nodes, n_sep_vertices = _split(graph, s, r, seed)
    leaf_mask = leaf_key >= 0
    ordered, used = order_blocks(graph, leaf_key, leaf_mask, method=s.leaf_order, seed=seed)
    if ordered.size:
        keys = leaf_key[ordered]
        first = np.searchsorted(keys, keys, side="left")
        perm[keys + np.arange(keys.size) - first] = ordered
    hstats = {}
    top = next((nd["separator"] for nd in nodes if nd["kind"] == "separator"), 0)
    if r.hybrid_max > 0:
        nodes, hstats = subtree_choice(graph, perm, nodes, hybrid_max=r.hybrid_max, scores=r.hybrid_scores,
                                       wide=r.hybrid_wide, wide_scores=tuple(s.hybrid_wide_scores),
                                       key=s.hybrid_key, seed=seed, multisection=r.multisection,
                                       climb=r.hybrid_climb, gate=s.hybrid_gate)
    tree = {"format": FORMAT, "version": VERSION, "n": int(graph.n), "root": 0,
            "leaf_size": r.leaf_size, "balance": float(s.balance), "nodes": nodes}
    info = {"separator_tree": tree, "top_separator": int(top), "separator_vertices": n_sep_vertices,
            "leaves": int(sum(1 for nd in nodes if nd["kind"] == "leaf")), "leaf_order": used,
            "nodes": len(nodes), **hstats}
    return perm, info
