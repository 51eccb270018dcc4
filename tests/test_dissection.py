"""Tests of nested dissection, recursive spectral bisection and the separator tree.

Outside references: George (1973) ideal nested dissection counts (quoted from memory), SciPy's RCM,
NumPy dense Cholesky (fill check on a small case), SciPy connected_components (separators separate),
scikit-learn's adjusted Rand index (planted partition).
"""

from __future__ import annotations

import json

import numpy as np
import pytest
import scipy.sparse as sp
from scipy.sparse.csgraph import connected_components, reverse_cuthill_mckee

from reorder.analysis import symbolic_factor
from reorder.graph import from_edges, from_matrix
from reorder.orderings import order
from reorder.orderings.nd import SeparatorTree

from conftest import grid2d, grid3d, m_matrix, superlu_nnz_l


@pytest.mark.parametrize("k", [31, 63])
def test_grid_below_ideal_nested_dissection(k):
    """George (1973), SIAM J. Numer. Anal. 10, quoted from memory: ideal nested dissection of a k x k
    grid gives nnz(L) ~ 31/4 k^2 log2 k and ~ 829/84 k^3 multiplications. We test
    nnz(L) (diagonal included) <= 31/4 k^2 log2 k and  sum_j (c_j - 1)(c_j + 2)/2 <= 829/84 k^3
    (the multiplication count of column Cholesky, George & Liu 1981), and nnz(L) <= 0.6 x RCM's."""
    G = from_matrix(grid2d(k))
    o = order(G, "nd")
    s = symbolic_factor(G, o.perm)
    c = s.colcounts.astype(np.int64)
    mult = int(((c - 1) * (c + 2) // 2).sum())
    assert s.nnz_factor <= 31 / 4 * k * k * np.log2(k)
    assert mult <= 829 / 84 * k**3
    rcm = reverse_cuthill_mckee(G.to_csr(), symmetric_mode=True)  # SciPy baseline
    assert s.nnz_factor <= 0.6 * symbolic_factor(G, rcm).nnz_factor
    # the top separator of a k x k grid is about one grid line (George 1973); with the default
    # balance window 0.3 a diagonal corner cut is allowed: it holds 30 % of the square when its
    # length is sqrt(0.6)·k ≈ 0.77 k (elementary geometry), the smallest admissible separator
    assert 0.75 * k <= o.info["top_separator"] <= 1.2 * k
    SeparatorTree.from_json(o.info["separator_tree"]).validate(o.perm, G)


def test_fill_matches_dense_cholesky():
    # NumPy dense Cholesky of the permuted M-matrix: structural nonzeros = our nnz(L)
    A = m_matrix(grid2d(12))
    G = from_matrix(A)
    o = order(G, "nd", leaf_size=8)
    L = np.linalg.cholesky(A.toarray()[np.ix_(o.perm, o.perm)])
    assert np.count_nonzero(np.abs(L) > 1e-13) == symbolic_factor(G, o.perm).nnz_factor


def test_tree_separators_separate_and_balance():
    G = from_matrix(grid3d(14))
    o = order(G, "nd", leaf_size=40, balance=0.4)
    tree = o.info["separator_tree"]
    assert SeparatorTree.from_json(tree).validate(o.perm, G)
    A = G.to_csr()
    for nd in tree["nodes"]:
        if nd["kind"] != "separator":
            continue
        a, b = nd["sizes"]
        total = a + b + nd["separator"]
        if not nd.get("multisector"):  # a multisector's two leaf groups need not be balanced
            assert max(a, b) <= np.floor(0.6 * total)  # balance window of each bisection
        # removing the separator disconnects the two sides (SciPy connected_components)
        s0 = o.perm[nd["start"]:nd["start"] + a]
        s1 = o.perm[nd["start"] + a:nd["start"] + a + b]
        both = np.concatenate((s0, s1))
        _, lab = connected_components(A[both][:, both], directed=False)
        assert not (set(lab[:a]) & set(lab[a:]))


def test_tree_json_round_trip(tmp_path):
    G = from_matrix(grid2d(25))
    o = order(G, "nd", leaf_size=30, hybrid_max=0)  # no subtree replaced by minimum degree
    f = tmp_path / "tree.json"
    f.write_text(json.dumps(o.info["separator_tree"]))
    tree = json.loads(f.read_text())
    assert tree == o.info["separator_tree"]
    assert SeparatorTree.from_json(tree).validate(o.perm, G)
    summ = SeparatorTree.from_json(tree).summary(levels=3)
    assert summ[0]["separators"] == 1 and summ[1]["separators"] == 2
    assert summ[0]["sizes"][0] == o.info["top_separator"]
    # a corrupted tree is rejected
    bad = json.loads(json.dumps(tree))
    bad["nodes"][0]["separator"] += 1
    with pytest.raises(ValueError):
        SeparatorTree.from_json(bad).validate(o.perm, G)


def test_disconnected_graph():
    A = sp.block_diag([grid2d(15), grid2d(10), sp.csr_matrix((1, 1)), grid3d(6)]).tocsr()
    G = from_matrix(A)
    o = order(G, "nd", leaf_size=20)
    assert np.array_equal(np.sort(o.perm), np.arange(G.n))
    assert SeparatorTree.from_json(o.info["separator_tree"]).validate(o.perm, G)
    assert o.info["separator_tree"]["nodes"][0]["kind"] == "components"


@pytest.mark.parametrize("n", [0, 1, 2, 3, 5])
def test_tiny_graphs(n):
    G = from_edges(n, np.arange(max(n - 1, 0)), np.arange(1, n))
    for method in ("nd", "rsb", "auto"):
        o = order(G, method)
        assert np.array_equal(np.sort(o.perm), np.arange(n))


def test_complete_graph():
    # no separator exists in a clique; the ordering is still a valid permutation with full fill
    n = 300
    r, c = np.triu_indices(n, 1)
    G = from_edges(n, r, c)
    o = order(G, "nd", leaf_size=50)
    assert np.array_equal(np.sort(o.perm), np.arange(n))
    assert symbolic_factor(G, o.perm).nnz_factor == n * (n + 1) // 2
    SeparatorTree.from_json(o.info["separator_tree"]).validate(o.perm, G)


def test_star_graph():
    # star: the centre is the only useful separator; eliminating it last gives no fill (elementary)
    n = 2000
    G = from_edges(n, np.zeros(n - 1, dtype=int), np.arange(1, n))
    o = order(G, "nd", leaf_size=50)
    assert symbolic_factor(G, o.perm).nnz_factor == 2 * n - 1
    SeparatorTree.from_json(o.info["separator_tree"]).validate(o.perm, G)


def test_plain_variant_and_determinism():
    G = from_matrix(grid2d(40))
    a = order(G, "nd", seed=3)
    b = order(G, "nd", seed=3)
    assert np.array_equal(a.perm, b.perm)
    plain = order(G, "nd", multilevel=False, refine=False, split="median")
    SeparatorTree.from_json(plain.info["separator_tree"]).validate(plain.perm, G)


def test_rsb_planted_partition():
    # two dense blocks joined by few edges; rsb with 2 parts recovers them
    # (adjusted Rand index from scikit-learn as the outside check)
    metrics = pytest.importorskip("sklearn.metrics")
    rng = np.random.default_rng(0)
    n = 400
    truth = (np.arange(n) >= n // 2).astype(int)
    rng.shuffle(truth)
    r = rng.integers(0, n, 12000)
    c = rng.integers(0, n, 12000)
    same = truth[r] == truth[c]
    keep = same | (rng.random(r.size) < 0.02)
    G = from_edges(n, r[keep], c[keep])
    o = order(G, "rsb", parts=2)
    labels = o.info["labels"]
    assert metrics.adjusted_rand_score(truth, labels) >= 0.95


def test_rsb_blocks_are_contiguous():
    G = from_matrix(grid2d(32))
    o = order(G, "rsb", parts=8)
    lab = np.asarray(o.info["labels"])
    assert lab.shape == (G.n,)
    assert np.all(np.diff(lab[o.perm]) >= 0)  # parts ordered one after another
    sizes = np.bincount(lab)
    assert sizes.size == 8 and sizes.max() - sizes.min() <= 2  # median splits: balanced
    o3 = order(G, "rsb", parts=3)
    assert np.bincount(np.asarray(o3.info["labels"])).size == 3


def test_subtree_choice_never_worse_and_tree_valid():
    # the bottom-up choice between dissection and minimum degree of each subtree can only lower the
    # exact count (counts by reorder.analysis, itself checked against dense Cholesky above); the
    # pruned tree must still describe the permutation (separators separate: SciPy-free edge check)
    G = from_matrix(grid2d(40))
    pure = order(G, "nd", hybrid_max=0)
    hyb = order(G, "nd")
    assert symbolic_factor(G, hyb.perm).nnz_factor <= symbolic_factor(G, pure.perm).nnz_factor
    assert SeparatorTree.from_json(hyb.info["separator_tree"]).validate(hyb.perm, G)
    assert hyb.info["subtrees_tried"] > 0


def test_subtree_choice_climbs_where_minimum_degree_wins():
    # 9-point grid (cells joined when both coordinates differ by at most 1): minimum degree wins
    # subtrees there, so the choice climbs above hybrid_max; it takes an order only at a lower
    # exact count, so the climbing run can only have less fill, counted here by SciPy's SuperLU
    # (natural order, no pivoting, on the permuted M-matrix; structural count, see conftest)
    k = 40
    B = sp.csr_matrix(sp.diags([1.0, 1.0, 1.0], [-1, 0, 1], shape=(k, k)))
    A = sp.kron(B, B).tocsr()
    G = from_matrix(A)
    M = m_matrix(A)

    flat = order(G, "nd", effort="fast", leaf_size=20, hybrid_max=60, hybrid_climb=0)
    climb = order(G, "nd", effort="fast", leaf_size=20, hybrid_max=60)  # default climb 100 000
    assert climb.info["subtrees_tried"] > flat.info["subtrees_tried"]
    assert climb.info["subtrees_to_mindegree"] > flat.info["subtrees_to_mindegree"]
    assert superlu_nnz_l(M[climb.perm][:, climb.perm]) <= superlu_nnz_l(M[flat.perm][:, flat.perm])
    assert superlu_nnz_l(M[climb.perm][:, climb.perm]) == symbolic_factor(G, climb.perm).nnz_factor
    assert SeparatorTree.from_json(climb.info["separator_tree"]).validate(climb.perm, G)


def test_subtree_choice_gate_only_skips_rules():
    # the gate stops trying pivot rules where the first is far from winning; trying every rule can
    # only lower each node's exact cost (the choices add up, see _subtree_choice), so the ungated
    # run has at most the fill of the gated one, and both trees describe their permutations
    G = from_matrix(grid3d(12))
    gated = order(G, "nd", leaf_size=20, hybrid_gate=0.0)
    full = order(G, "nd", leaf_size=20, hybrid_gate=None)
    assert symbolic_factor(G, full.perm).nnz_factor <= symbolic_factor(G, gated.perm).nnz_factor
    for o in (gated, full):
        assert SeparatorTree.from_json(o.info["separator_tree"]).validate(o.perm, G)
        assert np.array_equal(np.sort(o.perm), np.arange(G.n))


def test_multisection_nodes_separate_and_never_worse():
    # Ashcraft & Liu (1998): after the leaves, the separators of a subtree together (the
    # multisector) may be ordered by minimum degree. Such a node's multisector must disconnect its
    # leaves from each other (SciPy connected components of the leaf vertices of its range); the
    # choice is by exact counts, so the result cannot have more fill than pure dissection
    k = 31
    G = from_matrix(grid2d(k))
    o = order(G, "nd")
    tree = o.info["separator_tree"]
    assert SeparatorTree.from_json(tree).validate(o.perm, G)
    ms = [nd for nd in tree["nodes"] if nd.get("multisector")]
    assert o.info["subtrees_multisected"] >= len(ms) > 0  # wins, some later absorbed by a parent
    A = G.to_csr()
    for nd in ms:
        s, t, m = nd["start"], nd["stop"], nd["separator"]
        leaf_pos = np.arange(s, t - m)
        rest = o.perm[leaf_pos]
        ncomp, lab = connected_components(A[rest][:, rest], directed=False)
        # leaf ranges below this node (through its two groups)
        owner = np.full(G.n, -1)
        todo = list(nd["children"])
        while todo:
            c = tree["nodes"][todo.pop()]
            if c["kind"] == "leaf":
                owner[c["start"]:c["stop"]] = c["start"]
            todo.extend(c["children"])
        own = owner[leaf_pos]
        assert (own >= 0).all()
        for c in range(ncomp):
            assert np.unique(own[lab == c]).size == 1  # each component inside one leaf
    plain = order(G, "nd", multisection=False)
    assert not any(nd.get("multisector") for nd in plain.info["separator_tree"]["nodes"])
    pure = order(G, "nd", hybrid_max=0)
    assert symbolic_factor(G, o.perm).nnz_factor <= symbolic_factor(G, pure.perm).nnz_factor
    # the top separator reported is the dissection's first one (about a grid line, George 1973)
    assert 0.75 * k <= o.info["top_separator"] <= 1.2 * k


def test_restarts_keep_the_least_fill():
    # restart 0 is the plain run with the same seed, so the kept one can only have less fill (exact
    # counts by reorder.analysis, checked against dense Cholesky above)
    G = from_matrix(grid2d(30))
    one = order(G, "nd", seed=2)
    two = order(G, "nd", seed=2, restarts=2)
    assert symbolic_factor(G, two.perm).nnz_factor <= symbolic_factor(G, one.perm).nnz_factor
    assert len(two.info["restarts"]) == 2
    assert SeparatorTree.from_json(two.info["separator_tree"]).validate(two.perm, G)


def test_effort_presets():
    # "best" = the "normal" run (restart 0, same seed, same settings below 10^5 vertices) plus two
    # restarts, so it can only lower the exact count; "fast" is a different, valid dissection that
    # still meets George's (1973) ideal-ND bound quoted in the first test and beats SciPy's RCM
    k = 31
    G = from_matrix(grid2d(k))
    fast, normal, best = (order(G, "nd", effort=e) for e in ("fast", "normal", "best"))
    nnz = {e: symbolic_factor(G, o.perm).nnz_factor for e, o in (("fast", fast), ("normal", normal), ("best", best))}
    assert nnz["best"] <= nnz["normal"]
    assert len(best.info["restarts"]) == 3
    assert nnz["fast"] <= 31 / 4 * k * k * np.log2(k)
    rcm = reverse_cuthill_mckee(G.to_csr(), symmetric_mode=True)  # SciPy baseline
    assert nnz["fast"] <= 0.6 * symbolic_factor(G, rcm).nnz_factor
    for o in (fast, normal, best):
        assert SeparatorTree.from_json(o.info["separator_tree"]).validate(o.perm, G)
    assert np.array_equal(order(G, "nd", effort="fast").perm, fast.perm)  # same seed, same order
    with pytest.raises(ValueError):
        order(G, "nd", effort="turbo")
    a = order(G, "auto", candidates="nd", effort="fast")  # listed candidates get auto's effort
    assert a.info["candidates"]["nd"]["nnz_factor"] == nnz["fast"]


def test_top_separator_of_a_27_point_cube_is_a_plane():
    # a k x k x k grid with the 27-point stencil is split by any axis plane of k^2 vertices (textbook
    # fact: every stencil edge joins cells at most one plane apart); with three eigenvectors at the
    # top (the default) the dissection finds one or comes within a few cells of it (196 on 14 of 16
    # seeds, 206 on the others, measured), where two gave 210-224 vertices at k = 14 (measured)
    k = 14
    B = sp.csr_matrix(sp.diags([1.0, 1.0, 1.0], [-1, 0, 1], shape=(k, k)))
    A = sp.kron(sp.kron(B, B), B).tocsr()  # cells joined when every coordinate differs by at most 1
    assert A.nnz == (3 * k - 2) ** 3
    G = from_matrix(A)
    for seed in (0, 1):
        o = order(G, "nd", seed=seed, hybrid_max=0)
        assert o.info["top_separator"] <= 1.06 * k * k
        S = o.perm[G.n - o.info["top_separator"]:]  # the root's separator is ordered last
        keep = np.setdiff1d(np.arange(G.n), S)
        ncomp, _ = connected_components(A[keep][:, keep], directed=False)  # SciPy
        assert ncomp >= 2
