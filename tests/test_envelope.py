"""The `spectral` envelope ordering and its Sloan refinement (reorder.orderings.envelope).

Profiles are measured by reorder.analysis (itself tested against NumPy) and compared with the natural
order and SciPy's reverse Cuthill–McKee computed here; the Sloan kernel's profile function is checked
against a direct NumPy computation on the permuted dense matrix.
"""

from __future__ import annotations

import numpy as np
import pyamg
import pytest
import scipy.sparse as sp
from scipy.sparse.csgraph import reverse_cuthill_mckee

from reorder.analysis import bandwidth_profile
from reorder.graph import from_edges, from_matrix
from reorder.orderings import available, order
from reorder.orderings.envelope import profile_of, sloan_order, spectral_sort

from conftest import grid2d, grid3d, random_pattern


def dense_profile(A, perm):
    # Direct definition on the permuted dense matrix: Σ_i (i − first nonzero column of row i).
    B = (np.asarray(sp.csr_matrix(A)[perm][:, perm].todense()) != 0) | np.eye(len(perm), dtype=bool)
    return int(sum(i - np.flatnonzero(B[i])[0] for i in range(B.shape[0])))


def shuffled(A, seed):
    p = np.random.default_rng(seed).permutation(A.shape[0])
    return sp.csr_matrix(A[p][:, p])


def p2_like(k):
    # P2-like stand-in: 9-point couplings on the midpoint-refined (2k+1)² lattice (dense local blocks)
    return pyamg.gallery.stencil_grid(np.ones((3, 3)), (2 * k + 1, 2 * k + 1)).tocsr()


MESHES = {
    "grid2d": lambda: shuffled(grid2d(30), 1),
    "grid2d-9pt": lambda: shuffled(pyamg.gallery.stencil_grid(np.ones((3, 3)), (30, 30)).tocsr(), 2),
    "grid3d-27pt": lambda: shuffled(pyamg.gallery.stencil_grid(np.ones((3, 3, 3)), (9, 9, 9)).tocsr(), 3),
    "grid3d-7pt": lambda: shuffled(grid3d(10), 4),
    "p2-like": lambda: shuffled(p2_like(12), 5),
}


def test_registered():
    assert "spectral" in available()


def test_profile_kernel_matches_definition():
    A = random_pattern(60, 0.05, 3)
    g = from_matrix(A)
    perm = np.random.default_rng(1).permutation(60)
    assert profile_of(g, perm) == dense_profile(A, perm) == bandwidth_profile(g, perm)[1]


@pytest.mark.parametrize("name", sorted(MESHES))
def test_valid_and_below_natural_and_rcm(name):
    A = MESHES[name]()
    g = from_matrix(A)
    o = order(g, "spectral")
    assert sorted(o.perm.tolist()) == list(range(g.n))
    prof = bandwidth_profile(g, o.perm)[1]
    # Baselines: the (shuffled) file order and SciPy's reverse_cuthill_mckee.
    nat = bandwidth_profile(g)[1]
    rcm = bandwidth_profile(g, reverse_cuthill_mckee(sp.csr_matrix(A), symmetric_mode=True))[1]
    assert prof < nat
    assert prof <= rcm
    assert o.info["profile"] == prof
    assert o.info["winner"] in o.info["profiles"]
    for key in ("fiedler_path", "fiedler_residual", "lambda2"):
        assert key in o.info


def test_refinement_beats_plain_sort_on_3d_and_p2():
    # The observation: the plain Fiedler sort is weak on 3-D meshes and P2 elements.
    for name in ("grid3d-27pt", "p2-like"):
        g = from_matrix(MESHES[name]())
        plain = order(g, "spectral", refine=False)
        refined = order(g, "spectral")
        assert plain.info["winner"] == "spectral"
        assert bandwidth_profile(g, refined.perm)[1] < bandwidth_profile(g, plain.perm)[1]


def test_deterministic():
    g = from_matrix(MESHES["grid2d-9pt"]())
    a = order(g, "spectral", seed=3)
    b = order(g, "spectral", seed=3)
    np.testing.assert_array_equal(a.perm, b.perm)


def test_plain_sort_is_fiedler_sort_on_path():
    # Textbook fact: the Fiedler vector of a path is monotone (∝ cos(π(i+½)/n)), so sorting it
    # gives the path order or its reverse, profile n − 1.
    n = 50
    rng = np.random.default_rng(0)
    lab = rng.permutation(n)
    g = from_edges(n, lab[:-1], lab[1:])
    o = order(g, "spectral", refine=False)
    assert np.array_equal(o.perm, lab) or np.array_equal(o.perm, lab[::-1])
    assert bandwidth_profile(g, o.perm)[1] == n - 1


def test_sloan_kernel_numbers_every_vertex_even_if_disconnected():
    # two paths; the kernel restarts in the second component
    g = from_edges(8, [0, 1, 2, 4, 5, 6], [1, 2, 3, 5, 6, 7])
    p = sloan_order(g, 0, np.arange(8, 0, -1, dtype=float))
    assert sorted(p.tolist()) == list(range(8))
    assert p[0] == 0


def test_spectral_sort_ties_by_index():
    np.testing.assert_array_equal(spectral_sort(np.array([0.5, -1.0, 0.5, -1.0])), [1, 3, 0, 2])


def test_disconnected_isolated_and_tiny_graphs_through_registry():
    A = sp.block_diag([grid2d(12), sp.csr_matrix((3, 3)), grid2d(5), sp.csr_matrix(np.array([[0, 1], [1, 0]]))]).tocsr()
    g = from_matrix(A)
    o = order(g, "spectral")
    assert sorted(o.perm.tolist()) == list(range(g.n))
    assert o.info["components"] == 1 + 3 + 1 + 1
    for n in (0, 1, 2, 3):
        gg = from_edges(n, np.arange(max(n - 1, 0)), np.arange(1, n)) if n else from_edges(0, [], [])
        assert sorted(order(gg, "spectral").perm.tolist()) == list(range(n))


def test_forced_solver_failure_still_orders():
    g = from_matrix(MESHES["grid2d"]())
    o = order(g, "spectral", solver="lobpcg-amg", maxiter=1, fallbacks=("level-structure",))
    assert o.info["fiedler_path"] == "level-structure"
    assert not o.info["fiedler_attempts"][0]["ok"]
    assert sorted(o.perm.tolist()) == list(range(g.n))


@pytest.mark.parametrize("operator", ["laplacian", "normalized"])
def test_operator_and_weights_options(operator):
    A = MESHES["p2-like"]()
    A = sp.csr_matrix(A.multiply(np.random.default_rng(2).uniform(1, 5, A.shape[0])[:, None]))
    A = sp.csr_matrix(A + A.T)
    g = from_matrix(A, weights="values")
    o = order(g, "spectral", operator=operator, weights="values")
    assert o.info["operator"] == operator and o.info["weights"] == "values"
    assert sorted(o.perm.tolist()) == list(range(g.n))
