"""Fiedler vectors (reorder.spectral) against closed-form spectra, NetworkX, dense NumPy eigh and a
planted partition scored by scikit-learn; solver paths, fallbacks and degenerate sizes."""

from __future__ import annotations

import networkx as nx
import numpy as np
import pytest
import scipy.sparse as sp
from sklearn.metrics import adjusted_rand_score

from reorder.errors import InputError
from reorder.graph import from_edges, from_matrix
from reorder.spectral import (
    fiedler_vector,
    laplacian,
    level_structure_vector,
    normalized_laplacian,
    pseudo_peripheral_pair,
)

from conftest import grid2d


def path_graph(n):
    return from_edges(n, np.arange(n - 1), np.arange(1, n))


def cycle_graph(n):
    i = np.arange(n)
    return from_edges(n, i, (i + 1) % n)


def nx_to_graph(G):
    A = nx.to_scipy_sparse_array(G, nodelist=sorted(G.nodes()), weight=None, format="csr")
    return from_matrix(sp.csr_matrix(A))


def same_up_to_sign(x, y, atol):
    x = x / np.linalg.norm(x)
    y = y / np.linalg.norm(y)
    return min(np.abs(x - y).max(), np.abs(x + y).max()) <= atol


# ---------------------------------------------------------------------------------- closed forms


@pytest.mark.parametrize("n, solver", [(20, "dense"), (500, "eigsh"), (5000, "lobpcg-amg")])
def test_path_closed_form(n, solver):
    # Closed form (Chung 1997, standard): path P_n has λ₂ = 2 − 2cos(π/n), eigenvector ∝ cos(π(i+½)/n).
    r = fiedler_vector(path_graph(n), solver=solver, tol=1e-6)
    assert r.path == solver
    lam = 2 - 2 * np.cos(np.pi / n)
    assert abs(r.value - lam) <= 1e-6 * lam
    ref = np.cos(np.pi * (np.arange(n) + 0.5) / n)
    assert same_up_to_sign(r.vector, ref, atol=1e-3 / np.sqrt(n))


@pytest.mark.parametrize("n", [12, 400])
def test_cycle_closed_form(n):
    # Closed form: cycle C_n has λ₂ = λ₃ = 2 − 2cos(2π/n) (double); the vector lies in the span of
    # cos(2πi/n) and sin(2πi/n).
    r = fiedler_vector(cycle_graph(n), k=2)
    lam = 2 - 2 * np.cos(2 * np.pi / n)
    assert np.allclose(r.info["values"], [lam, lam], rtol=1e-6)
    i = np.arange(n)
    B = np.column_stack([np.cos(2 * np.pi * i / n), np.sin(2 * np.pi * i / n)])
    Q, _ = np.linalg.qr(B)
    for v in r.vectors.T:
        assert np.linalg.norm(v - Q @ (Q.T @ v)) < 1e-5


@pytest.mark.parametrize("k", [8, 40])
def test_grid_closed_form(k):
    # Closed form: the k × k grid graph (P_k □ P_k) has λ₂ = λ₃ = 2 − 2cos(π/k).
    g = from_matrix(grid2d(k))
    r = fiedler_vector(g, k=2)
    lam = 2 - 2 * np.cos(np.pi / k)
    assert np.allclose(r.info["values"], [lam, lam], rtol=1e-5)


def test_complete_graph_closed_form():
    # Closed form: K_n has λ₂ = n (multiplicity n − 1); normalized Laplacian: n / (n − 1).
    n = 9
    g = from_matrix(np.ones((n, n)))
    assert abs(fiedler_vector(g).value - n) < 1e-9
    assert abs(fiedler_vector(g, operator="normalized").value - n / (n - 1)) < 1e-9


def test_two_vertices():
    # One edge: L = [[1, -1], [-1, 1]], λ₂ = 2 with eigenvector (1, −1)/√2 (hand computation).
    r = fiedler_vector(path_graph(2))
    assert abs(r.value - 2.0) < 1e-12
    assert np.allclose(np.abs(r.vector), 1 / np.sqrt(2))
    assert r.vector[0] < 0  # sign convention: first nonzero entry negative


def test_one_vertex_is_trivial():
    r = fiedler_vector(from_edges(1, [], []))
    assert r.path == "trivial" and r.vector.shape == (1,) and r.value == 0.0


# ---------------------------------------------------------------------------------- references


def _irregular_graph(n, seed):
    # connected random geometric-like graph with a simple λ₂ (checked below against eigh)
    G = nx.random_geometric_graph(n, 0.25, seed=seed)
    G = G.subgraph(max(nx.connected_components(G), key=len)).copy()
    return nx.convert_node_labels_to_integers(G, ordering="sorted")


@pytest.mark.parametrize("operator", ["laplacian", "normalized"])
def test_agrees_with_networkx_and_numpy(operator):
    G = _irregular_graph(120, seed=3)
    g = nx_to_graph(G)
    # Reference 1: dense NumPy eigh of the same operator (built here from the adjacency matrix).
    W = nx.to_numpy_array(G, nodelist=sorted(G.nodes()))
    d = W.sum(1)
    M = np.diag(d) - W if operator == "laplacian" else np.eye(len(d)) - W / np.sqrt(np.outer(d, d))
    w, V = np.linalg.eigh(M)
    assert w[2] - w[1] > 1e-3 * w[1]  # simple λ₂, so the vector is determined up to sign
    # Reference 2: NetworkX fiedler_vector (TraceMIN with LU; normalized=True uses
    # I − D^{-1/2} W D^{-1/2}); a fixed seed, since its random start makes it vary between runs.
    ref_nx = nx.fiedler_vector(G, normalized=(operator == "normalized"), method="tracemin_lu", tol=1e-10,
                               seed=0)
    for solver in ("dense", "eigsh", "lobpcg-amg"):
        r = fiedler_vector(g, operator=operator, solver=solver, tol=1e-8)
        assert r.path == solver
        assert abs(r.value - w[1]) < 1e-6 * max(w[1], 1)
        assert same_up_to_sign(r.vector, V[:, 1], atol=1e-4), solver
        assert same_up_to_sign(r.vector, ref_nx, atol=1e-4), solver


def test_weighted_values_match_dense_weighted_laplacian():
    # Reference: NumPy eigh of D − W with W = |a_ij| (weights="values").
    rng = np.random.default_rng(5)
    A = sp.csr_matrix(grid2d(7))
    A.data = A.data * rng.uniform(0.5, 3.0, A.nnz)
    A = sp.csr_matrix((A + A.T) / 2)
    g = from_matrix(A, weights="values")
    W = np.abs(A.toarray())
    np.fill_diagonal(W, 0)
    w, V = np.linalg.eigh(np.diag(W.sum(1)) - W)
    r = fiedler_vector(g, weights="values")
    assert abs(r.value - w[1]) < 1e-8
    assert same_up_to_sign(r.vector, V[:, 1], atol=1e-6)
    assert np.allclose(laplacian(g, weights="values").toarray(), np.diag(W.sum(1)) - W)
    N = normalized_laplacian(g, weights="values").toarray()
    assert np.allclose(N, np.eye(49) - W / np.sqrt(np.outer(W.sum(1), W.sum(1))))
    # every solver, both operators, against NumPy eigh of the dense weighted operators
    wn, Vn = np.linalg.eigh(N)
    for operator, lam, vec in (("laplacian", w[1], V[:, 1]), ("normalized", wn[1], Vn[:, 1])):
        for solver in ("dense", "eigsh", "lobpcg-amg"):
            r = fiedler_vector(g, operator=operator, weights="values", solver=solver, tol=1e-8)
            assert r.path == solver
            assert abs(r.value - lam) < 1e-6 * lam
            assert same_up_to_sign(r.vector, vec, atol=1e-4), (operator, solver)


def test_planted_partition_recovered():
    # Two dense blocks, sparse between (p_in = 0.3, p_out = 0.01, far above the detection
    # threshold); score: scikit-learn adjusted_rand_score of the sign split against the planted labels.
    G = nx.planted_partition_graph(2, 300, 0.3, 0.01, seed=7)
    g = nx_to_graph(G)
    labels = np.repeat([0, 1], 300)
    for operator in ("laplacian", "normalized"):
        r = fiedler_vector(g, operator=operator)
        assert r.path == "dense" or r.path == "eigsh"
        assert adjusted_rand_score(labels, (r.vector > 0).astype(int)) >= 0.95
    r = fiedler_vector(g, solver="lobpcg-amg")
    assert adjusted_rand_score(labels, (r.vector > 0).astype(int)) >= 0.95


def test_k_vectors_orthonormal_and_ordered():
    # Reference: NumPy eigh of the 2-D grid Laplacian (values λ₂..λ₄).
    g = from_matrix(grid2d(30))
    L = laplacian(g).toarray()
    w = np.linalg.eigh(L)[0]
    for solver in ("eigsh", "lobpcg-amg"):
        r = fiedler_vector(g, k=3, solver=solver, tol=1e-6)
        assert r.vectors.shape == (900, 3)
        assert np.allclose(r.vectors.T @ r.vectors, np.eye(3), atol=1e-6)
        assert np.allclose(r.vectors.T @ np.ones(900), 0, atol=1e-6)
        assert np.allclose(r.info["values"], w[1:4], rtol=1e-4)
        np.testing.assert_array_equal(r.vectors[:, 0], r.vector)


# ---------------------------------------------------------------------------------- robustness


def test_forced_lobpcg_failure_takes_fallback_and_records_it():
    g = from_matrix(grid2d(25))
    r = fiedler_vector(g, solver="lobpcg", maxiter=1)
    first = r.info["attempts"][0]
    assert first["solver"] == "lobpcg" and not first["ok"] and "not converged" in first["error"]
    assert r.path == "eigsh"
    # Closed form (grid): λ₂ = 2 − 2cos(π/25)
    assert abs(r.value - (2 - 2 * np.cos(np.pi / 25))) < 1e-8
    # with only the last resort allowed, the level structure answers
    r = fiedler_vector(g, solver="lobpcg-amg", maxiter=1, fallbacks=("level-structure",))
    assert r.path == "level-structure" and not r.info["attempts"][0]["ok"]
    assert np.isfinite(r.vector).all() and abs(r.vector.sum()) < 1e-8  # orthogonal to constants
    assert r.value >= 2 - 2 * np.cos(np.pi / 25) - 1e-12  # Rayleigh quotient bounds λ₂ from above


def test_exception_in_solver_is_caught():
    g = from_matrix(grid2d(20))
    r = fiedler_vector(g, solver="lobpcg-amg", x0=np.ones(5))  # wrong warm-start shape raises inside
    assert not r.info["attempts"][0]["ok"] and "Error" in r.info["attempts"][0]["error"]
    assert r.path in ("eigsh", "lobpcg-amg", "level-structure")


def test_warm_start_converges_fast():
    g = from_matrix(grid2d(60))
    cold = fiedler_vector(g, solver="lobpcg-amg", k=2, tol=1e-4)
    warm = fiedler_vector(g, solver="lobpcg-amg", k=2, tol=1e-4, x0=cold.vectors)
    assert warm.iterations <= cold.iterations
    assert abs(warm.value - cold.value) < 1e-5 * cold.value


def test_deterministic():
    g = from_matrix(grid2d(70))
    a = fiedler_vector(g, seed=4)
    b = fiedler_vector(g, seed=4)
    np.testing.assert_array_equal(a.vector, b.vector)


def test_bad_options_are_input_errors():
    g = path_graph(5)
    with pytest.raises(InputError):
        fiedler_vector(g, operator="signless")
    with pytest.raises(InputError):
        fiedler_vector(g, weights="abs")
    with pytest.raises(InputError):
        fiedler_vector(g, solver="magic")


def test_level_structure_and_peripheral_pair_on_path():
    # Textbook fact: the ends of a path are its peripheral vertices, at distance n − 1.
    g = path_graph(30)
    s, e, ls, le = pseudo_peripheral_pair(g, start=13)
    assert {s, e} == {0, 29} and ls.max() == 29
    x = level_structure_vector(g, start=13)
    assert sorted(x.tolist()) == list(range(30))
