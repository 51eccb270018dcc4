"""The report shows the fill: L's pattern per block, cells that say why, the wide factorization
table, profiles without the reference ordering, and the page checked in a real headless browser."""

from __future__ import annotations

import re
import sys
from pathlib import Path

import numpy as np
import pytest
import scipy.io
import scipy.sparse as sp

from reorder import plots as P
from reorder import report as R
from reorder.graph import from_matrix

from conftest import grid2d, m_matrix, random_pattern

sys.path.insert(0, str(Path(__file__).resolve().parent.parent / "scripts"))


@pytest.mark.parametrize("seed", [0, 1])
def test_factor_blocks_match_dense_cholesky(seed):
    # reference: NumPy's dense Cholesky of an M-matrix with the pattern (no cancellation, NOTES.md item 4)
    A = m_matrix(random_pattern(60, 0.06, seed) + grid2d(6, 10))
    perm = np.random.default_rng(seed).permutation(60)
    B = A[perm][:, perm].toarray()
    L = np.linalg.cholesky(B)
    lower = np.tril(np.abs(L) > 1e-13, -1)
    in_a = np.tril(B != 0, -1)
    orig, fill, nnz_l, _ = P.factor_blocks(from_matrix(A), perm, 60)  # one block per entry
    np.testing.assert_array_equal(orig > 0, lower & in_a)
    np.testing.assert_array_equal(fill > 0, lower & ~in_a)
    assert nnz_l == int(lower.sum()) + 60
    orig4, fill4, _, _ = P.factor_blocks(from_matrix(A), perm, 4)  # coarse blocks keep the totals
    assert orig4.sum() == orig.sum() and fill4.sum() == fill.sum()


def _rows():
    rows = []
    for m, vals in (("a", (300, 80, 70)), ("b", (200, 40, 60))):
        for meth, v in zip(("natural", "rcm", "nd"), vals):
            rows.append({"matrix": m, "method": meth, "seed": 0, "status": "ok", "error": "", "n": 10, "nnz": 28,
                         "nnz_factor": v, "factor_ops": v * 3, "bandwidth": 3, "profile": 9, "etree_height": 4,
                         "fill": v - 19, "components": 1, "order_seconds": 0.001, "order_peak_mb": 0.1,
                         "order_peak_source": "rss", "analyse_seconds": 0.0, "factor_status": "ok",
                         "factor_matrix": "original", "factor_nnz_l": v, "factor_seconds": 0.01,
                         "factor_message": ""})
    rows[-1].update(factor_status="skipped", factor_nnz_l=None, factor_seconds=None,
                    factor_message="skipped: 9.00e+10 operations exceed the limit 5.00e+10")
    rows.append({"matrix": "c", "method": "natural", "seed": 0, "status": "ok", "nnz_factor": 5, "factor_ops": 5,
                 "order_seconds": 0.0, "n": 3})
    rows.append({"matrix": "c", "method": "rcm", "seed": 0, "status": "skipped",
                 "error": "predicted over the time limit of this run"})
    rows.append({"matrix": "c", "method": "nd", "seed": 0, "status": "error", "error": "ValueError: boom"})
    return rows


def test_cells_say_why_and_factor_table_is_one_row_per_matrix(tmp_path):
    page = R.write_html(tmp_path / "report.html", _rows()).read_text(encoding="utf-8")
    assert "skipped: predicted over the time limit of this run" in page
    assert "error: ValueError: boom" in page
    fact = page[page.index("<h2>Factorization</h2>"):]
    fact = fact[:fact.index("</table>")]
    assert fact.count("<tr>") == 1 + 3  # header + one row per matrix (a, b, c)
    assert "relaxed supernodes" in fact and "pivot" in fact
    assert "operations exceed the limit" in fact  # a skipped factorization says why in its cell
    md = R.summary_markdown(_rows())
    assert "skipped: predicted over the time limit" in md and "relaxed supernodes" in md


def test_profiles_leave_out_the_reference_ordering():
    # `natural` is a reference: no curve, no part in the problem set of the profiles
    assert P._compared(_rows()) == ["rcm", "nd"]
    assert P.profile_problems(_rows()) == ["a", "b"]  # c: rcm left out on purpose, so c is not a problem ...
    rows = _rows()
    rows[-2].update(status="error", error="RuntimeError: x")
    assert P.profile_problems(rows) == ["a", "b", "c"]  # ... while a failure counts as not solved


def test_report_in_a_headless_browser(tmp_path):
    # outside check: a real browser loads the page, decodes every image and logs no error
    import check_report_browser as cb

    browser = cb.find_browser()
    if browser is None:
        pytest.skip("no headless browser installed (apt-get install chromium)")
    from reorder.compare import run_compare

    scipy.io.mmwrite(str(tmp_path / "plate.mtx"), sp.coo_matrix(grid2d(12)))
    res = run_compare([tmp_path / "plate.mtx"], ["natural", "rcm"], tmp_path / "out", factor=True)
    found = cb.check(res.report, browser)
    assert found["ok"], found
    assert found["images"] >= 4  # profiles, two relative plots, one spy plot
    assert re.search(r"L: nnz", (tmp_path / "out" / "plots" / "spy_plate.svg").read_text())
