"""Cost-aware search over orderings: cheap candidates first, more effort only while it pays.

What a user pays is the ordering time plus ``factorizations`` times the factorization time.
:func:`escalate` starts from the cheapest good candidate (minimum degree under one pivot rule), prices
its factorization with :func:`reorder.cost.predict_seconds`, and then considers a ladder of costlier
candidates. Each rung has a predicted ordering time (a multiple of the measured time of the cheap
start or of the rung it builds on, which gauge this machine and this graph, or a size model) and an
expected factorization time: a fraction, measured on the bundled meshes and grids, below that of its
reference (the rung it builds on, else the cheap start). Its expected saving is what that undercuts
the best predicted factorization time so far, times the number of factorizations. At each step the rung of largest
expected net gain (saving minus cost) runs, as long as that gain is positive; a rung that builds on
another runs only after it. Picking by net gain rather than by cost keeps cheap rungs of small
expected gain from running before a costlier one that makes them pointless (on a 3-D grid
nested dissection first, after which another pivot rule of minimum degree no longer pays). The
order kept is the one of least predicted factorization time (ties: fewer entries of L, then the
earlier candidate), so escalating never makes the result worse than the cheap start by the model's
measure.
"""

from __future__ import annotations

import time
from dataclasses import dataclass

import numpy as np

from ..analysis import symbolic_factor
from ..cost import factor_counts, machine_rates, predict_seconds
from ..graph import Graph
from .basic import superlu_minimum_degree

__all__ = ["Rung", "LADDER", "escalate", "dense_index", "saving_fraction"]


@dataclass(frozen=True)
class Rung:
    """One candidate of the ladder.

    Attributes
    ----------
    label : str
        Name recorded in ``info["candidates"]``.
    method : str
        Registered method (``"superlu-md"``: SciPy SuperLU's own minimum degree).
    options : tuple of (str, value)
        Settings passed to the method.
    cost : float
        Predicted ordering seconds: a multiple of the measured seconds of the cheap start (or of the
        rung ``after``, when given), or with ``per_size`` a multiple of the size model of nested
        dissection (:func:`nd_seconds`).
    saving : float
        Expected fraction of its reference's predicted factorization time (the rung ``after``, else
        the cheap start) that this candidate saves.
    max_n : int
        Not tried on larger graphs (0: no limit).
    per_size : bool
        Cost from the size model :func:`nd_seconds` instead of the cheap start's time.
    after : str
        Label of a rung that must have run first; ``cost`` is then a multiple of its measured seconds
        (the ordering time of a related method on this very graph predicts better than a size model).
    dense : bool
        The saving is ``saving`` only where the factor has much dense work (3-D meshes); it shrinks
        towards :data:`SPARSE_SHARE` of it where the factor is thin (2-D meshes), see
        :func:`saving_fraction`.
    thick : tuple of (str, value)
        Settings added where the dense-work index of the start's factor is at least
        :data:`THICK_OPTIONS_INDEX` (3-D-like problems).
    quick : tuple of (str, value)
        Settings added there too when at most :data:`QUICK_MAX_FACTORIZATIONS` factorizations
        follow: they buy ordering time with a few percent of operations, which a single
        factorization repays but many do not.
    """

    label: str
    method: str
    options: tuple = ()
    cost: float = 1.0
    saving: float = 0.0
    max_n: int = 0
    per_size: bool = False
    after: str = ""
    dense: bool = False
    thick: tuple = ()
    quick: tuple = ()


#: the cheap start: one pivot rule of minimum degree, the approximate fill per column of the
#: supervariable weighed by its size, with initial supervariables. Over the bundled suite its nnz(L)
#: is at most 1.013x the better of RCM and SciPy's minimum degree (geometric mean 0.970x), where the
#: plain degree rule reached 1.25x (an elasticity mesh) for about 25% less time (measured)
START = Rung("mindegree/fill", "mindegree", (("score", "fill"), ("compress", True)))

#: the ladder (ties of expected net gain go to the earlier rung). Costs: the mean-fill pivot rule
#: (with initial supervariables), RCM and every pivot rule of minimum degree as multiples of the
#: cheap start's time (measured about 1.1x, 0.2-0.5x and 10-29x; the last a geometric mean of 18x
#: over the nine bundled meshes of at least 10⁴ rows: twelve rules, 22 runs where vertices merge
#: initially, the exact rules slower on 3-D meshes; 12x had auto with 100 factorizations spend 0.5 s
#: on an elasticity mesh to save 0.1 s); ``nd-fast`` by the size model :func:`nd_seconds`; full
#: polish as a multiple of the measured ``nd-fast`` seconds (6.2x on the 27-point 22³ grid, 7.7x on
#: the 7-point 40³ grid; falling to 1.8x at 8·10⁵ vertices, where ``normal`` uses its cheapest
#: settings), three restarts 3x the measured polish. Savings are the measured fraction of SuperLU
#: time a candidate saved over its reference (the rung it builds on, else the start) on the bundled
#: meshes and 3-D grids: nd-fast over one-rule minimum degree 0.1-0.67, mean 0.45, on 3-D meshes
#: (scaled down on thin factors by :func:`saving_fraction`); nd over nd-fast about 0.1; three
#: restarts about 0.01; the mean-fill rule 0.06 (it left 0.6% more nnz(L) than the start in
#: geometric mean over the suite but 8.5% less on the 24³ grid and 7% less on an elasticity mesh).
#: ``ND_POLISH``: ``nd`` over ``nd-fast`` (time) up to the presets' ``RAMP_START``;
#: ``POLISH_AT_RAMP_END``: from ``RAMP_END`` on (see :func:`_polish_share`)
ND_POLISH, POLISH_AT_RAMP_END = 7.0, 1.8

LADDER = (
    Rung("mindegree/mean_fill", "mindegree", (("score", "mean_fill"), ("compress", True)), cost=1.1, saving=0.06),
    Rung("rcm", "rcm", (), cost=0.5, saving=0.02),
    Rung("nd-fast", "nd", (("effort", "fast"),), cost=1.0, saving=0.45, per_size=True, dense=True,
         thick=(("hybrid_max", 0),), quick=(("spectral_min", 8000), ("leaf_size", 400))),
    Rung("mindegree/all-rules", "mindegree", (("score", "auto"),), cost=18.0, saving=0.04),
    Rung("superlu-md", "superlu-md", (), cost=0.0, saving=0.03, max_n=50_000),
    Rung("nd", "nd", (("effort", "normal"),), cost=ND_POLISH, saving=0.10, after="nd-fast"),
    Rung("nd-best", "nd", (("effort", "best"),), cost=3.0, saving=0.01, after="nd"),
)

#: where the dense-work index of the cheap start's factor (:func:`dense_index`) is at most
#: :data:`THIN_INDEX`, a ``dense`` rung is expected to save only :data:`SPARSE_SHARE` of its
#: ``saving``; from :data:`THICK_INDEX` on, all of it; linear in between. Measured (SuperLU time
#: predicted from the exact counts, nd-fast over the cheap start): 2-D meshes and grids of 10⁴-9·10⁴
#: rows have indices 0.06-0.14 and savings 0-16% (mean 8%); a finned 3-D heat sink 0.17 and 0%;
#: 7- and 27-point 3-D grids 0.36-0.37 and 35-41%. (A flat 45% had ``auto`` with many
#: factorizations spend seconds on nested dissection of 2-D meshes for a few percent.)
THIN_INDEX, THICK_INDEX, SPARSE_SHARE = 0.15, 0.35, 0.22

#: from this dense-work index on, a rung's ``thick`` settings apply. ``nd-fast`` then skips its
#: subtree choice between dissection and minimum degree: on 3-D grids minimum degree hardly ever wins
#: a subtree, and the choice is a fifth to a quarter of the time. Measured (one thread, CPU, ``nd-fast``
#: without / with the choice): 7-point 40³ 1.18 / 1.49 s, operations +0.02%; 27-point 30³ 1.41 / 1.60
#: s, +0.5%; but 2-D grids 300² lose 5-8% of operations without it (indices 0.06-0.14; 3-D grids
#: 0.35-0.37, a finned 3-D heat sink 0.17).
THICK_OPTIONS_INDEX = 0.3

#: up to this many factorizations a rung's ``quick`` settings apply on thick factors. ``nd-fast``
#: then finds separators of subgraphs below 8000 vertices (not 2000) by the compiled breadth-first
#: multilevel path instead of Fiedler vectors: measured (without the subtree choice, median of
#: three seeds, operations averaged over them), ordering time 0.55-0.91x and operations
#: 0.96-1.04x on 3-D grids and meshes of 6 000-110 000 rows (7-point 40³: 0.73 -> 0.58 s,
#: operations -0.5%; 27-point 22³: -15% time, +3.9% operations; a Q2 hexahedral mesh: -20%, +3.7%).
#: On the 27-point grid the ordering saves 0.08 s and each factorization loses 0.015 s: from about
#: five factorizations on the trade no longer pays. Leaves of 400 vertices (not 200) on top of that:
#: time 0.87-1.00x, operations 1.006-1.021x on the same graphs (40³ 0.64 -> 0.55 s, +0.4%; 48³
#: 0.95 -> 0.85 s, +0.2%).
QUICK_MAX_FACTORIZATIONS = 4


def dense_index(counts) -> float:
    """``ops / nnz(L)^1.5`` of a factor: about constant for nested-dissection-like orders of 3-D
    meshes (ops ~ n², nnz ~ n^(4/3)) and falling like ``1/log^1.5 n`` for 2-D ones (ops ~ n^1.5,
    nnz ~ n log n); large where dense blocks dominate the factorization."""
    nnz = max(float(counts.nnz_factor), 1.0)
    return float(counts.ops) / nnz**1.5


def saving_fraction(rung: Rung, index: float) -> float:
    """Expected fraction of the best predicted factorization time that ``rung`` saves, given the
    dense-work index of the cheap start's factor."""
    if not rung.dense:
        return rung.saving
    t = min(max((index - THIN_INDEX) / (THICK_INDEX - THIN_INDEX), 0.0), 1.0)
    return rung.saving * (SPARSE_SHARE + (1.0 - SPARSE_SHARE) * t)


#: seconds per n·log2(n) of ``nd --effort fast`` on the reference machine of
#: :data:`reorder.cost.DEFAULT_RATES`, on graphs of at least :data:`ND_SMALL` vertices; smaller ones
#: cost more per n·log2(n) (Python work per subproblem weighs more), by ``(ND_SMALL / n)^ND_SMALL_EXP``.
#: Measured (one thread, CPU seconds, load about 2, over the model with the plain constant): 2-D
#: grids 200²-300² 0.68-0.74x, 3-D grids 32³-40³ 1.1-1.2x, the bundled 10⁴-row meshes and grids
#: 1.3-2.2x (geometric mean 1.7x), 3-D grids 12³-18³ 2.1x. Under-predicting there had ``auto``
#: with 100 factorizations run ``nd-fast`` on 2-D meshes for nothing.
ND_FAST_PER_NLOGN = 1.5e-6
ND_SMALL, ND_SMALL_EXP = 30_000, 0.35


def nd_seconds(graph: Graph, rates) -> float:
    """Size model of ``nd --effort fast``: ``ND_FAST_PER_NLOGN · n·log2 n · (1 + nnz/(50 n)) ·
    max(1, ND_SMALL/n)^ND_SMALL_EXP``, scaled by how much slower this machine factors than the
    reference one (within [0.5, 4])."""
    from ..cost import DEFAULT_RATES

    n = max(graph.n, 2)
    speed = min(max(rates.ops / DEFAULT_RATES.ops, 0.5), 4.0)
    small = max(1.0, ND_SMALL / n) ** ND_SMALL_EXP
    return ND_FAST_PER_NLOGN * n * np.log2(n) * (1.0 + graph.indices.size / (50.0 * n)) * small * speed


def _polish_share(n: int) -> float:
    """How much of the polish multiple of ``nd`` over ``nd-fast`` is left at ``n`` vertices: 1 up to
    the presets' ``RAMP_START``, falling geometrically to :data:`POLISH_AT_RAMP_END` /
    :data:`ND_POLISH` at ``RAMP_END``, where both use their cheapest settings (measured on the 10⁶-row grid, one thread: ``nd`` 8.2-9.4 s
    of CPU against 5.0-5.3 s for ``nd-fast``)."""
    from .nd.presets import RAMP_END, RAMP_START

    f = min(max(np.log(max(n, 1) / RAMP_START) / np.log(RAMP_END / RAMP_START), 0.0), 1.0)
    return float((POLISH_AT_RAMP_END / ND_POLISH) ** f)


def _run(graph: Graph, rung: Rung, opts: dict, seed: int, extra: dict):
    from . import order

    if rung.method == "superlu-md":
        return superlu_minimum_degree(graph), {}
    opts = dict(opts)
    if rung.method == "nd":
        opts.update({k: v for k, v in extra.items() if v is not None})
    o = order(graph, rung.method, seed=seed, **opts)
    return o.perm, o.info


def escalate(graph: Graph, *, factorizations: float = 1.0, seed: int = 0, rates=None, ladder=LADDER,
             nd_options: dict | None = None, time_scale: float = 1.0):
    """Order ``graph`` by the cheapest candidate that pays, escalating while the saving exceeds the cost.

    Parameters
    ----------
    graph : Graph
    factorizations : float
        How many factorizations of this pattern will follow (Newton steps, time steps): the saving
        of a better order is counted that many times.
    seed : int
    rates : reorder.cost.Rates, optional
        Default :func:`reorder.cost.machine_rates`.
    ladder : sequence of Rung
        Candidates after the cheap start (in the order ties of net gain are broken).
    nd_options : dict, optional
        Extra settings for the nested-dissection rungs (``multisection``); None values ignored.
    time_scale : float
        Multiplies every predicted ordering cost (tests use it to force or forbid escalation).

    Returns
    -------
    perm : ndarray of int64
    info : dict
        ``chosen``; ``ran``: the labels that ran, in the order they ran; ``candidates``: per label
        either ``{"nnz_factor", "factor_ops", "seconds", "predicted_factor_seconds"}`` (ran),
        ``{"skipped": reason, "predicted_order_seconds", "expected_saving_seconds"}`` (did not pay)
        or ``{"error": ...}``; ``stopped`` (why the
        search ended); ``factorizations``; ``predicted_factor_seconds`` and ``rates`` (where the
        machine rates came from).
    """
    rates = machine_rates() if rates is None else rates
    k = max(float(factorizations), 0.0)
    n = graph.n
    extra = dict(nd_options or {})
    results: dict[str, dict] = {}

    index = None  # dense-work index of the start's factor, once known

    def attempt(rung):
        opts = dict(rung.options)
        if rung.thick and index is not None and index >= THICK_OPTIONS_INDEX:
            opts.update(rung.thick)
            if k <= QUICK_MAX_FACTORIZATIONS:
                opts.update(rung.quick)
        if rung.method != "superlu-md":
            # a cold kernel cache compiles this candidate's kernels now (said once on stderr), not
            # inside its timing; order() leaves that time out of the ordering seconds too
            from ..warmup import ensure_compiled

            # (as a spec NAME:OPTION=VALUE: minimum degree under one approximate rule needs no exact-rule kernel)
            ensure_compiled([":".join([rung.method, *(f"{k}={v}" for k, v in opts.items())])], load=False)
        t0 = time.perf_counter()
        perm, _ = _run(graph, rung, opts, seed, extra)
        sym = symbolic_factor(graph, perm)
        sec = time.perf_counter() - t0
        counts = factor_counts(sym)
        pred = predict_seconds(counts, rates)
        results[rung.label] = {"nnz_factor": int(sym.nnz_factor), "factor_ops": int(sym.factor_ops),
                               "seconds": round(sec, 4), "predicted_factor_seconds": pred}
        if len(opts) > len(rung.options):
            results[rung.label]["settings"] = {k: v for k, v in opts.items() if (k, v) not in rung.options}
        return (pred, int(sym.nnz_factor)), perm, sec, counts

    key, perm, t_start, start_counts = attempt(START)
    index = dense_index(start_counts)
    best = (key, START.label, perm)
    seconds = {START.label: t_start}
    predicted = {START.label: key[0]}  # predicted factorization seconds of each rung that ran
    ran = [START.label]
    stopped = "every candidate ran"
    pending = []
    for rung in ladder:
        if rung.max_n and n > rung.max_n:
            results[rung.label] = {"skipped": f"more than {rung.max_n} rows"}
        else:
            pending.append(rung)

    def price(rung):
        """(predicted ordering seconds, expected saving in seconds) of ``rung`` now."""
        if rung.method == "superlu-md":
            cost = 1.5 * best[0][0]  # it factors an M-matrix of the pattern once
        elif rung.per_size:
            cost = rung.cost * nd_seconds(graph, rates)
        else:
            cost = rung.cost * seconds[rung.after or START.label]
            if rung.options == (("effort", "normal"),):
                cost *= _polish_share(n)
        # the saving fraction was measured against the rung's reference (the one it builds on, else
        # the start): the candidate is expected to reach (1 - fraction) of the reference's
        # predicted time, and saves only what that undercuts of the best so far (after nd-fast
        # won on a 3-D grid, another pivot rule of minimum degree is expected to save nothing)
        ref = predicted[rung.after or START.label]
        expected = (1.0 - saving_fraction(rung, index)) * ref
        return cost * time_scale, max(best[0][0] - expected, 0.0) * k

    while pending:
        ready = [r for r in pending if not r.after or r.after in seconds]
        if not ready:
            break
        priced = [(r, *price(r)) for r in ready]
        rung, cost, saving = max(priced, key=lambda x: x[2] - x[1])  # ties: the earlier rung
        if saving <= cost and cost > 0:  # (a free candidate runs: time_scale=0 runs them all)
            for r, c, sv in priced:
                results[r.label] = {"skipped": "expected saving below predicted ordering time",
                                    "predicted_order_seconds": round(float(c), 4),
                                    "expected_saving_seconds": round(float(sv), 4)}
            stopped = (f"{rung.label} would cost about {cost:.3g} s for an expected saving of "
                       f"{saving:.3g} s over {k:g} factorization(s)")
            pending = [r for r in pending if r not in ready]
            break
        pending.remove(rung)
        try:
            key, perm, sec, _ = attempt(rung)
        except Exception as exc:  # a failing candidate must not sink the others
            results[rung.label] = {"error": f"{type(exc).__name__}: {exc}"}
            continue
        seconds[rung.label] = sec
        predicted[rung.label] = key[0]
        ran.append(rung.label)
        if key < best[0]:
            best = (key, rung.label, perm)
    for rung in pending:
        results[rung.label] = {"skipped": f"needs {rung.after} first"}
    for rung in ladder:
        results.setdefault(rung.label, {"skipped": "search stopped before it"})
    (pred, _), label, perm = best
    info = {"chosen": label, "candidates": results, "ran": ran, "stopped": stopped, "factorizations": k,
            "predicted_factor_seconds": pred, "rates": rates.source, "dense_index": round(index, 4)}
    return perm, info
