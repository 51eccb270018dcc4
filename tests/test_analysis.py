"""Symbolic Cholesky measures against outside references: NumPy dense Cholesky, SciPy SuperLU,
textbook counts."""

from __future__ import annotations

import numpy as np
import pytest
import scipy.sparse as sp

from reorder.analysis import analyse, bandwidth_profile, symbolic_factor
from reorder.graph import from_matrix

from conftest import grid2d, grid3d, m_matrix, random_pattern, superlu_nnz_l


def dense_cholesky_counts(A: sp.spmatrix) -> np.ndarray:
    """Nonzeros per column of L from NumPy's dense Cholesky (reference)."""
    L = np.linalg.cholesky(A.toarray())
    return np.count_nonzero(L, axis=0)


@pytest.mark.parametrize("seed", range(12))
def test_counts_match_numpy_dense_cholesky(seed):
    # Reference: numpy.linalg.cholesky on an SPD M-matrix (no cancellation can occur, so the
    # numerical nonzeros are the structural ones).
    rng = np.random.default_rng(seed)
    n = int(rng.integers(5, 60))
    A = m_matrix(random_pattern(n, float(rng.uniform(0.02, 0.2)), seed))
    perm = rng.permutation(n)
    B = A[perm][:, perm]
    ref = dense_cholesky_counts(B)
    sym = symbolic_factor(from_matrix(A), perm)
    np.testing.assert_array_equal(sym.colcounts, ref)
    s = analyse(A, perm)
    assert s.nnz_factor == ref.sum()
    assert s.factor_ops == int((ref.astype(np.int64) ** 2).sum())


@pytest.mark.parametrize("maker", [lambda: grid2d(35), lambda: grid3d(11), lambda: grid2d(20, 60)])
def test_nnz_matches_superlu_natural(maker):
    A = m_matrix(maker())
    n = A.shape[0]
    rng = np.random.default_rng(7)
    for perm in (np.arange(n), rng.permutation(n)):
        B = A[perm][:, perm]
        assert analyse(A, perm).nnz_factor == superlu_nnz_l(B)


def test_tridiagonal_textbook():
    # Textbook fact: a tridiagonal matrix has no fill, nnz(L) = 2n - 1, etree is a path.
    n = 50
    A = sp.diags([-1.0, 2.0, -1.0], [-1, 0, 1], shape=(n, n))
    s = analyse(A)
    assert s.nnz_factor == 2 * n - 1
    assert s.etree_height == n
    assert s.bandwidth == 1 and s.profile == n - 1


def test_arrow_matrix_hub_first_and_last():
    # Textbook fact (George & Liu 1981): arrow matrix with the hub first fills completely,
    # n(n+1)/2; hub last gives no fill, 2n - 1.
    n = 30
    rows = np.r_[np.zeros(n - 1, int), np.arange(1, n)]
    cols = np.r_[np.arange(1, n), np.zeros(n - 1, int)]
    A = sp.csr_matrix((np.ones(2 * n - 2), (rows, cols)), shape=(n, n)) + sp.eye(n)
    assert analyse(A).nnz_factor == n * (n + 1) // 2
    hub_last = np.r_[np.arange(1, n), 0]
    s = analyse(A, hub_last)
    assert s.nnz_factor == 2 * n - 1
    assert s.fill == 0


def test_tree_leaves_first_no_fill():
    # Textbook fact: ordering a tree so that every vertex comes before its parent (leaves first,
    # e.g. reverse BFS order from the root) gives no fill.
    rng = np.random.default_rng(3)
    n = 200
    parent = np.array([rng.integers(0, i) for i in range(1, n)])
    A = sp.csr_matrix((np.ones(n - 1), (np.arange(1, n), parent)), shape=(n, n))
    A = A + A.T + sp.eye(n)
    order = np.arange(n)[::-1]  # children have larger labels than parents
    s = analyse(A, order)
    assert s.nnz_factor == 2 * n - 1
    assert s.fill == 0
    # natural order (root first) fills: it is the reverse
    assert analyse(A).nnz_factor >= 2 * n - 1


@pytest.mark.parametrize("k", [3, 4, 7, 12, 25])
def test_grid_natural_band_fills(k):
    # Derived here: in natural order the 5-point grid's factor fills the band of width k.
    # Row i >= k has entries in columns i-k..i (k+1 of them); rows 1..k-1 have 2, row 0 has 1:
    # nnz(L) = 1 + 2(k-1) + (k^2-k)(k+1) = k^3 + k - 1.
    s = analyse(grid2d(k))
    assert s.nnz_factor == k**3 + k - 1
    assert s.bandwidth == k
    assert s.profile == s.nnz_factor - k * k  # envelope fills completely


def test_bandwidth_profile_against_dense_definition():
    # Reference: the definitions computed directly on the dense permuted matrix.
    rng = np.random.default_rng(11)
    A = m_matrix(random_pattern(40, 0.08, 5))
    perm = rng.permutation(40)
    B = (A[perm][:, perm]).toarray() != 0
    bw_ref = max(abs(i - j) for i, j in zip(*np.nonzero(B)))
    prof_ref = sum(i - int(np.flatnonzero(B[i, : i + 1])[0]) for i in range(40))
    assert bandwidth_profile(from_matrix(A), perm) == (bw_ref, prof_ref)


def test_postorder_and_etree_properties():
    # Textbook facts (Liu 1990): parent[j] > j; a postorder lists every child before its parent
    # and each subtree contiguously.
    A = m_matrix(random_pattern(80, 0.05, 2))
    sym = symbolic_factor(from_matrix(A), np.random.default_rng(0).permutation(80))
    par, post = sym.parent, sym.post
    assert np.all((par == -1) | (par > np.arange(80)))
    pos = np.empty(80, int)
    pos[post] = np.arange(80)
    assert np.all((par == -1) | (pos[np.maximum(par, 0)] > pos))
    assert sorted(post.tolist()) == list(range(80))


def test_etree_height_definition_and_disconnected():
    # Height counts nodes on the longest leaf-to-root path; a diagonal matrix has height 1.
    assert analyse(sp.eye(5)).etree_height == 1
    assert analyse(sp.eye(5)).nnz_factor == 5
    assert analyse(sp.eye(5)).components == 5
    blocks = sp.block_diag([grid2d(3), grid2d(4)])
    s = analyse(blocks)
    assert s.components == 2


def test_empty_and_single():
    assert analyse(sp.csr_matrix((0, 0))).nnz_factor == 0
    s = analyse(sp.csr_matrix(np.array([[2.0]])))
    assert (s.n, s.nnz_factor, s.etree_height, s.bandwidth, s.profile) == (1, 1, 1, 0, 0)


def test_unsymmetric_pattern_uses_a_plus_at():
    # Cholesky-style analysis of an unsymmetric pattern is that of A + A^T (common practice).
    A = sp.csr_matrix(np.array([[1.0, 1, 0], [0, 1, 0], [0, 1, 1]]))
    s = analyse(A)
    assert not s.pattern_symmetric
    S = (A + A.T).toarray() != 0
    ref = dense_cholesky_counts(m_matrix(sp.csr_matrix(S.astype(float))))
    assert s.nnz_factor == ref.sum()


def test_factor_column_counts_match_numpy_dense_cholesky():
    # the unchecked inner step used by nested dissection gives the same column counts as NumPy's
    # dense Cholesky of the permuted M-matrix (reference as above)
    rng = np.random.default_rng(7)
    A = m_matrix(grid3d(5))
    perm = rng.permutation(A.shape[0]).astype(np.int64)
    from reorder.analysis import factor_column_counts

    c = factor_column_counts(from_matrix(A), perm)
    assert np.array_equal(c, dense_cholesky_counts(A[perm][:, perm]))


def test_etree_postorder_is_an_equivalent_postorder():
    # textbook facts (Liu 1990, SIAM J. Matrix Anal. Appl. 11): the elimination tree from the dense
    # factor is parent(j) = min{i > j : L[i, j] != 0}; a postorder numbers every subtree
    # consecutively, ending at its root; and it is an equivalent order (same nnz(L)). The factor
    # comes from NumPy's dense Cholesky.
    from reorder.analysis import etree_postorder
    from reorder.graph import from_matrix

    A = m_matrix(grid2d(7, 6))
    G = from_matrix(A)
    p = np.random.default_rng(3).permutation(G.n)
    q = etree_postorder(G, p)
    assert np.array_equal(np.sort(q), np.arange(G.n))

    def dense_factor(perm):
        L = np.linalg.cholesky(A.toarray()[np.ix_(perm, perm)])
        return np.abs(L) > 1e-12

    Lp, Lq = dense_factor(p), dense_factor(q)
    assert Lp.sum() == Lq.sum()
    n = G.n
    parent = np.array([next((i for i in range(j + 1, n) if Lq[i, j]), -1) for j in range(n)])
    size = np.ones(n, dtype=int)
    for j in range(n):  # children come before parents
        if parent[j] >= 0:
            size[parent[j]] += size[j]
    for j in range(n):  # the subtree of j is exactly positions j - size + 1 .. j
        members = [k for k in range(n) if k == j or _is_ancestor(parent, j, k)]
        assert members == list(range(j - size[j] + 1, j + 1))
    # a random order is not a postorder here (else this test would check nothing)
    parent_p = np.array([next((i for i in range(j + 1, n) if Lp[i, j]), -1) for j in range(n)])
    assert any(parent_p[j] != j + 1 and parent_p[j] >= 0 and not _first_child_block(parent_p, j) for j in range(n))


def _is_ancestor(parent, a, k):
    while k >= 0:
        k = parent[k]
        if k == a:
            return True
    return False


def _first_child_block(parent, j):
    """True if positions after j up to parent[j] all lie in the subtree of parent[j] (postorder-like)."""
    return all(_is_ancestor(parent, parent[j], k) for k in range(j + 1, parent[j]))


@pytest.mark.parametrize("seed", range(6))
def test_remembered_tree_after_a_postorder_matches_numpy_dense_cholesky(seed):
    # etree_postorder remembers the tree of the order it returns, and symbolic_factor of that order
    # uses it: the counts and the tree must still be those of NumPy's dense Cholesky (parent(j) =
    # min{i > j : L[i, j] != 0}, Liu 1990), and another order or another graph must not reuse it
    import gc

    from reorder import analysis
    from reorder.analysis import etree_postorder

    rng = np.random.default_rng(seed)
    n = int(rng.integers(8, 60))
    A = m_matrix(random_pattern(n, float(rng.uniform(0.03, 0.2)), seed))
    G = from_matrix(A)
    q = etree_postorder(G, rng.permutation(n))
    assert analysis._recall(G, q) is not None  # the memo is what this test exercises
    sym = symbolic_factor(G, q)
    L = np.abs(np.linalg.cholesky(A.toarray()[np.ix_(q, q)])) > 1e-12
    np.testing.assert_array_equal(sym.colcounts, L.sum(axis=0))
    parent = [next((i for i in range(j + 1, n) if L[i, j]), -1) for j in range(n)]
    np.testing.assert_array_equal(sym.parent, parent)
    # the postorder taken as known is the identity, and the identity is a postorder of NumPy's tree
    # (Liu 1990: a postorder numbers every subtree consecutively, its root last)
    np.testing.assert_array_equal(sym.post, np.arange(n))
    for j in range(n):
        sub = [k for k in range(n) if k == j or _is_ancestor(parent, j, k)]
        assert sub == list(range(j - len(sub) + 1, j + 1))
    assert symbolic_factor(G, q) is sym  # asked again: the same result
    other = q[::-1].copy()
    L2 = np.abs(np.linalg.cholesky(A.toarray()[np.ix_(other, other)])) > 1e-12
    np.testing.assert_array_equal(symbolic_factor(G, other).colcounts, L2.sum(axis=0))
    G2 = from_matrix(A)  # an equal graph, but not the same object: no reuse
    assert analysis._recall(G2, other) is None
    del G, sym
    gc.collect()
    assert not analysis._MEMO  # the entry went with its graph
