"""The factorization cost model: its symbolic counts against SciPy SuperLU and textbook facts, the
prediction's bookkeeping, and the per-user cache of the measured machine rates."""

from __future__ import annotations

import json

import numpy as np
import pytest
import scipy.sparse as sp

from reorder import cost
from reorder.analysis import symbolic_factor
from reorder.graph import from_matrix

from conftest import grid2d, grid3d, m_matrix, superlu_nnz_l


def test_counts_match_superlu_and_supernode_facts():
    A = m_matrix(grid3d(6))
    g = from_matrix(A)
    perm = np.random.default_rng(3).permutation(g.n)
    c = cost.factor_counts(symbolic_factor(g, perm))
    # nnz(L) against SciPy SuperLU's count in natural order of the permuted matrix
    assert c.nnz_factor == superlu_nnz_l(sp.csc_matrix(A[perm][:, perm]))
    assert 0 <= c.ops_thin <= c.ops and 1 <= c.supernodes <= g.n


def test_supernodes_of_path_and_clique():
    # textbook facts (from memory): a tridiagonal factor has columns of counts 2, ..., 2, 1, so only
    # the last two columns form a supernode; a dense factor is one supernode
    n = 7
    path = from_matrix(sp.diags([1.0, 1.0], [-1, 1], shape=(n, n)))
    c = cost.factor_counts(symbolic_factor(path))
    assert (c.nnz_factor, c.supernodes, c.ops) == (2 * n - 1, n - 1, 4.0 * (n - 1) + 1)
    assert c.ops_thin == 4.0 * (n - 2)
    clique = from_matrix(sp.csr_matrix(np.ones((n, n))))
    c = cost.factor_counts(symbolic_factor(clique))
    assert (c.supernodes, c.ops_thin, c.nnz_factor) == (1, 0.0, n * (n + 1) // 2)


def test_prediction_grows_with_fill():
    g = from_matrix(grid2d(20))
    natural = cost.predict_seconds(symbolic_factor(g), cost.DEFAULT_RATES)
    rcm = sp.csgraph.reverse_cuthill_mckee(g.to_csr(), symmetric_mode=True)  # SciPy's RCM
    banded = cost.predict_seconds(symbolic_factor(g, rcm), cost.DEFAULT_RATES)
    assert 0 < banded < natural


def test_rates_cached_per_user(tmp_path, monkeypatch):
    monkeypatch.setenv("REORDER_CACHE_DIR", str(tmp_path))
    monkeypatch.delenv("REORDER_CALIBRATE", raising=False)
    monkeypatch.setattr(cost, "_RATES", None)
    r = cost.machine_rates()
    assert r.source == "measured" and r.ops > 0
    data = json.loads((tmp_path / "factor_rates.json").read_text())
    assert data["version"] == cost.MODEL_VERSION and data["rates"]["ops"] == pytest.approx(r.ops)
    monkeypatch.setattr(cost, "_RATES", None)
    again = cost.machine_rates()
    assert again.source == "cache" and again.ops == pytest.approx(r.ops)
    monkeypatch.setenv("REORDER_CALIBRATE", "0")
    assert cost.machine_rates() == cost.DEFAULT_RATES


def test_cache_never_replaces_a_non_regular_file(tmp_path, monkeypatch):
    monkeypatch.setenv("REORDER_CACHE_DIR", str(tmp_path))
    (tmp_path / "factor_rates.json").mkdir()
    cost._write_cache(cost.cache_file(), {"version": cost.MODEL_VERSION})
    assert (tmp_path / "factor_rates.json").is_dir()
    assert list(tmp_path.iterdir()) == [tmp_path / "factor_rates.json"]  # no temporary left behind
