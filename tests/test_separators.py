"""Tests of reorder.separators: every separator separates (SciPy connected components) and respects
the balance window; König covers are minimum (NetworkX matching size)."""

from __future__ import annotations

import numpy as np
import pytest
import scipy.sparse as sp
from scipy.sparse.csgraph import connected_components

from reorder.graph import from_edges, from_matrix
from reorder.separators import (check_separator, coarsen, cover_separator, refine_separator, split_vector,
                                vertex_separator)

from conftest import grid2d, grid3d, random_pattern


def _sides_disconnected(graph, part) -> bool:
    """Removing the separator leaves no path between side 0 and side 1 (SciPy connected_components)."""
    keep = np.flatnonzero(part != 2)
    A = graph.to_csr()[keep][:, keep]
    _, lab = connected_components(A, directed=False)
    p = part[keep]
    return not (set(lab[p == 0]) & set(lab[p == 1]))


def _nine_point(k):
    # 9-point stencil = pattern of (T+I)⊗(T+I) with T the 1-D second difference (textbook fact)
    T = sp.diags([1.0, 1.0, 1.0], [-1, 0, 1], shape=(k, k))
    return sp.csr_matrix(sp.kron(T, T))


@pytest.mark.parametrize("matrix", [grid2d(40), grid2d(30, 50), grid3d(12), _nine_point(40)],
                         ids=["grid40", "grid30x50", "cube12", "nine40"])
@pytest.mark.parametrize("multilevel", [True, False])
def test_separator_separates_and_balances(matrix, multilevel):
    G = from_matrix(matrix)
    sep = vertex_separator(G.indptr, G.indices, seed=1, balance=0.4, multilevel=multilevel)
    a, b, s = sep.sizes
    assert a + b + s == G.n and a > 0 and b > 0 and s > 0
    assert check_separator(G.indptr, G.indices, sep.part)
    assert _sides_disconnected(G, sep.part)  # SciPy connected_components as the outside check
    # balance window: no side heavier than floor(0.6 n) (our definition, documented in refine_separator)
    assert max(a, b) <= int(np.floor(0.6 * G.n))


def test_grid_separator_is_about_one_line():
    # a k x k 5-point grid is split by one grid line of k vertices (textbook fact; George 1973);
    # with sides of at least 40% a diagonal cutting off a corner triangle (L²/2 ≥ 0.4 k² vertices,
    # elementary geometry) may be shorter: L ≥ sqrt(0.8) k
    k = 60
    G = from_matrix(grid2d(k))
    sep = vertex_separator(G.indptr, G.indices, seed=0)
    assert np.sqrt(0.8) * k - 1 <= sep.sizes[2] <= 1.15 * k


def test_split_vector_window_on_path():
    # a path split by its natural coordinate: the cut is exactly one edge (elementary)
    n = 50
    G = from_edges(n, np.arange(n - 1), np.arange(1, n))
    part, cut = split_vector(G.indptr, G.indices, np.arange(n, dtype=float), balance=0.4)
    assert cut == 1
    assert 20 <= np.count_nonzero(part == 0) <= 30


def test_cover_is_minimum_vertex_cover():
    # König: the cover of the cut's bipartite graph has the size of a maximum matching
    # (NetworkX's Hopcroft–Karp as the reference)
    nx = pytest.importorskip("networkx")
    A = random_pattern(120, 0.05, seed=3)
    G = from_matrix(A)
    part = (np.arange(G.n) % 3 == 0).astype(np.int8)
    covered = cover_separator(G.indptr, G.indices, part)
    assert check_separator(G.indptr, G.indices, covered)
    B = nx.Graph()
    rows = np.repeat(np.arange(G.n), np.diff(G.indptr))
    for u, v in zip(rows, G.indices):
        if part[u] == 0 and part[v] == 1:
            B.add_edge(("a", int(u)), ("b", int(v)))
    top = {x for x in B if x[0] == "a"}
    matching = nx.bipartite.hopcroft_karp_matching(B, top_nodes=top)
    assert np.count_nonzero(covered == 2) == len(matching) // 2


def test_refinement_never_increases_separator():
    G = from_matrix(grid2d(30))
    part, _ = split_vector(G.indptr, G.indices, np.random.default_rng(0).random(G.n), balance=0.45)
    part = cover_separator(G.indptr, G.indices, part)
    before = np.count_nonzero(part == 2)
    refine_separator(G.indptr, G.indices, part, balance=0.4)
    assert check_separator(G.indptr, G.indices, part)
    assert np.count_nonzero(part == 2) <= before


def test_coarsen_preserves_weights():
    G = from_matrix(grid3d(10))
    levels = coarsen(G.indptr, G.indices, seed=0, coarse_size=50)
    assert levels[-1].n <= 100
    for lev in levels:
        assert lev.vweight.sum() == G.n  # vertex weight is conserved by contraction
    # coarse edge weight = fine edges between different aggregates (each stored twice)
    f, c = levels[0], levels[1]
    rows = np.repeat(np.arange(f.n), np.diff(f.indptr))
    crossing = np.count_nonzero(f.cmap[rows] != f.cmap[f.indices])
    assert c.ewgt.sum() == crossing


def test_deterministic():
    G = from_matrix(grid2d(35))
    a = vertex_separator(G.indptr, G.indices, seed=4).part
    b = vertex_separator(G.indptr, G.indices, seed=4).part
    assert np.array_equal(a, b)


@pytest.mark.parametrize("n", [1, 7, 2048, 2049, 5000, 65536])
def test_local_random_order_is_a_permutation(n):
    from reorder.kernels.smallsep import rng_state
    from reorder.separators import _local_random_order

    a = _local_random_order(n, rng_state(3))
    assert np.array_equal(np.sort(a), np.arange(n))  # a permutation (common practice check)
    assert np.array_equal(a, _local_random_order(n, rng_state(3)))  # same seed, same order
    if n > 2048:
        assert not np.array_equal(a, np.arange(n))


def test_weighted_refinement_over_several_passes():
    # vertex weights, several passes: the returned side weights must equal a recount (NumPy
    # bincount), the result must still separate, no side may leave the balance window it started in,
    # and the separator weight may only fall
    G = from_matrix(grid3d(14))
    rng = np.random.default_rng(1)
    vw = rng.integers(1, 6, G.n).astype(np.int64)
    part, _ = split_vector(G.indptr, G.indices, rng.random(G.n), balance=0.45)
    part = cover_separator(G.indptr, G.indices, part)
    before = int(vw[part == 2].sum())
    w = refine_separator(G.indptr, G.indices, part, vweight=vw, balance=0.3, passes=8)
    assert np.array_equal(w, np.bincount(part, weights=vw, minlength=3).astype(np.int64))
    assert check_separator(G.indptr, G.indices, part)
    assert w[2] <= before
    assert max(w[0], w[1]) <= np.floor(0.7 * vw.sum() + 1e-9)
