"""The command line: contract commands, round trips, and one-line errors with exit code 2."""

from __future__ import annotations

import json
import subprocess
import sys

import numpy as np
import pytest
import scipy.io
import scipy.sparse as sp

from reorder.analysis import analyse
from reorder.cli import main
from reorder.io import read_matrix, read_permutation

from conftest import grid2d, m_matrix


@pytest.fixture
def plate(tmp_path):
    """A small thermal-plate-like 5-point matrix written as symmetric Matrix Market."""
    p = tmp_path / "plate.mtx"
    scipy.io.mmwrite(str(p), sp.tril(grid2d(12)).tocoo(), symmetry="symmetric")
    return p


def run(capsys, *args):
    code = main([str(a) for a in args])
    out, err = capsys.readouterr()
    return code, out, err


def test_order_stats_apply_round_trip(capsys, plate, tmp_path):
    perm_file = tmp_path / "p.txt"
    code, out, err = run(capsys, "order", plate, "--method", "rcm", "-o", perm_file, "--base", "1", "--seed", "4")
    assert code == 0, err
    text = perm_file.read_text()
    assert "seed=4" in text and "base=1" in text
    perm = read_permutation(perm_file, 144)
    code, out, err = run(capsys, "stats", plate, "--perm", perm_file, "--json")
    assert code == 0, err
    d = json.loads(out)
    for key in ("n", "nnz", "bandwidth", "profile", "nnz_factor", "factor_ops", "etree_height"):
        assert key in d
    A = read_matrix(plate)
    ref = analyse(A, perm)
    assert d["nnz_factor"] == ref.nnz_factor and d["n"] == 144 and d["nnz"] == A.nnz
    out_mtx = tmp_path / "permuted.mtx"
    code, out, err = run(capsys, "apply", plate, perm_file, "-o", out_mtx)
    assert code == 0, err
    B = read_matrix(out_mtx)
    assert abs(B - A[perm][:, perm]).max() == 0
    # stats of the permuted matrix in natural order equal stats of A under perm
    code, out, err = run(capsys, "stats", out_mtx, "--json")
    assert json.loads(out)["nnz_factor"] == ref.nnz_factor
    # applying the inverse permutation gives back the original
    inv_file = tmp_path / "inv.txt"
    run(capsys, "order", plate, "--method", "rcm", "-o", inv_file, "--inverse")
    back = tmp_path / "back.mtx"
    code, _, err = run(capsys, "apply", out_mtx, inv_file, "-o", back, "--inverse")
    assert code == 0, err
    # the file holds the inverse (line i: new position of old i) and says so in its header; the
    # reader honours the header and returns the new-to-old list
    raw = np.array([int(t) for t in inv_file.read_text().split() if t.isdigit()])
    np.testing.assert_array_equal(raw[perm], np.arange(144))
    assert "direction=old-to-new" in inv_file.read_text()
    np.testing.assert_array_equal(read_permutation(inv_file, 144), perm)
    B = A[perm][:, perm]  # apply --inverse on the inverse file applies perm itself (header and flag agree)
    assert abs(read_matrix(back) - B[perm][:, perm]).max() == 0


def test_stats_table_and_npy(capsys, plate, tmp_path):
    code, out, _ = run(capsys, "stats", plate)
    assert code == 0 and "nnz(L)" in out and "bandwidth" in out
    npy = tmp_path / "p.npy"
    code, _, err = run(capsys, "order", plate, "-m", "natural", "-o", npy)
    assert code == 0, err
    code, out, _ = run(capsys, "stats", plate, "--perm", npy, "--json")
    assert json.loads(out)["nnz_factor"] == 12**3 + 12 - 1  # natural order band fill, see test_analysis


@pytest.mark.parametrize(
    "args_fn",
    [
        lambda d, m: ["order", d / "missing.mtx", "-o", d / "p.txt"],
        lambda d, m: ["order", m, "-m", "nosuch", "-o", d / "p.txt"],
        lambda d, m: ["order", m, "-o", d / "nofolder" / "p.txt"],
        lambda d, m: ["order", m, "-o", d / "p.txt", "--base", "2"],
        lambda d, m: ["order", m, "-o", m],
        lambda d, m: ["stats", d / "junk.mtx"],
        lambda d, m: ["stats", d / "rect.mtx"],
        lambda d, m: ["stats", m, "--perm", d / "short.txt"],
        lambda d, m: ["apply", m, d / "short.txt", "-o", d / "out.mtx"],
        lambda d, m: ["apply", m, d / "short.txt", "-o", m],
        lambda d, m: ["order"],
        lambda d, m: ["order", m, "--bogus"],
        lambda d, m: ["order", m, "-m", "nd", "--effort", "turbo", "-o", d / "p.txt"],
        lambda d, m: ["order", m, "-m", "rcm", "--effort", "fast", "-o", d / "p.txt"],
        lambda d, m: ["stats", m, "--effort", "fast"],
        lambda d, m: ["order", m, "-m", "rcm", "--no-multisection", "-o", d / "p.txt"],
    ],
)
def test_user_errors_exit_2_one_line_no_output(capsys, plate, tmp_path, args_fn):
    (tmp_path / "junk.mtx").write_bytes(b"\x89PNG\r\n\x1a\n binary junk")
    (tmp_path / "rect.mtx").write_text("%%MatrixMarket matrix coordinate real general\n2 3 1\n1 1 1\n")
    (tmp_path / "short.txt").write_text("0\n1\n2\n")
    before = sorted(p.name for p in tmp_path.iterdir())
    original = plate.read_bytes()
    code, out, err = run(capsys, *args_fn(tmp_path, plate))
    assert code == 2
    lines = [ln for ln in err.splitlines() if ln.strip()]
    assert len(lines) == 1 and lines[0].startswith("reorder: error:"), err
    assert "Traceback" not in err
    assert sorted(p.name for p in tmp_path.iterdir()) == before  # nothing written
    assert plate.read_bytes() == original


def test_console_script_exit_code(tmp_path):
    # The installed entry point behaves like main(): exit 2, one line on stderr.
    r = subprocess.run([sys.executable, "-m", "reorder.cli", "stats", str(tmp_path / "none.mtx")],
                       capture_output=True, text=True)
    assert r.returncode == 2
    assert r.stderr.strip().count("\n") == 0 and "no such file" in r.stderr


def test_methods_and_help(capsys):
    code, out, _ = run(capsys, "methods")
    assert code == 0 and "rcm" in out
    code, out, _ = run(capsys, "--help")
    assert code == 0 and "never the solution" in " ".join(out.split())


def test_same_seed_same_file(capsys, plate, tmp_path):
    a, b = tmp_path / "a.txt", tmp_path / "b.txt"
    run(capsys, "order", plate, "-m", "rcm", "-o", a, "--seed", "1")
    run(capsys, "order", plate, "-m", "rcm", "-o", b, "--seed", "1")
    assert a.read_bytes() == b.read_bytes()


def test_m_matrix_helper_is_spd():
    # NumPy dense Cholesky succeeds on the helper's M-matrix (reference for later tests).
    np.linalg.cholesky(m_matrix(grid2d(4)).toarray())


def test_effort_flag(capsys, plate, tmp_path):
    # --effort reaches nd: the JSON summary's count equals reorder.analysis on the written file
    p = tmp_path / "fast.txt"
    code, out, _ = run(capsys, "order", plate, "-m", "nd", "--effort", "fast", "-o", p, "--json")
    assert code == 0
    summary = json.loads(out)
    A = read_matrix(plate)
    assert analyse(A, read_permutation(p, A.shape[0])).nnz_factor == summary["nnz_factor"]
    code, out, _ = run(capsys, "stats", plate, "-m", "nd", "--effort", "best", "--json")
    assert code == 0 and json.loads(out)["ordering"] == "nd"


def test_multisection_flag(capsys, plate, tmp_path):
    # --no-multisection reaches nd: the written tree has no multisector node and validates against
    # the written permutation (tree checks of reorder.orderings.nd.tree)
    from reorder.graph import from_matrix
    from reorder.orderings.nd import SeparatorTree

    p, t = tmp_path / "p.txt", tmp_path / "t.json"
    code, _, _ = run(capsys, "order", plate, "-m", "nd", "--no-multisection", "--tree", t, "-o", p)
    assert code == 0
    A = read_matrix(plate)
    tree = json.loads(t.read_text())
    assert not any(nd.get("multisector") for nd in tree["nodes"])
    assert SeparatorTree.from_json(tree).validate(read_permutation(p, A.shape[0]), from_matrix(A))


def test_command_process_exits_early_with_its_output_whole(tmp_path):
    # The `reorder` process skips the interpreter's teardown (issue 16, later-run start-up); what it
    # printed to a pipe and the file it wrote must still be complete, and the exit code kept.
    # Reference: the same command run in this process through main(argv), which returns normally.
    scipy.io.mmwrite(str(tmp_path / "plate.mtx"), sp.coo_matrix(grid2d(12)))
    r = subprocess.run([sys.executable, "-m", "reorder.cli", "order", "plate.mtx", "-o", "-", "--json"],
                       capture_output=True, text=True, cwd=tmp_path, timeout=300)
    assert r.returncode == 0, r.stderr
    # the permutation goes to stdout, the JSON record to stderr (stdout is taken), as its last line
    # (a cold kernel cache says "compiling kernels" first)
    perm = [int(x) for x in r.stdout.splitlines() if x and not x.startswith("#")]
    assert sorted(perm) == list(range(144)) and r.stdout.endswith("\n")
    assert json.loads(r.stderr.strip().splitlines()[-1])["n"] == 144
    bad = subprocess.run([sys.executable, "-m", "reorder.cli", "order", "missing.mtx", "-o", "p.txt"],
                         capture_output=True, text=True, cwd=tmp_path, timeout=300)
    assert bad.returncode == 2 and bad.stderr.count("\n") == 1, bad.stderr
