"""Tests of reorder.compare: results against SciPy SuperLU, resume after an interruption, identical
numbers serially, in two local processes and on a Dask LocalCluster, failures recorded, input errors."""

from __future__ import annotations

import csv
import json
import shutil
from html.parser import HTMLParser
from pathlib import Path

import numpy as np
import pytest
import scipy.sparse as sp
from scipy.sparse.linalg import splu

import reorder.compare as C
import reorder.compare.executors as executors
from reorder.errors import InputError
from reorder.gallery import grid2d, m_matrix
from reorder.io import read_matrix, read_permutation, write_matrix
from reorder.report import MEASURED_COLUMNS

# small, quick orderings; those registered by other modules join when present
METHODS = [m for m in ("natural", "rcm", "mindegree", "nd") if m in __import__("reorder").available()]


@pytest.fixture(scope="module")
def suite(tmp_path_factory) -> Path:
    """Four small matrices: an SPD grid (.mtx), an indefinite symmetric matrix with a
    nonsymmetric pattern (.npz), a disconnected SPD matrix (.mtx.gz), a 2-row matrix."""
    d = tmp_path_factory.mktemp("suite")
    write_matrix(d / "grid.mtx", grid2d(7))
    rng = np.random.default_rng(1)
    B = sp.random(40, 40, density=0.08, random_state=rng, format="csr")
    B = B + sp.diags(rng.standard_normal(40))  # indefinite, pattern not symmetric
    write_matrix(d / "indef.npz", B)
    D = sp.block_diag([grid2d(3), grid2d(4)[:10, :10] + 4 * sp.eye(10)])
    write_matrix(d / "twoparts.mtx.gz", D)
    write_matrix(d / "tiny.mtx", sp.csr_matrix(np.array([[2.0, -1.0], [-1.0, 2.0]])))
    return d


def _read_csv(path: Path, drop_measured: bool = True) -> list[dict]:
    with open(path, newline="") as fh:
        rows = list(csv.DictReader(fh))
    if drop_measured:
        for r in rows:
            for c in MEASURED_COLUMNS:
                r.pop(c, None)
    return rows


@pytest.fixture(scope="module")
def serial(suite, tmp_path_factory):
    out = tmp_path_factory.mktemp("serial")
    res = C.run_compare([suite], METHODS, out, factor=True, seed=0)
    return res, out


def test_nnz_factor_equals_superlu(serial, suite):
    res, out = serial
    rows = _read_csv(out / "results.csv")
    assert [(r["matrix"], r["method"]) for r in rows] == [
        (m, s) for m in sorted(["grid", "indef", "twoparts", "tiny"]) for s in METHODS
    ]
    paths = {p.name.split(".")[0]: p for p in suite.iterdir()}
    for r in rows:
        assert r["status"] == "ok", r
        A = read_matrix(paths[r["matrix"]])
        perm = read_permutation(out / "permutations" / f"{r['matrix']}.{r['method']}.txt", A.shape[0], base=0)
        M = m_matrix(A)
        B = sp.csc_matrix(M[perm][:, perm])
        # outside reference: SciPy SuperLU in natural order without pivoting on the permuted M-matrix;
        # L holds the unit diagonal, explicit zeros removed (NOTES.md item 4)
        lu = splu(B, permc_spec="NATURAL", diag_pivot_thresh=0.0, options={"SymmetricMode": True})
        L = lu.L
        L.eliminate_zeros()
        assert int(r["nnz_factor"]) == L.nnz, (r["matrix"], r["method"])
        # factor_ops = Σ_j c_j² over the column counts of that same L (definition, analysis.py)
        counts = np.diff(sp.csc_matrix(L).indptr)
        assert int(r["factor_ops"]) == int(np.dot(counts, counts))
        assert int(r["n"]) == A.shape[0] and int(r["nnz"]) == A.nnz


def test_factor_columns(serial):
    res, out = serial
    rows = {(r["matrix"], r["method"]): r for r in _read_csv(out / "results.csv")}
    for (m, s), r in rows.items():
        assert r["factor_status"] == "ok"
        # grid and twoparts are SPD (diagonally dominant, textbook fact); indef has negative diagonal entries
        want = "m-matrix" if m == "indef" else "original"
        assert r["factor_matrix"] == want, (m, s, r["factor_message"])
        # the M-matrix has no cancellation, so SuperLU's count equals the symbolic count (NOTES.md item 4);
        # the SPD grids have none either (no exact cancellation in these small Laplacians, checked by SuperLU)
        assert int(r["factor_nnz_l"]) == int(r["nnz_factor"])
    assert "M-matrix" in (out / "summary.md").read_text()


def test_files_written(serial):
    res, out = serial
    for name in ("results.csv", "results.json", "summary.md", "report.html", "cases.jsonl"):
        assert (out / name).is_file()
    doc = json.loads((out / "results.json").read_text())
    assert len(doc["rows"]) == len(res.rows) == 4 * len(METHODS)
    for col in ("matrix", "method", "n", "nnz", "nnz_factor", "factor_ops", "bandwidth", "profile",
                "etree_height", "order_seconds", "order_peak_mb", "status", "error"):
        assert col in doc["columns"]
    for m in ("grid", "indef", "twoparts", "tiny"):
        for ext in (".png", ".svg"):
            assert (out / "plots" / f"spy_{m}{ext}").is_file()
    for stem in ("profiles", "relative_nnz", "relative_ops"):
        assert (out / "plots" / f"{stem}.png").is_file() and (out / "plots" / f"{stem}.svg").is_file()
    assert res.report == out / "report.html" and res.ran == len(res.rows) and res.failed == 0


class _Refs(HTMLParser):
    def __init__(self):
        super().__init__()
        self.refs = []

    def handle_starttag(self, tag, attrs):
        self.refs += [v for k, v in attrs if k in ("href", "src") and v]


def test_report_refers_only_to_existing_files(serial):
    res, out = serial
    p = _Refs()
    p.feed((out / "report.html").read_text(encoding="utf-8"))
    assert p.refs
    for ref in p.refs:
        assert ref.startswith("data:image/png;base64,") or (out / ref).is_file(), ref


def test_resume_after_interrupt_gives_same_results(serial, suite, tmp_path, monkeypatch):
    _, full = serial
    out = tmp_path / "run"
    real = C.run_case
    calls = {"n": 0}

    def dying(case):
        calls["n"] += 1
        if calls["n"] == 5:
            raise KeyboardInterrupt  # Ctrl-C in the middle of the fifth case
        return real(case)

    monkeypatch.setattr(executors, "run_case", dying)  # the serial executor's run_case
    with pytest.raises(KeyboardInterrupt):
        C.run_compare([suite], METHODS, out, factor=True)
    assert len((out / "cases.jsonl").read_text().splitlines()) == 4  # the finished cases are kept
    assert not (out / "results.csv").exists()
    monkeypatch.setattr(executors, "run_case", real)
    res = C.run_compare([suite], METHODS, out, factor=True, resume=True)
    assert res.reused == 4 and res.ran == 4 * len(METHODS) - 4
    assert _read_csv(out / "results.csv") == _read_csv(full / "results.csv")
    for p in (full / "permutations").iterdir():
        assert (out / "permutations" / p.name).read_text() == p.read_text()


def test_resume_from_a_log_cut_mid_line(serial, suite, tmp_path):
    _, full = serial
    out = tmp_path / "cut"
    out.mkdir()
    shutil.copytree(full / "permutations", out / "permutations")
    lines = (full / "cases.jsonl").read_text().splitlines(keepends=True)
    # a crash while writing the fourth record: three whole lines and half of the next
    (out / "cases.jsonl").write_text("".join(lines[:3]) + lines[3][: len(lines[3]) // 2])
    res = C.run_compare([suite], METHODS, out, factor=True, resume=True)
    assert res.reused == 3
    assert _read_csv(out / "results.csv") == _read_csv(full / "results.csv")
    # every line of the log parses again, and a second resume runs nothing
    assert len(C.read_log(out / "cases.jsonl")) == 4 * len(METHODS)
    again = C.run_compare([suite], METHODS, out, factor=True, resume=True, plots=False)
    assert again.ran == 0


def test_two_workers_identical(serial, suite, tmp_path):
    _, full = serial
    out = tmp_path / "w2"
    C.run_compare([suite], METHODS, out, factor=True, workers=2, plots=False)
    assert _read_csv(out / "results.csv") == _read_csv(full / "results.csv")
    for p in (full / "permutations").iterdir():
        assert (out / "permutations" / p.name).read_text() == p.read_text()


def test_dask_local_cluster_identical(serial, suite, tmp_path):
    distributed = pytest.importorskip("distributed")
    _, full = serial
    out = tmp_path / "dask"
    with distributed.LocalCluster(n_workers=1, threads_per_worker=2, processes=False,
                                  dashboard_address=None) as cluster:
        C.run_compare([suite], METHODS, out, factor=True, cluster=cluster, plots=False)
        with distributed.Client(cluster) as client:  # a Client and an address work too
            C.run_compare([suite], METHODS[:2], tmp_path / "addr", cluster=cluster.scheduler_address, plots=False)
            C.run_compare([suite], METHODS[:2], tmp_path / "client", cluster=client, plots=False)
    assert _read_csv(out / "results.csv") == _read_csv(full / "results.csv")
    assert _read_csv(tmp_path / "addr" / "results.csv") == _read_csv(tmp_path / "client" / "results.csv")


def test_failures_are_recorded_and_the_run_goes_on(suite, tmp_path, monkeypatch):
    from reorder import orderings

    d = tmp_path / "in"
    shutil.copytree(suite, d)
    (d / "broken.mtx").write_text("%%MatrixMarket matrix coordinate real general\n3 3 1\n9 9 1.0\n")

    @orderings.register("failing_for_test", summary="raises")
    def failing(graph, s, seed=0):
        raise RuntimeError("this ordering always fails")

    try:
        res = C.run_compare([d], ["rcm", "failing_for_test"], tmp_path / "out", plots=False)
    finally:
        orderings._REGISTRY.pop("failing_for_test", None)
    rows = {(r["matrix"], r["method"]): r for r in _read_csv(tmp_path / "out" / "results.csv")}
    assert rows[("broken", "rcm")]["status"] == "error" and "broken.mtx" in rows[("broken", "rcm")]["error"]
    assert rows[("grid", "failing_for_test")]["error"] == "RuntimeError: this ordering always fails"
    assert rows[("grid", "rcm")]["status"] == "ok" and rows[("tiny", "rcm")]["status"] == "ok"
    assert res.failed == 2 + 4 and len(res.rows) == 10  # broken × 2 methods, failing × 4 other matrices
    assert "## Failures" in (tmp_path / "out" / "summary.md").read_text()
    # a failed case is run again on resume (it may have been a transient problem)
    res2 = C.run_compare([d], ["rcm"], tmp_path / "out", plots=False, resume=True)
    assert res2.ran == 1 and res2.reused == 4


def test_input_errors(suite, tmp_path):
    with pytest.raises(InputError, match="no such file"):
        C.run_compare([tmp_path / "nope.mtx"], ["rcm"], tmp_path / "o")
    with pytest.raises(InputError, match="unknown method 'bogus'"):
        C.run_compare([suite], ["rcm", "bogus"], tmp_path / "o")
    (tmp_path / "empty").mkdir()
    with pytest.raises(InputError, match="no matrix files"):
        C.run_compare([tmp_path / "empty"], ["rcm"], tmp_path / "o")
    (tmp_path / "other").mkdir()
    shutil.copy(suite / "grid.mtx", tmp_path / "other" / "grid.mtx")
    with pytest.raises(InputError, match="two inputs are named 'grid'"):
        C.run_compare([suite, tmp_path / "other"], ["rcm"], tmp_path / "o")
    with pytest.raises(InputError, match="workers"):
        C.run_compare([suite], ["rcm"], tmp_path / "o", workers=0)
    for err in (InputError("x"),):
        assert "\n" not in str(err)


def test_progress_and_table_printed(suite, tmp_path):
    from rich.console import Console

    console = Console(record=True, width=140)
    res = C.run_compare([suite / "grid.mtx", suite / "tiny.mtx"], ["natural", "rcm"], tmp_path / "p",
                        progress=True, console=console, plots=False)
    text = console.export_text()
    assert "[1/4] grid natural" in text  # one line per case when not on a terminal
    assert "★" in text and "report.html" in text
    assert str(res).endswith("report.html")


def test_one_case_at_a_time_per_process(monkeypatch):
    # a threaded Dask worker runs tasks in threads of one process: their cases must not overlap
    # (timings would share the interpreter lock, and CPython 3.11 raised SystemError once when two
    # threads parsed source at once). Reference: the threads' own enter/leave records.
    import threading
    import time

    from reorder.compare import work

    spans = []

    def slow(case):
        t0 = time.perf_counter()
        time.sleep(0.05)
        spans.append((t0, time.perf_counter()))
        return {}

    monkeypatch.setattr(work, "_run_case", slow)
    threads = [threading.Thread(target=work.run_case, args=(None,)) for _ in range(4)]
    for t in threads:
        t.start()
    for t in threads:
        t.join()
    spans.sort()
    assert len(spans) == 4
    assert all(a[1] <= b[0] for a, b in zip(spans, spans[1:]))
