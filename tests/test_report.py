"""Tests of reorder.report: performance profiles, tables, CSV/JSON, plots and the HTML page."""

from __future__ import annotations

import csv
import json
import math
import re
import xml.etree.ElementTree as ET
from html.parser import HTMLParser
from pathlib import Path

import numpy as np
import pytest
import scipy.sparse as sp

from reorder import report as R

INF = math.inf

# A hand-made table: 4 problems × 3 solvers, one failure (NaN).
TABLE = np.array(
    [
        [1.0, 2.0, 4.0],
        [3.0, 3.0, 6.0],
        [2.0, np.nan, 1.0],
        [5.0, 10.0, 5.0],
    ]
)


def _profile_by_definition(t, tau):
    """ρ_s(τ) = |{p : r_ps <= τ}| / n_p with r_ps = t_ps / min_s t_ps and failures never counted,
    written out loop by loop from Dolan & Moré (2002), Math. Programming 91, eq. (1)."""
    n_p, n_s = len(t), len(t[0])
    out = []
    for s in range(n_s):
        count = 0
        for p in range(n_p):
            solved = [v for v in t[p] if not math.isnan(v)]
            if math.isnan(t[p][s]) or not solved:
                continue
            if t[p][s] / min(solved) <= tau:
                count += 1
        out.append(count / n_p)
    return out


def test_performance_ratios_by_hand():
    # ratios worked out by hand from the definition r_ps = t_ps / min_s t_ps (Dolan & Moré 2002)
    expected = np.array([[1, 2, 4], [1, 1, 2], [2, INF, 1], [1, 2, 1]], dtype=float)
    np.testing.assert_array_equal(R.performance_ratios(TABLE), expected)


@pytest.mark.parametrize(
    "tau, rho",
    [
        # values worked out by hand: (#problems with r_ps <= τ) / 4 (Dolan & Moré 2002, eq. (1))
        (1.0, [3 / 4, 1 / 4, 2 / 4]),
        (1.5, [3 / 4, 1 / 4, 2 / 4]),
        (2.0, [4 / 4, 3 / 4, 3 / 4]),
        (4.0, [4 / 4, 3 / 4, 4 / 4]),
        (1e9, [4 / 4, 3 / 4, 4 / 4]),  # a failed problem never counts, however large τ
    ],
)
def test_performance_profile_three_methods(tau, rho):
    got = R.performance_profile(TABLE, [tau])[0]
    np.testing.assert_allclose(got, rho)
    np.testing.assert_allclose(got, _profile_by_definition(TABLE.tolist(), tau))


def test_performance_profile_random_tables_match_definition():
    # the vectorised profile equals the loop-by-loop definition (Dolan & Moré 2002) on random tables
    rng = np.random.default_rng(3)
    for _ in range(20):
        t = rng.integers(1, 6, size=(7, 3)).astype(float)
        t[rng.random(t.shape) < 0.15] = np.nan
        taus = [1.0, 1.25, 2.0, 3.0, 10.0]
        got = R.performance_profile(t, taus)
        for i, tau in enumerate(taus):
            np.testing.assert_allclose(got[i], _profile_by_definition(t.tolist(), tau))
    # ρ is nondecreasing in τ and at most 1 (a distribution function; Dolan & Moré 2002, sec. 2)
    assert np.all(np.diff(got, axis=0) >= 0) and got.max() <= 1.0


def test_profile_problems_leave_out_cases_not_run():
    rows = _rows()  # "c" ran only "natural" (and failed): not a problem every method ran on
    assert R.profile_problems(rows) == ["a", "b"]
    rows.append({"matrix": "c", "method": "rcm", "status": "error"})
    rows.append({"matrix": "c", "method": "nd", "status": "ok", "nnz_factor": 5})
    assert R.profile_problems(rows) == ["a", "b", "c"]


def test_profile_breakpoints():
    np.testing.assert_array_equal(R.profile_breakpoints(TABLE), [1.0, 2.0, 4.0])


def _rows():
    rows = []
    for m, vals in (("a", (100, 80, 80)), ("b", (50, 40, 60))):
        for meth, v in zip(("natural", "rcm", "nd"), vals):
            rows.append({"matrix": m, "method": meth, "seed": 0, "status": "ok", "error": "", "n": 10, "nnz": 28,
                         "nnz_factor": v, "factor_ops": v * 3, "bandwidth": 3, "profile": 9, "etree_height": 4,
                         "fill": v - 19, "components": 1, "order_seconds": 0.001, "order_peak_mb": 0.1,
                         "order_peak_source": "rss", "analyse_seconds": 0.0})
    rows.append({"matrix": "c", "method": "natural", "seed": 0, "status": "error", "error": "ValueError: boom"})
    return rows


def test_best_methods_marks_ties():
    best = R.best_methods(_rows())
    assert best == {"a": ["rcm", "nd"], "b": ["rcm"]}


def test_csv_and_json(tmp_path):
    rows = _rows()
    rows[0]["order_peak_mb"] = float("nan")
    R.write_csv(tmp_path / "r.csv", rows)
    R.write_json(tmp_path / "r.json", rows, {"seed": 0})
    with open(tmp_path / "r.csv", newline="") as fh:
        got = list(csv.DictReader(fh))
    assert len(got) == len(rows)
    assert list(got[0])[:10] == ["matrix", "method", "seed", "status", "error", "n", "nnz", "nnz_factor",
                                 "factor_ops", "bandwidth"]
    assert got[1]["nnz_factor"] == "80" and got[0]["order_peak_mb"] == ""
    assert got[-1]["status"] == "error" and got[-1]["nnz_factor"] == ""
    doc = json.loads((tmp_path / "r.json").read_text())  # strict JSON: NaN written as null
    assert doc["rows"][0]["order_peak_mb"] is None and doc["seed"] == 0 and len(doc["rows"]) == len(rows)


def test_summary_and_rich_table():
    from rich.console import Console

    md = R.summary_markdown(_rows(), notes=["a note"])
    assert "**80**" in md and "## Failures" in md and "c / natural: ValueError: boom" in md and "- a note" in md
    console = Console(record=True, width=120)
    console.print(R.results_table(_rows()))
    text = console.export_text()
    assert "★ 80" in text and "★ 40" in text and "error" in text


def test_plots_render_with_agg(tmp_path):
    import matplotlib.image as mpimg

    k = 15
    T = sp.diags([-np.ones(k - 1), 2 * np.ones(k), -np.ones(k - 1)], [-1, 0, 1])
    A = sp.csr_matrix(sp.kron(T, sp.eye(k)) + sp.kron(sp.eye(k), T))
    rng = np.random.default_rng(0)
    paths = R.plot_spy(tmp_path / "small", "grid", A, {"rcm": rng.permutation(A.shape[0])}, bins=400)
    paths += R.plot_spy(tmp_path / "dense", "grid", A, {"rcm": rng.permutation(A.shape[0])}, bins=50)
    paths += R.plot_profiles(tmp_path / "prof", _rows())
    paths += R.plot_relative(tmp_path / "rel", _rows(), "nnz_factor", "rcm")
    assert [p.suffix for p in paths] == [".png", ".svg"] * 4
    for p in paths:
        if p.suffix == ".png":
            img = mpimg.imread(p)  # a valid PNG as the Agg canvas writes it
            assert img.ndim == 3 and img.shape[0] > 100
        else:
            assert ET.parse(p).getroot().tag.endswith("svg")


class _Refs(HTMLParser):
    def __init__(self):
        super().__init__()
        self.refs = []

    def handle_starttag(self, tag, attrs):
        for k, v in attrs:
            if k in ("href", "src") and v is not None:
                self.refs.append(v)


def html_refs(path: Path) -> list[str]:
    parser = _Refs()
    parser.feed(path.read_text(encoding="utf-8"))
    return parser.refs


def test_html_refers_only_to_existing_files(tmp_path):
    R.write_csv(tmp_path / "results.csv", _rows())
    png = R.plot_profiles(tmp_path / "prof", _rows())[0]
    page = R.write_html(tmp_path / "report.html", _rows(), plots={"profiles": png},
                        links=["results.csv", "missing.json"])
    refs = html_refs(page)
    assert "results.csv" in refs and "missing.json" not in refs
    assert any(r.startswith("data:image/png;base64,") for r in refs)
    for r in refs:
        assert r.startswith("data:") or (tmp_path / r).is_file(), r
    assert not re.search(r"url\(", page.read_text())  # no stylesheet references either
