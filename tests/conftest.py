"""Shared fixtures. The grids and M-matrices come from :mod:`reorder.gallery` (textbook stencils;
tests/test_gallery.py checks them against pyamg's gallery and closed-form spectra)."""

from __future__ import annotations

import numpy as np
import pytest
import scipy.sparse as sp
from scipy.sparse.linalg import splu

from reorder.gallery import grid2d, grid3d, m_matrix  # noqa: F401  (shared by the tests)


def superlu_nnz_l(B: sp.spmatrix) -> int:
    """nnz(L) incl. diagonal from SciPy SuperLU in natural order without pivoting (reference;
    NOTES.md item 4: explicit zeros removed before counting)."""
    lu = splu(sp.csc_matrix(B), permc_spec="NATURAL", diag_pivot_thresh=0.0,
              options={"SymmetricMode": True})
    L = lu.L.tocsc()
    L.eliminate_zeros()
    assert np.array_equal(lu.perm_r, np.arange(B.shape[0]))  # no pivoting happened
    return L.nnz


def random_pattern(n: int, density: float, seed: int) -> sp.csr_matrix:
    rng = np.random.default_rng(seed)
    R = sp.random(n, n, density=density, random_state=rng, format="csr")
    return sp.csr_matrix(R + R.T)


@pytest.fixture(autouse=True, scope="session")
def _private_cost_cache(tmp_path_factory):
    """The machine rates of reorder.cost are measured once per session into a private cache folder
    (never the user's), also for CLI subprocesses, which inherit the environment."""
    import os

    old = os.environ.get("REORDER_CACHE_DIR")
    os.environ["REORDER_CACHE_DIR"] = str(tmp_path_factory.mktemp("cost-cache"))
    yield
    if old is None:
        os.environ.pop("REORDER_CACHE_DIR", None)
    else:
        os.environ["REORDER_CACHE_DIR"] = old


@pytest.fixture
def tmp_cwd(tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    return tmp_path
