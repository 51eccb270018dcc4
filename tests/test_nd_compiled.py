"""Tests of the compiled small-subproblem path and the worker threads of nested dissection.

Outside references: SciPy's connected_components (a separator disconnects its sides), SciPy SuperLU
(nnz(L) of the ordering, structural count on an M-matrix), NumPy's stable argsort.
"""

from __future__ import annotations

import importlib

import numpy as np
import pytest
import scipy.sparse as sp
from scipy.sparse.csgraph import connected_components

from reorder.analysis import symbolic_factor
from reorder.graph import from_matrix
from reorder.kernels import smallsep
from reorder.orderings import order
from reorder.orderings.nd import SeparatorTree
from reorder.orderings.seeds import path_index
from reorder.separators import vertex_separator

from conftest import grid2d, grid3d, m_matrix, superlu_nnz_l

dissect_module = importlib.import_module("reorder.orderings.nd.dissect")
subtree_module = importlib.import_module("reorder.orderings.nd.subtree")


def _random_geometric(n, radius, seed):
    """A random geometric graph in the unit square (a scenario of our own: sensor plates)."""
    rng = np.random.default_rng(seed)
    x = rng.random((n, 2))
    d = np.sqrt(((x[:, None, :] - x[None, :, :]) ** 2).sum(-1))
    A = sp.csr_matrix((d < radius) & (d > 0), dtype=np.float64)
    ncomp, lab = connected_components(A, directed=False)
    keep = np.flatnonzero(lab == np.bincount(lab).argmax())
    return A[keep][:, keep].tocsr()


def _separates(A, part):
    """SciPy check: with the separator removed, no connected component holds both sides."""
    keep = np.flatnonzero(part != 2)
    _, lab = connected_components(A[keep][:, keep], directed=False)
    side = part[keep]
    both = np.intersect1d(lab[side == 0], lab[side == 1])
    return both.size == 0


CASES = [("grid 25x25", lambda: grid2d(25)), ("grid 9^3", lambda: grid3d(9)),
         ("geometric 700", lambda: _random_geometric(700, 0.08, 3))]


@pytest.mark.parametrize("name,make", CASES)
def test_compiled_separator_equals_python_path_and_separates(name, make):
    A = make()
    G = from_matrix(A)
    for seed, keep in ((0, 1), (5, 3), (11, 2)):
        py = vertex_separator(G.indptr, G.indices, seed=seed, spectral_min=10**9, keep=keep)
        cp = smallsep.cheap_separator(G.indptr, G.indices, seed, 0.3, 100, keep, 4, 8)
        assert np.array_equal(py.part, cp), name  # same steps, same random stream
        a, b, s = np.bincount(cp, minlength=3)
        assert a > 0 and b > 0 and 0 < s < 0.25 * G.n
        assert _separates(G.to_csr(), cp)


@pytest.mark.parametrize("name,make", CASES)
@pytest.mark.parametrize("effort", ["fast", "normal"])
def test_compiled_dissection_equals_python_loop(name, make, effort):
    A = make()
    G = from_matrix(A)
    py = order(G, "nd", effort=effort, compiled=False, threads=1, hybrid_max=0)
    cp = order(G, "nd", effort=effort, compiled=True, threads=1, hybrid_max=0)
    assert np.array_equal(py.perm, cp.perm)
    assert py.info["separator_tree"] == cp.info["separator_tree"]
    tree = SeparatorTree.from_json(cp.info["separator_tree"])
    assert tree.validate(cp.perm, G)  # every separator node disconnects its children
    # the counts: exact symbolic count equals SuperLU's structural count on an M-matrix
    nnz = symbolic_factor(G, cp.perm).nnz_factor
    assert nnz == symbolic_factor(G, py.perm).nnz_factor
    M = m_matrix(A)
    assert nnz == superlu_nnz_l(M[cp.perm][:, cp.perm])


def test_compiled_tree_separators_disconnect_sides():
    """Every separator of the compiled subtrees, checked with SciPy on the subgraph it splits."""
    A = _random_geometric(1500, 0.05, 8)
    G = from_matrix(A)
    o = order(G, "nd", effort="fast", threads=1, hybrid_max=0, leaf_size=40)
    nodes = o.info["separator_tree"]["nodes"]
    checked = 0
    for nd in nodes:
        if nd["kind"] != "separator":
            continue
        s, t, m = nd["start"], nd["stop"], nd["separator"]
        verts = o.perm[s:t]
        part = np.zeros(t - s, dtype=np.int8)
        part[nd["sizes"][0]:t - s - m] = 1
        part[t - s - m:] = 2
        assert _separates(A[verts][:, verts], part)
        checked += 1
    assert checked > 10


def test_threads_give_the_same_permutation(monkeypatch):
    # subproblems become tasks of their own from 300 vertices: many tasks on a small graph
    monkeypatch.setattr(dissect_module, "SPAWN_MIN", 300)
    monkeypatch.setattr(dissect_module, "SPAWN_PARTS", 10**6)
    monkeypatch.setattr(subtree_module, "PARTS_MIN", 200)  # the subtree choice in threads too
    for A, efforts in ((grid2d(50), ("fast", "normal")), (grid3d(11), ("fast",))):
        G = from_matrix(A)
        for effort in efforts:
            one = order(G, "nd", effort=effort, threads=1, seed=3)
            two = order(G, "nd", effort=effort, threads=2, seed=3)
            assert np.array_equal(one.perm, two.perm)
            assert one.info["separator_tree"] == two.info["separator_tree"]
            assert one.info["subtrees_tried"] == two.info["subtrees_tried"] > 0
    assert SeparatorTree.from_json(two.info["separator_tree"]).validate(two.perm, G)


def test_thread_count_setting(monkeypatch):
    from reorder.threads import ENV, ordering_threads

    monkeypatch.setenv(ENV, "3")
    assert ordering_threads() == 3
    assert ordering_threads(1) == 1
    monkeypatch.setenv(ENV, "zero")
    assert 1 <= ordering_threads() <= 2


def test_kernel_helpers_match_python():
    for p, c in ((0, 0), (0, 1), (12345, 3), (2**31 - 2, 7)):
        assert smallsep.path_index(p, c) == path_index(p, c)
    d = np.array([3, 1, 2, 1, 0, 3, -1, 2])
    assert np.array_equal(smallsep.stable_level_order(d), np.argsort(d, kind="stable"))  # NumPy reference
    lab = np.array([2, 0, 1, 2, 0, 3, 3, 1, 0], dtype=np.int64)
    members, gptr = smallsep._pack(lab, 4, 3)
    groups = [members[gptr[i]:gptr[i + 1]].tolist() for i in range(gptr.size - 1)]
    ref = [g.tolist() for g in dissect_module._pack_components(lab, 4, 3)]
    assert groups == ref


def test_leaves_in_parts(monkeypatch):
    """The leaves ordered in independent parts (the setting of graphs above 10⁵ vertices, forced
    here on small graphs): a valid ordering whose exact count SuperLU confirms (structural count on
    an M-matrix), the same for one and two threads, and for seed 0 (ties by vertex number) the same
    as one global call, since leaves of different parts share no edge."""
    from reorder.orderings.nd import presets

    for A in (grid2d(40), grid3d(10), _random_geometric(900, 0.07, 4)):
        G = from_matrix(A)
        base = order(G, "nd", effort="fast", threads=1, seed=0)
        monkeypatch.setitem(presets.TABLE["fast", "small"], "leaf_parts", 5)
        parts0 = order(G, "nd", effort="fast", threads=2, seed=0)
        one = order(G, "nd", effort="fast", threads=1, seed=3)
        two = order(G, "nd", effort="fast", threads=2, seed=3)
        monkeypatch.undo()
        assert np.array_equal(base.perm, parts0.perm)
        assert np.array_equal(one.perm, two.perm)
        assert SeparatorTree.from_json(two.info["separator_tree"]).validate(two.perm, G)
        M = m_matrix(A)
        assert symbolic_factor(G, two.perm).nnz_factor == superlu_nnz_l(M[two.perm][:, two.perm])


def test_fast_ramp_starts_at_the_mid_row_and_ends_at_the_huge_row():
    """No step where the ``fast`` presets change size class (a step in time per n·log₂n is what
    the ramp is for): just above LARGE the settings are the mid row's, just below RAMP_END the huge
    row's sizes are nearly reached."""
    from reorder.orderings.nd import presets
    from reorder.orderings.records import NdSettings

    s = NdSettings(effort="fast")
    mid = presets.resolve(s, presets.LARGE)
    above = presets.resolve(s, presets.LARGE + 1)
    for name in ("leaf_size", "spectral_min", "hybrid_max", "hybrid_climb", "top_trials", "keep"):
        assert getattr(above, name) == pytest.approx(getattr(mid, name), rel=1e-3), name
    end = presets.resolve(s, presets.RAMP_END - 1)
    huge = presets.resolve(s, presets.RAMP_END)
    assert abs(end.leaf_size - huge.leaf_size) <= 2 and abs(end.spectral_min - huge.spectral_min) <= 10
    assert end.hybrid_max <= end.leaf_size + 1  # the subtree choice has nothing left to try
    for n in range(presets.LARGE, presets.RAMP_END, 20_000):  # sizes only grow along the ramp
        a, b = presets.resolve(s, n), presets.resolve(s, n + 20_000)
        assert b.leaf_size >= a.leaf_size and b.spectral_min >= a.spectral_min


def test_normal_ramp_gives_up_effort_gradually():
    # no cliff (issue 16): across the ramp of the normal preset, the trials and the top eigenvectors
    # of each size of top subproblem (root, children, grandchildren: n, n/2, n/4 vertices) never
    # come back as n grows; between sizes 1.25x apart no top subproblem loses more than one trial,
    # and at most one level of them loses the third eigenvector (it used to leave all levels at once);
    # the root tries ever fewer of the directions its three eigenvectors span before it loses the third
    from reorder.orderings.nd.presets import RAMP_END, RAMP_START, ramp

    def effort(n):
        r = ramp(n)
        trials = [r["top_trials"] + (1 if 0 < r["extra_trial_min"] <= n // 2 ** k else 0) for k in range(3)]
        eig = [r["top_eigenvectors"] if n // 2 ** k >= r["eig_min"] else 0 for k in range(3)]
        return trials, eig

    sizes = [int(RAMP_START * 1.25 ** i) + 1 for i in range(40) if RAMP_START * 1.25 ** i + 1 < RAMP_END]
    assert len(sizes) >= 8
    for a, b in zip(sizes, sizes[1:]):
        (ta, ea), (tb, eb) = effort(a), effort(b)
        assert all(y <= x for x, y in zip(ta, tb)) and all(y <= x for x, y in zip(ea, eb))
        assert max(x - y for x, y in zip(ta, tb)) <= 1
        assert sum(x != y for x, y in zip(ea, eb)) <= 1
        # the root's spectral vectors (three eigenvectors and some of the 10 diagonal directions of
        # their span, else two and their sum and difference) go at most three at a time
        va, vb = (3 + ramp(x)["eig_directions"] if e[0] == 3 else 4 for x, e in ((a, ea), (b, eb)))
        assert 0 <= va - vb <= 3
    assert ramp(sizes[0])["eig_directions"] == 10 and ramp(sizes[-1])["eig_directions"] == 2


def test_multisection_is_given_up_level_by_level():
    # no cliff (issue 16): multisection stops for the smallest subtrees first, and between sizes
    # 1.25x apart its floor grows by a bounded factor (about one level of a dissection tree, whose
    # subtree sizes halve level by level: textbook nested dissection, George 1973), from every subtree
    # at MS_START to none at MS_END; the resolved settings of "normal" follow it and an explicit
    # setting overrides it
    from reorder.orderings.nd.presets import MS_END, MS_START, multisection_floor, resolve
    from reorder.orderings.records import NdSettings as NDSettings

    assert multisection_floor(MS_START, 50) == 0 and multisection_floor(MS_END, 50) == 0
    sizes = [int(MS_START * 1.25 ** i) + 1 for i in range(40) if MS_START * 1.25 ** i + 1 < MS_END]
    floors = [multisection_floor(n, 50) for n in sizes]
    assert all(b > a for a, b in zip(floors, floors[1:]))
    assert all(b / a <= 2 ** 2.5 for a, b in zip(floors, floors[1:]))  # at most 2.5 levels a step
    assert floors[-1] > 0.7 * sizes[-1]  # the root last
    n = sizes[len(sizes) // 2]
    r = resolve(NDSettings(), n)
    assert r.multisection and r.multisection_min == multisection_floor(n, r.leaf_size)
    assert resolve(NDSettings(multisection=True), n).multisection_min == 0
    assert not resolve(NDSettings(multisection=False), n).multisection
    fast = resolve(NDSettings(effort="fast"), n)
    assert fast.multisection_min == 0 and not fast.multisection


def test_subtree_choice_multisects_no_subtree_below_the_floor():
    # the floor is a hard limit: with it above every subtree no subtree is multisected (while without
    # it some are, on this grid: Ashcraft & Liu 1998's multisection wins there), and the result is
    # still a valid dissection order (SciPy connected components through the tree's validation)
    from reorder.orderings.nd.subtree import subtree_choice
    from reorder.orderings.nd.tree import SeparatorTree

    G = from_matrix(grid2d(31))
    base = order(G, "nd", hybrid_max=0)
    nodes = base.info["separator_tree"]["nodes"]
    out = {}
    for floor in (0, G.n + 1):
        perm = base.perm.copy()
        new_nodes, stats = subtree_choice(G, perm, [dict(nd, children=list(nd["children"])) for nd in nodes],
                                          hybrid_max=G.n, scores=("degree",), key="nnz", seed=0,
                                          multisection=True, multisection_min=floor)
        tree = dict(base.info["separator_tree"], nodes=new_nodes)
        assert SeparatorTree.from_json(tree).validate(perm, G)
        out[floor] = stats["subtrees_multisected"]
    assert out[0] > 0 and out[G.n + 1] == 0
