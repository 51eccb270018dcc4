"""Degenerate parts handled in bulk: components laid out one after another (checked with SciPy's
connected components), isolated vertices and dense rows split off (textbook: a star's hub is its only
dense row; eliminating it last gives no fill, checked with SciPy SuperLU)."""

from __future__ import annotations

import numpy as np
import scipy.sparse as sp
from scipy.sparse.csgraph import connected_components

from reorder.graph import from_matrix
from reorder.orderings.peel import order_by_components, peel

from conftest import grid2d, m_matrix, superlu_nnz_l


def _star_plus_path(n):
    r = np.zeros(n - 1, dtype=np.int64)
    c = np.arange(1, n)
    S = sp.csr_matrix((np.ones(n - 1), (r, c)), shape=(n, n))
    return sp.csr_matrix(S + S.T + sp.diags([1.0, 1.0, 1.0], [-1, 0, 1], shape=(n, n)))


def test_components_contiguous_and_small_ones_without_calls():
    blocks = [grid2d(4), sp.identity(3), grid2d(3), sp.csr_matrix(np.ones((2, 2)))]
    A = sp.block_diag(blocks, format="csr")
    rng = np.random.default_rng(0)
    shuffle = rng.permutation(A.shape[0])
    A = sp.csr_matrix(A[shuffle][:, shuffle])
    g = from_matrix(A)
    calls = []

    def call(sub):
        calls.append(sub.n)
        return np.arange(sub.n)[::-1], {"size": sub.n}

    perm, info = order_by_components(g, call)
    assert sorted(perm.tolist()) == list(range(g.n))
    ncomp, lab = connected_components(A, directed=False)  # SciPy reference
    assert info["components"] == ncomp == 6
    assert sorted(calls) == [9, 16]  # isolated vertices and the pair are placed without a call
    runs = lab[perm]
    assert np.count_nonzero(np.diff(runs)) == ncomp - 1  # each component in one consecutive block
    firsts = [perm[np.flatnonzero(runs == c)[0]] for c in dict.fromkeys(runs)]
    mins = [np.flatnonzero(lab == c).min() for c in dict.fromkeys(runs)]
    small = [m for m, c in zip(mins, dict.fromkeys(runs)) if np.count_nonzero(lab == c) < 3]
    assert mins == sorted(mins) and all(m in firsts for m in small)


def test_peel_star_hub_last_and_leaves_isolated():
    n = 400
    r = np.zeros(n - 1, dtype=np.int64)
    S = sp.csr_matrix((np.ones(n - 1), (r, np.arange(1, n))), shape=(n, n))
    A = m_matrix(S)
    p = peel(from_matrix(A))
    assert p.dense.tolist() == [0] and p.isolated.size == n - 1 and p.core.size == 0
    perm = p.assemble(np.zeros(0, dtype=np.int64))
    assert superlu_nnz_l(sp.csc_matrix(A[perm][:, perm])) == 2 * n - 1  # no fill (SuperLU count)


def test_peel_dense_row_plus_path():
    A = _star_plus_path(2000)
    p = peel(from_matrix(A))
    assert p.dense.tolist() == [0] and p.isolated.size == 0
    assert p.graph.n == 1999 and p.graph.nedges == 1998  # the path left behind
    assert sorted(p.assemble(np.arange(1999)).tolist()) == list(range(2000))
