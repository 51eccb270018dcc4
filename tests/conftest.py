"""Shared fixtures: small matrices built from textbook stencils (no project code involved)."""

from __future__ import annotations

import numpy as np
import pytest
import scipy.sparse as sp
from scipy.sparse.linalg import splu


def grid2d(k: int, m: int | None = None) -> sp.csr_matrix:
    """5-point Laplacian on a k × m grid (Kronecker sum of 1-D second differences)."""
    m = k if m is None else m
    Tk = sp.diags([-1.0, 2.0, -1.0], [-1, 0, 1], shape=(k, k))
    Tm = sp.diags([-1.0, 2.0, -1.0], [-1, 0, 1], shape=(m, m))
    return sp.csr_matrix(sp.kron(Tk, sp.eye(m)) + sp.kron(sp.eye(k), Tm))


def grid3d(k: int) -> sp.csr_matrix:
    """7-point Laplacian on a k × k × k grid."""
    T = sp.diags([-1.0, 2.0, -1.0], [-1, 0, 1], shape=(k, k))
    I = sp.eye(k)
    return sp.csr_matrix(sp.kron(sp.kron(T, I), I) + sp.kron(sp.kron(I, T), I) + sp.kron(sp.kron(I, I), T))


def m_matrix(pattern) -> sp.csr_matrix:
    """SPD M-matrix with the symmetric pattern of ``pattern``: off-diagonals -1, diagonal degree + 1."""
    P = sp.csr_matrix(pattern, copy=True)
    P = (abs(P) + abs(P).T).tocsr()
    P.setdiag(0)
    P.eliminate_zeros()
    P.data[:] = -1.0
    deg = -np.asarray(P.sum(axis=1)).ravel()
    return sp.csr_matrix(P + sp.diags(deg + 1.0))


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
