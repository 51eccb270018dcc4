"""The cost-aware search: it stops, records every candidate and why it stopped, and escalating never
makes the result worse than the cheap start (counts checked against SciPy SuperLU)."""

from __future__ import annotations

import numpy as np
import scipy.sparse as sp

from reorder.analysis import symbolic_factor
from reorder.cost import DEFAULT_RATES
from reorder.graph import from_matrix
from reorder.orderings.escalation import LADDER, START, escalate

from conftest import grid2d, grid3d, m_matrix, superlu_nnz_l


def test_stops_at_the_cheap_start_when_nothing_pays():
    g = from_matrix(grid2d(15))
    perm, info = escalate(g, rates=DEFAULT_RATES, time_scale=1e9)
    assert info["chosen"] == START.label
    assert set(info["candidates"]) == {START.label} | {r.label for r in LADDER}
    assert all("skipped" in info["candidates"][r.label] for r in LADDER)
    assert "would cost" in info["stopped"]
    ran = info["candidates"][START.label]
    assert ran["nnz_factor"] == symbolic_factor(g, perm).nnz_factor
    assert ran["seconds"] >= 0 and ran["predicted_factor_seconds"] > 0


def test_escalation_never_worse_than_its_start():
    A = m_matrix(grid3d(7))
    g = from_matrix(A)
    perm, info = escalate(g, rates=DEFAULT_RATES, time_scale=0.0, factorizations=10)
    cands = info["candidates"]
    assert info["stopped"] == "every candidate ran"
    assert all("nnz_factor" in cands[r.label] for r in LADDER)
    start = cands[START.label]
    chosen = cands[info["chosen"]]
    assert chosen["predicted_factor_seconds"] <= start["predicted_factor_seconds"]
    assert chosen["nnz_factor"] <= start["nnz_factor"]
    # the recorded count is SuperLU's (natural order on the permuted matrix, no pivoting)
    assert chosen["nnz_factor"] == superlu_nnz_l(sp.csc_matrix(A[perm][:, perm]))


def test_more_factorizations_escalate_further():
    g = from_matrix(grid2d(20))
    _, one = escalate(g, rates=DEFAULT_RATES, factorizations=1)
    _, many = escalate(g, rates=DEFAULT_RATES, factorizations=1e6)
    ran = lambda info: sum("nnz_factor" in c for c in info["candidates"].values())  # noqa: E731
    assert ran(many) > ran(one)
    assert many["candidates"][many["chosen"]]["nnz_factor"] <= one["candidates"][one["chosen"]]["nnz_factor"]


def test_dissection_expected_to_save_less_on_2d_than_on_3d():
    # textbook growth (George 1973; George & Liu 1981): nested-dissection-like factors have
    # nnz ~ n log n, ops ~ n^1.5 on 2-D grids and nnz ~ n^(4/3), ops ~ n^2 on 3-D grids, so
    # ops / nnz^1.5 is far larger in 3-D; the expected saving of nd follows it
    from reorder.orderings.escalation import dense_index, saving_fraction

    rung = next(r for r in LADDER if r.label == "nd-fast")
    idx = {}
    for name, A in (("2d", grid2d(60)), ("3d", grid3d(15))):
        _, info = escalate(from_matrix(A), rates=DEFAULT_RATES, time_scale=1e9)
        idx[name] = info["dense_index"]
    assert idx["3d"] > 2 * idx["2d"]
    assert saving_fraction(rung, idx["2d"]) < 0.5 * saving_fraction(rung, idx["3d"])
    assert saving_fraction(rung, 10.0) == rung.saving
    plain = next(r for r in LADDER if not r.dense)
    assert saving_fraction(plain, 0.0) == plain.saving


def test_largest_expected_net_gain_runs_first():
    # on a 3-D grid the expected saving of nested dissection (a share of the factorization time,
    # large where the factor is dense: George 1973's ops ~ n^2 growth) dwarfs that of another pivot
    # rule of minimum degree, so with many factorizations the search takes nd-fast right after
    # the start, although it costs more; the order of runs is recorded
    g = from_matrix(grid3d(12))
    _, info = escalate(g, rates=DEFAULT_RATES, factorizations=1e4)
    assert info["ran"][0] == START.label
    assert info["ran"][1] == "nd-fast"
    assert set(info["ran"]) == {k for k, v in info["candidates"].items() if "nnz_factor" in v}
    # a rung that builds on another never runs before it
    for later, earlier in (("nd", "nd-fast"), ("nd-best", "nd")):
        if later in info["ran"]:
            assert info["ran"].index(earlier) < info["ran"].index(later)


def test_dissection_candidate_skips_the_subtree_choice_only_on_thick_factors():
    # 3-D grids have a far larger dense-work index than 2-D ones (George 1973 growth rates, see
    # above); there auto's nd-fast candidate runs without the dissection / minimum-degree subtree
    # choice, and says so; on a 2-D grid it keeps it. The recorded count is SuperLU's.
    from reorder.orderings.escalation import THICK_OPTIONS_INDEX

    A = m_matrix(grid3d(14))
    g3 = from_matrix(A)
    perm, info = escalate(g3, rates=DEFAULT_RATES, factorizations=1e4)
    assert info["dense_index"] >= THICK_OPTIONS_INDEX
    assert info["candidates"]["nd-fast"]["settings"] == {"hybrid_max": 0}
    if info["chosen"] == "nd-fast":
        assert info["candidates"]["nd-fast"]["nnz_factor"] == superlu_nnz_l(sp.csc_matrix(A[perm][:, perm]))
    _, info2 = escalate(from_matrix(grid2d(60)), rates=DEFAULT_RATES, factorizations=1e6)
    assert info2["dense_index"] < THICK_OPTIONS_INDEX
    assert "nnz_factor" in info2["candidates"]["nd-fast"] and "settings" not in info2["candidates"]["nd-fast"]


def test_a_rung_that_cannot_undercut_the_best_does_not_run():
    # a rung's saving was measured against its reference (the start for the other pivot rules of
    # minimum degree, RCM and SciPy's minimum degree): once nested dissection has beaten the start
    # by more than those savings on a 3-D grid (George 1973: ops ~ n^2 against minimum degree's
    # larger growth, from memory), they are expected to save nothing and do not run, however cheap
    g = from_matrix(grid3d(14))
    _, info = escalate(g, rates=DEFAULT_RATES, factorizations=1e4, time_scale=1e-9)
    cands = info["candidates"]
    assert info["ran"][:2] == [START.label, "nd-fast"]
    start, ndf = cands[START.label]["predicted_factor_seconds"], cands["nd-fast"]["predicted_factor_seconds"]
    for r in LADDER:
        if not r.after and r.label != "nd-fast":
            assert ndf < (1.0 - r.saving) * start  # the premise: nd-fast undercut what the rung may reach
            assert r.label not in info["ran"] and "skipped" in cands[r.label], r.label
    assert "nd" in info["ran"]  # its reference is nd-fast: still expected to save


def test_quick_settings_only_for_few_factorizations_on_thick_factors():
    # the quick settings trade a few percent of operations for ordering time: worth it for one
    # factorization of a 3-D problem (dense factor, George 1973 growth: from memory), not for many,
    # and never on a 2-D one. The count recorded is still SciPy SuperLU's.
    from reorder.orderings.escalation import QUICK_MAX_FACTORIZATIONS

    A = m_matrix(grid3d(14))
    g = from_matrix(A)
    perm, one = escalate(g, rates=DEFAULT_RATES, factorizations=1, time_scale=1e-9)
    assert one["candidates"]["nd-fast"]["settings"] == {"hybrid_max": 0, "spectral_min": 8000, "leaf_size": 400}
    if one["chosen"] == "nd-fast":
        assert one["candidates"]["nd-fast"]["nnz_factor"] == superlu_nnz_l(sp.csc_matrix(A[perm][:, perm]))
    _, many = escalate(g, rates=DEFAULT_RATES, factorizations=QUICK_MAX_FACTORIZATIONS + 1, time_scale=1e-9)
    assert many["candidates"]["nd-fast"]["settings"] == {"hybrid_max": 0}
    _, flat = escalate(from_matrix(grid2d(60)), rates=DEFAULT_RATES, factorizations=1, time_scale=1e-9)
    assert "settings" not in flat["candidates"]["nd-fast"]
