"""OrderedFactor and solve_sequence: solutions against NumPy's dense solver and SciPy's spsolve.

References named beside each check: ``numpy.linalg.solve`` (LAPACK LU with partial pivoting) on small
matrices, ``scipy.sparse.linalg.spsolve`` (SuperLU with its own ordering and partial pivoting) on larger
ones, SciPy SuperLU's own count of L for the fill, and the textbook fact that a symmetric saddle-point
matrix [[K, Bᵀ], [B, 0]] with B of full row rank is indefinite and nonsingular.
"""

from __future__ import annotations

import warnings

import numpy as np
import pytest
import scipy.sparse as sp
from scipy.sparse.linalg import spsolve

from reorder.errors import InputError
from reorder.factor import OrderedFactor, PivotingWarning
from reorder.sequence import solve_sequence

from conftest import grid2d, grid3d, m_matrix, random_pattern, superlu_nnz_l


def _rel(x, ref):
    return np.linalg.norm(x - ref) / np.linalg.norm(ref)


@pytest.mark.parametrize("method", ["nd", "mindegree", "rcm", "natural"])
def test_small_against_dense_solver(method):
    A = m_matrix(random_pattern(120, 0.04, 1))  # SPD (diagonally dominant M-matrix)
    rng = np.random.default_rng(0)
    B = rng.standard_normal((120, 3))
    with warnings.catch_warnings():
        warnings.simplefilter("error", PivotingWarning)  # SPD: no fallback
        F = OrderedFactor(A, method)
    X = F.solve(B)
    ref = np.linalg.solve(A.toarray(), B)  # reference: NumPy dense LU
    assert _rel(X, ref) < 1e-10 and F.residuals.shape == (3,) and F.residuals.max() < 1e-12
    x1 = F.solve(B[:, 1])  # one right-hand side, mapped the same way
    assert _rel(x1, ref[:, 1]) < 1e-10 and not F.pivoting


def test_larger_against_spsolve_and_fill_relation():
    A = grid3d(12)  # 1728 rows, SPD 7-point Laplacian
    b = np.random.default_rng(1).standard_normal(A.shape[0])
    F = OrderedFactor(A, "nd", seed=3)
    x = F.solve(b)
    assert _rel(x, spsolve(A.tocsc(), b)) < 1e-10  # reference: SciPy spsolve
    rep = F.report()
    # a Laplacian's fill cannot cancel: SuperLU's L (unit diagonal) holds exactly the symbolic count
    assert rep["nnz_l"] == rep["predicted_nnz_l"] == superlu_nnz_l(A[F.perm][:, F.perm])
    assert rep["order_seconds"] > 0 and rep["factor_seconds"] > 0 and rep["factor_bytes"] > 12 * rep["n"]


def test_given_permutation_and_mapping():
    A = grid2d(9, 7)
    p = np.random.default_rng(5).permutation(A.shape[0])
    F = OrderedFactor(A, perm=p)
    assert F.method == "given" and np.array_equal(F.perm, p)
    b = np.arange(A.shape[0], dtype=float)
    assert _rel(F.solve(b), np.linalg.solve(A.toarray(), b)) < 1e-10  # reference: NumPy dense LU
    with pytest.raises(InputError, match="permutation has 62 entries"):
        OrderedFactor(A, perm=p[1:])
    with pytest.raises(InputError, match="rows"):
        F.solve(np.ones(5))


def test_refactor_equals_fresh_and_pattern_change_rejected():
    A = grid2d(15)
    rng = np.random.default_rng(2)
    F = OrderedFactor(A, "nd-fast")
    for _ in range(3):
        s = sp.diags(rng.uniform(0.5, 2.0, A.shape[0]))
        A2 = (s @ A @ s + sp.diags(rng.uniform(0, 1, A.shape[0]))).tocsr()  # same pattern, new values
        b = rng.standard_normal(A.shape[0])
        x_re = F.refactor(A2).solve(b)
        fresh = OrderedFactor(A2, perm=F.perm)
        np.testing.assert_allclose(x_re, fresh.solve(b), rtol=0, atol=1e-13 * np.abs(x_re).max())
        assert _rel(x_re, np.linalg.solve(A2.toarray(), b)) < 1e-10  # reference: NumPy dense LU
    assert F.factorizations == 4
    C = A.tolil()
    C[0, 5] = C[5, 0] = -0.1
    with pytest.raises(InputError, match="pattern differs"):
        F.refactor(C.tocsr())
    with pytest.raises(InputError, match="rows"):
        F.refactor(grid2d(4))


def test_pattern_only_then_values():
    A = grid2d(8)
    F = OrderedFactor(A != 0, "mindegree")  # a boolean pattern: ordered, not factored
    with pytest.raises(InputError, match="nothing factored"):
        F.solve(np.ones(64))
    x = F.factor(A).solve(np.ones(64))
    assert _rel(x, np.linalg.solve(A.toarray(), np.ones(64))) < 1e-10  # reference: NumPy dense LU


def _saddle(nk=60, nb=12, seed=0):
    rng = np.random.default_rng(seed)
    K = m_matrix(random_pattern(nk, 0.08, seed))
    Bm = sp.random(nb, nk, density=0.2, random_state=rng) + sp.eye(nb, nk)  # full row rank
    return sp.bmat([[K, Bm.T], [Bm, None]]).tocsr()


@pytest.mark.parametrize("kind", ["saddle", "zero_diagonal", "nonsymmetric", "negative_pivot"])
def test_not_spd_falls_back_with_warning(kind):
    if kind == "saddle":
        A = _saddle()  # indefinite, zero block on the diagonal (textbook)
    elif kind == "zero_diagonal":
        A = sp.csr_matrix(grid2d(8) + sp.diags(np.r_[-4.0, np.zeros(63)]))  # a_00 = 0 (not stored)
    elif kind == "nonsymmetric":
        A = grid2d(8).tolil()
        A[0, 1] = -3.0  # values no longer symmetric
        A = A.tocsr()
    else:  # positive diagonal, symmetric, indefinite: [[4, -5], [-5, 4]] has eigenvalues -1 and 9
        A = grid2d(8).tolil()
        A[0, 1] = A[1, 0] = -5.0
        A = A.tocsr()
        assert np.linalg.eigvalsh(A.toarray()).min() < 0  # reference: NumPy's symmetric eigensolver
    b = np.random.default_rng(4).standard_normal(A.shape[0])
    with pytest.warns(PivotingWarning) as rec:
        F = OrderedFactor(A, "nd")
    assert len(rec) == 1 and "\n" not in str(rec[0].message) and "partial pivoting" in str(rec[0].message)
    x = F.solve(b)
    assert F.pivoting and _rel(x, np.linalg.solve(A.toarray(), b)) < 1e-10  # reference: NumPy dense LU
    assert F.residuals.max() < 1e-10


def test_singular_matrix_is_an_input_error():
    A = sp.csr_matrix(np.array([[1.0, 1.0], [1.0, 1.0]]))
    with pytest.raises(InputError, match="singular"), warnings.catch_warnings():
        warnings.simplefilter("ignore")
        OrderedFactor(A, "natural")


def test_sequence_against_spsolve(tmp_path):
    A = grid2d(20)
    rng = np.random.default_rng(7)
    mats = []
    for _ in range(4):
        s = sp.diags(rng.uniform(0.5, 2.0, A.shape[0]))
        mats.append((s @ A @ s).tocsr())
    out = solve_sequence(mats, "nd-fast", seed=1)
    assert out["count"] == 4 and out["ratio"] > 0
    for row, M in zip(out["rows"], mats):
        assert row["difference"] < 1e-10 and row["error"] < 1e-10  # reference: SciPy spsolve and x*
        assert row["residual"] < 1e-12
    C = mats[1].tolil()
    C[0, 7] = C[7, 0] = -0.5
    with pytest.raises(InputError, match="#1: the sparsity pattern differs"):
        solve_sequence([mats[0], C.tocsr()], "rcm", baseline=False)


# --------------------------------------------------------------------------------------------------
# command line
# --------------------------------------------------------------------------------------------------
def _cli(capsys, *args):
    from reorder.cli import main

    code = main([str(a) for a in args])
    out, err = capsys.readouterr()
    return code, out, err


def test_cli_solve_writes_solution(capsys, tmp_path):
    import json
    import scipy.io

    from reorder.io import write_matrix

    A = grid2d(14)
    f = tmp_path / "plate.mtx"
    write_matrix(f, A)
    b = np.linspace(1.0, 2.0, A.shape[0])
    np.save(tmp_path / "b.npy", b)
    for out_name in ("x.npy", "x.mtx"):
        code, out, err = _cli(capsys, "solve", f, "-m", "nd-fast", "--rhs", tmp_path / "b.npy",
                              "--solution", tmp_path / out_name, "--json")
        assert code == 0, err
        d = json.loads(out)
        x = np.load(tmp_path / out_name) if out_name.endswith(".npy") else scipy.io.mmread(str(tmp_path / out_name)).ravel()
        assert _rel(x, np.linalg.solve(A.toarray(), b)) < 1e-10  # reference: NumPy dense LU
        for key in ("order_seconds", "factor_seconds", "solve_seconds", "nnz_l", "predicted_nnz_l",
                    "factor_bytes", "residuals"):
            assert key in d
    code, out, err = _cli(capsys, "solve", f)  # table, generated right-hand side, default method
    assert code == 0 and "residual" in out and "nnz(L)" in out and "error against x*" in out


def test_cli_solve_indefinite_warns(capsys, tmp_path):
    from reorder.io import write_matrix

    f = tmp_path / "saddle.mtx"
    write_matrix(f, _saddle())
    code, out, err = _cli(capsys, "solve", f, "-m", "mindegree", "--json")
    assert code == 0 and err.count("\n") == 1 and "warning" in err and "partial pivoting" in err
    import json

    assert json.loads(out)["pivoting"] and max(json.loads(out)["residuals"]) < 1e-10


def test_cli_permcheck_and_sweep(capsys, tmp_path):
    import json

    from reorder.io import write_matrix, write_permutation
    from reorder.orderings import order
    from reorder.graph import from_matrix

    A = grid2d(16)
    f = tmp_path / "plate.mtx"
    write_matrix(f, A)
    p = order(from_matrix(A), "nd", seed=0).perm
    # headerless, 1-based, old-to-new: the check guesses both from the file and the fill
    raw = tmp_path / "raw.txt"
    raw.write_text("\n".join(str(v + 1) for v in np.argsort(p)) + "\n")
    code, out, err = _cli(capsys, "permcheck", f, raw, "--json")
    assert code == 0, err
    d = json.loads(out)
    assert d["direction"] == "old-to-new" and d["base"] == 1 and d["direction_from"].startswith("guess")
    # reference: SciPy SuperLU's own L in natural order without pivoting (a Laplacian: no cancellation)
    assert d["nnz_factor"] == superlu_nnz_l(A[p][:, p]) < d["nnz_factor_natural"] == superlu_nnz_l(A)
    bad = tmp_path / "bad.txt"
    write_permutation(bad, np.arange(10))
    code, out, err = _cli(capsys, "permcheck", f, bad)
    assert code == 2 and "does not fit" in err and err.count("\n") == 1
    # a sequence of three matrices with one pattern, and one with another pattern
    rng = np.random.default_rng(0)
    for k in range(3):
        s = sp.diags(rng.uniform(0.5, 2.0, A.shape[0]))
        write_matrix(tmp_path / f"step_{k}.mtx", s @ A @ s)
    code, out, err = _cli(capsys, "sweep", str(tmp_path / "step_*.mtx"), "-m", "rcm", "--json")
    assert code == 0, err
    d = json.loads(out)
    assert d["count"] == 3 and all(r["difference"] < 1e-10 for r in d["rows"])  # reference: SciPy spsolve
    C = A.tolil()
    C[0, 9] = C[9, 0] = -0.2
    write_matrix(tmp_path / "step_9.mtx", C.tocsr())
    code, out, err = _cli(capsys, "sweep", str(tmp_path / "step_*.mtx"), "-m", "rcm", "--no-baseline")
    assert code == 2 and "pattern differs" in err and err.count("\n") == 1
    code, out, err = _cli(capsys, "sweep", str(tmp_path / "none_*.mtx"))
    assert code == 2 and "no file matches" in err


def test_readme_section_is_executed():
    # tests/test_readme.py runs every python block of the README; this one checks that the section on
    # handing the ordering to a solver holds runnable blocks that exercise what it documents.
    import re
    from pathlib import Path

    text = (Path(__file__).resolve().parent.parent / "README.md").read_text(encoding="utf-8")
    start = text.index("## Handing the ordering to a solver")
    section = text[start:text.index("\n## ", start + 3)]
    blocks = re.findall(r"```python\n(.*?)```", section, flags=re.S)
    assert len(blocks) >= 3
    assert any('permc_spec="NATURAL"' in b and "x[p] =" in b for b in blocks)
    assert any("OrderedFactor" in b and "refactor" in b for b in blocks)
    assert any('direction="old-to-new"' in b and "base=1" in b for b in blocks)
    import reorder

    assert reorder.OrderedFactor.__name__ == "OrderedFactor" and callable(reorder.solve_sequence)


def test_spd_not_diagonally_dominant_reads_the_pivots():
    # G^T G + I is SPD (textbook) but not diagonally dominant: the pivots are read from U, all positive
    G = sp.random(80, 60, density=0.08, random_state=np.random.default_rng(3))
    A = (G.T @ G + sp.identity(60)).tocsr()
    F = OrderedFactor(A, "mindegree", factor=False)
    assert not F._dominant(A)
    with warnings.catch_warnings():
        warnings.simplefilter("error", PivotingWarning)
        x = F.factor(A).solve(np.ones(60))
    assert _rel(x, np.linalg.solve(A.toarray(), np.ones(60))) < 1e-10  # reference: NumPy dense LU
