"""The dissection loop of nested dissection: split by vertex separators down to the leaves, order
the leaves, then let the subtrees choose (:mod:`.subtree`)."""

from __future__ import annotations

import threading
from concurrent.futures import ThreadPoolExecutor

import numpy as np

from ...graph import Graph
from ...kernels import separators as _k
from ...kernels import smallsep as _ks
from ...separators import vertex_separator
from ..blocks import order_blocks
from ...threads import ordering_threads
from ..seeds import path_index, trial_seed
from .presets import Resolved
from .subtree import subtree_choice
from .tree import FORMAT, VERSION

__all__ = ["dissect", "SPAWN_MIN", "SPAWN_PARTS"]

#: with worker threads, subproblems of at least ``max(SPAWN_MIN, n / SPAWN_PARTS)`` vertices (below
#: the root) are tasks of their own; smaller ones are dissected by the task that found them
SPAWN_MIN = 5000
SPAWN_PARTS = 32


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


def _best_separator(ip, ix, s, r: Resolved, *, seed: int, node: int, top: bool, threads: int = 1) -> np.ndarray:
    """Part labels (0, 1, 2 = separator) of the best of the trials on one connected subproblem.

    With ``threads`` > 1 the trials run in that many worker threads (the kernels release the GIL);
    each trial has its own seed and the best is picked in trial order, so the result is the same.
    """
    m = ip.size - 1
    ntr = max(1, r.trials) if m >= r.trials_min else 1
    if top:
        ntr = max(ntr, r.top_trials + (1 if 0 < r.extra_trial_min <= m else 0))

    def trial(t):
        return vertex_separator(ip, ix, seed=trial_seed(seed, t, node), balance=s.balance,
                                multilevel=s.multilevel, refine=s.refine, mode=s.split, coarse_size=s.coarse_size,
                                eigenvectors=r.eigenvectors[top and m >= r.eig_min], spectral_min=r.spectral_min,
                                keep=r.keep[top], smooth=r.smooth[top] if m >= r.smooth_min else 0,
                                smooth_refine=r.smooth_refine, directions=r.eig_directions)

    if threads > 1 and ntr > 1:
        with ThreadPoolExecutor(max_workers=min(threads, ntr), thread_name_prefix="reorder-trial") as pool:
            seps = list(pool.map(trial, range(ntr)))
    else:
        seps = (trial(t) for t in range(ntr))
    part, best = None, None
    for sep in seps:
        a, b, c = sep.sizes
        ok = c > 0 and a > 0 and b > 0
        key = (ok, -c * (a + b) ** 2 / max(4.0 * a * b, 1.0), -abs(a - b)) if s.ratio_key else (ok, -c, -abs(a - b))
        if best is None or key > best:
            part, best = sep.part, key
    return part


class _Run:
    """Shared state of one dissection: the graph and settings, the arrays every task writes (disjoint
    parts of ``perm`` and ``leaf_key``), and one scratch array per thread."""

    def __init__(self, graph: Graph, s, r: Resolved, seed: int, threads: int):
        self.graph, self.s, self.r, self.seed = graph, s, r, seed
        self.n = graph.n
        self.perm = np.full(self.n, -1, dtype=np.int64)
        self.leaf_key = np.full(self.n, -1, dtype=np.int64)
        self.threads = threads
        # subproblems at least this large become tasks of their own when threads are available
        self.spawn_min = max(SPAWN_MIN, self.n // SPAWN_PARTS) if threads > 1 else self.n + 1
        self._tls = threading.local()
        # below spectral_min the separators need no eigensolver: whole subtrees run compiled
        self.compiled = bool(s.multilevel and s.refine and s.split == "window" and s.compiled)
        ntr = max(r.trials, r.top_trials, 1)
        # trial seeds at index 0: the compiled path mixes in the subproblem's index itself
        self.bases = np.array([trial_seed(seed, t, 0) for t in range(ntr)], dtype=np.int64)
        self.submit = None  # set by _split: task arguments -> task id

    def scratch(self) -> np.ndarray:
        """This thread's scratch array for :func:`~reorder.kernels.separators.induced_subgraph`."""
        a = getattr(self._tls, "local", None)
        if a is None:
            a = self._tls.local = np.full(self.n, -1, dtype=np.int64)
        return a


def _task(run: _Run, verts: np.ndarray, start: int, key: int, connected: bool):
    """Dissect one subproblem down to its leaves (or down to the subproblems handed to other tasks).

    Returns ``(nodes, separator vertex count)``: the subtree's nodes in depth-first preorder with
    local parent ids (-1 for the task's root); a subproblem handed to another task is a node of kind
    ``"task"`` holding that task's id. Seeds depend on a subproblem's place in the tree only
    (:func:`~reorder.orderings.seeds.path_index`), so the result does not depend on the threads.
    """
    graph, s, r = run.graph, run.s, run.r
    n, leaf_size = run.n, run.r.leaf_size
    perm, leaf_key, local = run.perm, run.leaf_key, run.scratch()
    nodes: list[dict] = []
    nsep = 0
    # stack of (vertices (increasing old ids), start, local parent, path index, known_connected)
    stack = [(verts, start, -1, key, connected)]

    def new_node(parent, start, stop, kind):
        nodes.append({"parent": parent, "kind": kind, "start": int(start), "stop": int(stop), "separator": 0,
                      "sizes": []})
        return len(nodes) - 1

    while stack:
        verts, start, parent, key, connected = stack.pop()
        m = verts.size
        if m <= leaf_size:
            new_node(parent, start, start + m, "leaf")
            leaf_key[verts] = start
            continue
        if parent >= 0 and m >= run.spawn_min:
            nid = new_node(parent, start, start + m, "task")
            nodes[nid]["task"] = run.submit(verts, start, key, connected)
            continue
        if run.compiled and m < r.spectral_min:  # the whole subtree in one compiled call
            nsep += _compiled_subtree(run, nodes, verts, start, key, connected, parent)
            continue
        if m == n:  # the whole graph (the root): no copy
            ip, ix = graph.indptr, graph.indices
        else:
            ip, ix = _k.induced_subgraph(graph.indptr, graph.indices, verts, local)
        if not connected:
            ncomp, lab = _k.component_labels(ip, ix)
            if ncomp > 1:
                groups = _pack_components(lab, int(ncomp), leaf_size)
                nid = new_node(parent, start, start + m, "components")
                nodes[nid]["sizes"] = [int(g.size) for g in groups]
                pos = start
                tasks = []
                for j, g in enumerate(groups):
                    tasks.append((verts[g], pos, nid, path_index(key, j), g.size > leaf_size))
                    pos += g.size
                stack.extend(reversed(tasks))
                continue
        # the root runs alone (its subproblems wait for its separator): its trials take the threads
        part = _best_separator(ip, ix, s, r, seed=run.seed, node=key, top=m >= r.top_fraction * n,
                               threads=run.threads if m == n else 1)
        A, B, S = verts[part == 0], verts[part == 1], verts[part == 2]
        if A.size == 0 or B.size == 0 or S.size == 0:  # no useful separator (e.g. a clique)
            new_node(parent, start, start + m, "leaf")
            leaf_key[verts] = start
            continue
        nid = new_node(parent, start, start + m, "separator")
        nodes[nid]["separator"] = int(S.size)
        nodes[nid]["sizes"] = [int(A.size), int(B.size)]
        perm[start + m - S.size:start + m] = S
        nsep += int(S.size)
        stack.append((B, start + A.size, nid, path_index(key, 1), False))
        stack.append((A, start, nid, path_index(key, 0), False))
    return nodes, nsep


def _compiled_subtree(run: _Run, nodes: list, verts, start: int, key: int, connected: bool, parent: int) -> int:
    """Dissect a subproblem below ``spectral_min`` by :func:`~reorder.kernels.smallsep.dissect_small`
    (same steps, seeds and result as the Python loop); its nodes are appended to ``nodes`` (local
    parents shifted, the root under ``parent``). Returns the separator vertex count."""
    s, r = run.s, run.r
    kind, par, st, sp, sep, sptr, sizes, nsep = _ks.dissect_small(
        run.graph.indptr, run.graph.indices, verts, int(start), int(key), bool(connected), run.scratch(), run.perm,
        run.leaf_key, int(r.leaf_size), run.bases, int(r.trials), int(r.trials_min), int(r.top_trials),
        float(r.top_fraction * run.n), int(r.keep[0]), int(r.keep[1]), float(s.balance), int(s.coarse_size),
        bool(s.ratio_key))
    off = len(nodes)
    names = ("leaf", "separator", "components")
    par = np.where(par < 0, parent, par + off).tolist()
    sizes = sizes.tolist()
    sptr = sptr.tolist()
    for i, (k, a, b, m) in enumerate(zip(kind.tolist(), st.tolist(), sp.tolist(), sep.tolist())):
        nodes.append({"parent": par[i], "kind": names[k], "start": a, "stop": b, "separator": m,
                      "sizes": sizes[sptr[i]:sptr[i + 1]]})
    return int(nsep)


def _assemble(results: dict, root: int) -> list[dict]:
    """The separator tree's node list (depth-first preorder, global ids) from the tasks' local
    node lists: a ``"task"`` node is replaced by that task's subtree where it stands."""
    out: list[dict] = []

    def emit(tid, gparent):
        nodes = results[tid][0]
        gid = [0] * len(nodes)
        for i, nd in enumerate(nodes):
            p = gparent if nd["parent"] < 0 else gid[nd["parent"]]
            if nd["kind"] == "task":
                emit(nd["task"], p)
                continue
            gid[i] = len(out)
            out.append({"id": gid[i], "parent": int(p), "depth": 0 if p < 0 else out[p]["depth"] + 1,
                        "kind": nd["kind"], "children": [], "start": nd["start"], "stop": nd["stop"],
                        "separator": nd["separator"], "sizes": nd["sizes"]})
            if p >= 0:
                out[p]["children"].append(gid[i])

    emit(root, -1)
    return out


def _split(graph: Graph, s, r: Resolved, seed: int, threads: int = 1):
    """Dissect down to the leaves: ``(perm with the separators placed, leaf_key, nodes,
    separator vertex count)``; ``leaf_key[v]`` is the start position of the leaf holding ``v``
    (-1 for separator vertices).

    With ``threads`` > 1, subproblems of at least ``max(SPAWN_MIN, n / SPAWN_PARTS)`` vertices below
    the root become tasks of a thread pool (the kernels release the GIL); the result is the same.
    """
    run = _Run(graph, s, r, seed, threads)
    results: dict = {}
    lock = threading.Lock()
    root_args = (np.arange(graph.n, dtype=np.int64), 0, 0, False)
    if threads <= 1:
        run.submit = None  # spawn_min > n: never called
        results[0] = _task(run, *root_args)
    else:
        futures: list = []
        with ThreadPoolExecutor(max_workers=threads, thread_name_prefix="reorder-nd") as pool:
            def submit(*args):
                with lock:
                    tid = len(futures)
                    futures.append(pool.submit(_store, tid, args))
                return tid

            def _store(tid, args):
                results[tid] = _task(run, *args)

            run.submit = submit
            submit(*root_args)
            i = 0
            while True:  # a task registers the tasks it spawns before it finishes
                with lock:
                    if i >= len(futures):
                        break
                    f = futures[i]
                f.result()
                i += 1
    nodes = _assemble(results, 0)
    nsep = sum(v[1] for v in results.values())
    return run.perm, run.leaf_key, nodes, nsep


def _leaf_parts(nodes: list[dict], parts: int) -> list[tuple[int, int]]:
    """Position ranges of at most about ``parts`` disjoint subtrees of the separator tree that
    hold every leaf: the largest subtree is replaced by its children while there are fewer than
    ``parts`` (a node's own separator range holds no leaf). Depends on the tree alone."""
    if not nodes:
        return []
    size = lambda i: nodes[i]["stop"] - nodes[i]["start"]  # noqa: E731
    cur = [0]
    while len(cur) < parts:
        j = max(range(len(cur)), key=lambda q: (size(cur[q]), -q))
        i = cur[j]
        if not nodes[i]["children"]:
            break
        cur[j:j + 1] = nodes[i]["children"]
    return sorted((nodes[i]["start"], nodes[i]["stop"]) for i in cur)


def _order_leaves_in_parts(graph: Graph, leaf_key: np.ndarray, nodes: list[dict], parts: int, *, seed: int,
                           threads: int):
    """The leaves ordered by the halo minimum degree as :func:`~reorder.orderings.blocks.order_blocks`
    does, but in independent calls, one per subtree of :func:`_leaf_parts` (its leaves, with the
    surrounding separator vertices as halo), run in ``threads`` worker threads.

    Leaves of different subtrees share no edge (separators lie between them), so each call sees
    everything the global call would see of its leaves; the result depends on the tree, not on the
    threads. Returns ``(leaf vertices grouped by leaf_key, each leaf in elimination order, method)``.
    """
    from ..mindegree import halo_minimum_degree

    ranges = _leaf_parts(nodes, parts)
    tls = threading.local()

    def one(rng):
        a, b = rng
        verts = np.flatnonzero((leaf_key >= a) & (leaf_key < b))  # in the worker: no serial sort
        if verts.size == 0:
            return verts
        mark = getattr(tls, "mark", None)
        if mark is None:
            mark = tls.mark = np.zeros(graph.n, dtype=np.int8)
            tls.local = np.full(graph.n, -1, dtype=np.int64)
        W, inside = _k.with_halo(graph.indptr, graph.indices, verts, mark)
        ip, ix = _k.induced_subgraph(graph.indptr, graph.indices, W, tls.local)
        g = Graph(n=W.size, indptr=ip, indices=ix, weights=None, info={})
        elim = W[np.asarray(halo_minimum_degree(g, inside, seed=seed), dtype=np.int64)]
        # group by leaf (leaf_key), each leaf in elimination order
        return elim[np.argsort(leaf_key[elim], kind="stable")]

    if threads > 1 and len(ranges) > 1:
        with ThreadPoolExecutor(max_workers=threads, thread_name_prefix="reorder-leaves") as pool:
            out = list(pool.map(one, ranges))
    else:
        out = [one(rg) for rg in ranges]
    ordered = np.concatenate(out) if out else np.zeros(0, dtype=np.int64)
    return ordered.astype(np.int64, copy=False), "halo-mindegree"


def dissect(graph: Graph, s, r: Resolved, *, seed: int):
    """One nested-dissection run with settings ``s`` resolved to ``r``: ``(perm, info)`` as
    :func:`reorder.orderings.nd.nested_dissection` returns them."""
    threads = ordering_threads(s.threads)
    perm, leaf_key, nodes, n_sep_vertices = _split(graph, s, r, seed, threads)
    leaf_mask = leaf_key >= 0
    if r.leaf_parts > 1 and s.leaf_order in ("auto", "halo"):
        ordered, used = _order_leaves_in_parts(graph, leaf_key, nodes, r.leaf_parts, seed=seed, threads=threads)
    else:
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
                                       single=r.hybrid_single,
                                       key=s.hybrid_key, seed=seed, multisection=r.multisection,
                                       multisection_min=r.multisection_min,
                                       climb=r.hybrid_climb, gate=s.hybrid_gate, threads=threads)
    tree = {"format": FORMAT, "version": VERSION, "n": int(graph.n), "root": 0,
            "leaf_size": r.leaf_size, "balance": float(s.balance), "nodes": nodes}
    info = {"separator_tree": tree, "top_separator": int(top), "separator_vertices": n_sep_vertices,
            "leaves": int(sum(1 for nd in nodes if nd["kind"] == "leaf")), "leaf_order": used,
            "nodes": len(nodes), **hstats}
    return perm, info
