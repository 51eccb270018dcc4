"""Graph construction, components and subgraphs, against NetworkX and SciPy."""

from __future__ import annotations

import networkx as nx
import numpy as np
import scipy.sparse as sp

from reorder.graph import component_lists, components, from_edges, from_matrix, subgraph

from conftest import random_pattern


def test_symmetrized_pattern_without_diagonal():
    A = sp.csr_matrix(np.array([[1.0, 2, 0], [0, 3, 0], [0, 0, 0]]))
    g = from_matrix(A)
    assert not g.info["pattern_symmetric"]
    assert g.n == 3 and g.nedges == 1
    assert g.neighbors(0).tolist() == [1] and g.neighbors(1).tolist() == [0]
    assert g.neighbors(2).size == 0


def test_explicit_zero_is_an_edge():
    A = sp.csr_matrix((np.array([0.0, 0.0]), (np.array([0, 1]), np.array([1, 0]))), shape=(2, 2))
    assert from_matrix(A).nedges == 1


def test_value_weights_symmetric():
    A = sp.csr_matrix(np.array([[4.0, -2, 0], [-1, 4, 3], [0, 3, 4]]))
    g = from_matrix(A, weights="values")
    W = g.to_csr(weighted=True).toarray()
    np.testing.assert_allclose(W, W.T)
    np.testing.assert_allclose(W[0, 1], 1.5)


def test_matrix_not_modified():
    A = sp.csr_matrix(np.array([[4.0, -1], [-1, 4]]))
    before = A.toarray().copy()
    from_matrix(A)
    np.testing.assert_array_equal(A.toarray(), before)


def test_components_match_networkx():
    # Reference: networkx.connected_components.
    P = random_pattern(120, 0.01, 4)
    g = from_matrix(P)
    G = nx.from_scipy_sparse_array(g.to_csr())
    ref = sorted(sorted(c) for c in nx.connected_components(G))
    k, labels = components(g)
    assert k == len(ref)
    mine = [c.tolist() for c in component_lists(g)]
    assert sorted(mine) == ref
    assert [c[0] for c in mine] == sorted(c[0] for c in mine)  # ordered by smallest vertex


def test_subgraph_matches_networkx():
    P = random_pattern(60, 0.08, 9)
    g = from_matrix(P)
    verts = np.random.default_rng(1).permutation(60)[:25]
    s = subgraph(g, verts)
    G = nx.from_scipy_sparse_array(g.to_csr())
    H = nx.relabel_nodes(G.subgraph(verts.tolist()), {int(v): i for i, v in enumerate(verts)})
    ref = nx.to_scipy_sparse_array(H, nodelist=range(25)).toarray() != 0
    assert np.array_equal(s.to_csr().toarray() != 0, ref)
    assert all(np.all(np.diff(s.neighbors(v)) > 0) for v in range(s.n))


def test_from_edges_ignores_loops_and_duplicates():
    g = from_edges(4, [0, 0, 1, 2, 3], [1, 1, 0, 2, 0])
    assert g.nedges == 2


def test_every_input_format_gives_the_same_graph_as_dense_numpy():
    # reference: NumPy on the dense structure, (S | S.T) without the diagonal. CSR/CSC in canonical
    # form take the copy-free path, COO, unsorted CSR and sparse arrays the general one; explicit
    # zeros are structural entries either way
    # (a diagonal entry in some rows, in every row, in none: the copy-free path counts them per row
    # only in the first case)
    rng = np.random.default_rng(7)
    for sym, diag in ((False, "some"), (True, "some"), (True, "all"), (False, "none")):
        n = 60
        rows, cols = rng.integers(0, n, 400), rng.integers(0, n, 400)
        if sym:
            rows, cols = np.concatenate((rows, cols)), np.concatenate((cols, rows))
        if diag == "all":
            rows, cols = np.concatenate((rows, np.arange(n))), np.concatenate((cols, np.arange(n)))
        elif diag == "none":
            rows, cols = rows[rows != cols], cols[rows != cols]
        vals = rng.choice([0.0, 1.0, -2.0], rows.size)
        coo = sp.coo_matrix((vals, (rows, cols)), shape=(n, n))
        S = np.zeros((n, n), dtype=bool)
        S[rows, cols] = True
        ref = (S | S.T) & ~np.eye(n, dtype=bool)
        csr = sp.csr_matrix(coo)  # duplicates summed: canonical
        unsorted = sp.csr_matrix((csr.data[::-1].copy(), csr.indices.copy(), csr.indptr.copy()), shape=(n, n))
        for i in range(n):  # reverse each row's entries: unsorted indices
            a, b = unsorted.indptr[i], unsorted.indptr[i + 1]
            unsorted.indices[a:b] = csr.indices[a:b][::-1]
        unsorted.has_sorted_indices = False
        for form in (csr, sp.csc_matrix(coo), coo, unsorted, sp.csr_array(csr), sp.csc_array(coo)):
            g = from_matrix(form)
            assert np.array_equal(g.to_csr().toarray() != 0, ref), type(form)
            assert g.info["pattern_symmetric"] == bool(np.array_equal(S & ~np.eye(n, dtype=bool),
                                                                      (S & ~np.eye(n, dtype=bool)).T))
            for v in range(n):
                nb = g.neighbors(v)
                assert np.all(np.diff(nb) > 0)
            assert g.indptr.dtype == np.int64 and g.indices.dtype == np.int64
    # the graph never shares memory with the matrix
    g = from_matrix(csr)
    assert not np.shares_memory(g.indices, csr.indices) and not np.shares_memory(g.indptr, csr.indptr)
