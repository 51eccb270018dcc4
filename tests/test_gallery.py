"""The gallery's matrices against outside references: pyamg's gallery (poisson, stencil_grid) and
the closed-form spectrum of the grid Laplacian (textbook: eigenvalues 4 sin²(iπ/(2(k+1))) per axis,
summed over the axes)."""

from __future__ import annotations

import numpy as np
import pyamg
import pytest
import scipy.sparse as sp

from reorder.gallery import grid, grid2d, grid3d, m_matrix
from reorder.graph import from_matrix


@pytest.mark.parametrize("dims", [(7,), (5, 6), (4, 3, 5)])
def test_smallest_stencils_are_pyamg_poisson_and_have_the_closed_form_spectrum(dims):
    A = grid(*dims)
    assert (A != pyamg.gallery.poisson(dims, format="csr")).nnz == 0
    axis = [4 * np.sin(np.arange(1, k + 1) * np.pi / (2 * (k + 1))) ** 2 for k in dims]
    expected = np.sort(sum(np.ix_(*axis)).ravel())  # broadcast sum over the axes
    np.testing.assert_allclose(np.linalg.eigvalsh(A.toarray()), expected, atol=1e-10)


def test_full_stencils_are_pyamg_stencil_grids():
    nine = -np.ones((3, 3))
    nine[1, 1] = 8
    assert (grid2d(6, 4, points=9) != pyamg.gallery.stencil_grid(nine, (6, 4), format="csr")).nnz == 0
    s27 = -np.ones((3, 3, 3))
    s27[1, 1, 1] = 26
    assert (grid3d(4, points=27) != pyamg.gallery.stencil_grid(s27, (4, 4, 4), format="csr")).nnz == 0
    with pytest.raises(ValueError):
        grid(3, 3, points=7)


def test_m_matrix_has_the_symmetric_pattern_and_is_spd():
    # a nonsymmetric pattern with an explicit zero (structural) and a diagonal entry (ignored)
    A = sp.csr_matrix((np.array([1.0, 0.0, 5.0]), (np.array([0, 2, 1]), np.array([1, 3, 1]))), shape=(4, 4))
    M = m_matrix(A).toarray()
    expected = np.array([[2, -1, 0, 0], [-1, 2, 0, 0], [0, 0, 2, -1], [0, 0, -1, 2]], dtype=float)
    np.testing.assert_array_equal(M, expected)
    G = grid2d(5)
    assert (m_matrix(G) != m_matrix(from_matrix(G))).nnz == 0
    np.linalg.cholesky(m_matrix(G).toarray())  # SPD (NumPy raises otherwise)
