"""``auto``: the ordering that pays for itself.

By default (no ``candidates``) ``auto`` runs the cost-aware search of
:mod:`reorder.orderings.escalation`: minimum degree under one pivot rule first, then costlier
candidates (another pivot rule, RCM, nested dissection with cheap settings, every pivot rule of
minimum degree, SciPy SuperLU's minimum degree, nested dissection with full polish, three restarts),
the one of largest expected net gain first, only while the predicted saving in factorization time,
counted ``factorizations`` times, exceeds the predicted extra ordering time. With ``candidates`` it runs exactly those methods and keeps the least nnz(L).
"""

from __future__ import annotations

import dataclasses
import time

from ..analysis import symbolic_factor
from ..errors import InputError
from ..graph import Graph
from . import register
from .escalation import LADDER, escalate
from .records import AutoSettings

__all__ = ["auto", "AutoSettings", "POLICY"]

#: the policy in one sentence (shown by the command line's help)
POLICY = ("auto starts from minimum degree under one pivot rule and tries costlier orderings (another rule, RCM, "
          "nd-fast, every rule, SciPy's minimum degree, nd, three nd restarts), the one of largest expected net "
          "gain first, only while the predicted saving in factorization time, times --factorizations, exceeds "
          "the predicted extra ordering time")


def _exhaustive(graph: Graph, s: AutoSettings, seed: int):
    """Run every method of ``s.candidates`` and keep the least nnz(L) (ties: fewer operations, then
    the earlier candidate)."""
    from . import order, resolve

    names = list(s.candidates)
    for name in names:  # unknown names and bad specs are the user's to fix, before any work
        if resolve(name)[0] == "auto":
            raise InputError("auto: option candidates cannot include auto itself")
    results, best = {}, None
    for name in names:
        t0 = time.perf_counter()
        try:
            nd_opts = {}
            if name == "nd":
                nd_opts = {k: v for k, v in (("effort", s.effort), ("multisection", s.multisection)) if v is not None}
            o = order(graph, name, seed=seed, **nd_opts)
        except Exception as exc:  # a failing candidate must not sink the others
            results[name] = {"error": f"{type(exc).__name__}: {exc}"}
            continue
        sym = symbolic_factor(graph, o.perm)
        key = (sym.nnz_factor, sym.factor_ops)
        results[name] = {"nnz_factor": int(sym.nnz_factor), "factor_ops": int(sym.factor_ops),
                         "seconds": round(time.perf_counter() - t0, 4)}
        if best is None or key < best[0]:
            best = (key, name, o)
    if best is None:
        return order(graph, "rcm", seed=seed).perm, {"chosen": "rcm", "candidates": results}
    _, name, o = best
    return o.perm, {"chosen": name, "candidates": results, "stopped": "every listed candidate ran"}


@register("auto", AutoSettings, summary="cost-aware: one minimum-degree rule first, more effort only where it pays",
          split_components=False, rank=5)
def auto(graph: Graph, s: AutoSettings, seed: int = 0):
    """Order by the cheapest candidate that pays for itself.

    What a user pays is the ordering time plus ``factorizations`` times the factorization time.
    ``auto`` orders by minimum degree under one pivot rule, predicts the factorization time from
    the exact symbolic counts (:func:`reorder.cost.predict_seconds`, with this machine's rates
    measured once and cached), and then tries costlier candidates one after another (RCM,
    ``nd --effort fast``, every pivot rule of minimum degree, SciPy SuperLU's minimum degree,
    ``nd``, ``nd --effort best``) while the saving each is expected to bring, counted
    ``factorizations`` times, exceeds the ordering time it is predicted to cost (a candidate is
    expected to factor a measured fraction faster than the order it refines; it saves what that
    undercuts the best order so far). It keeps the
    order of least predicted factorization time, so escalating never makes the result worse than
    the cheap start by that measure.

    Parameters
    ----------
    graph : Graph
    s : AutoSettings
        The settings below (called with keywords, ``order(g, "auto", factorizations=100)``).
    seed : int
    factorizations : float
        How many factorizations of this pattern will follow (default 1). Newton iterations and time
        stepping reuse one ordering many times; then more polish pays.
    candidates : sequence of str, optional
        Run exactly these methods (comma-separated string allowed; method specs too) and keep the
        least nnz(L), instead of the search.
    superlu_max : int
        Largest graph on which SciPy SuperLU's minimum degree may be a candidate (it needs a
        numerical factorization of an M-matrix with the pattern); 0 never.
    effort : {"fast", "normal", "best"}, optional
        ``"fast"`` ends the search after ``nd --effort fast``; ``"best"`` runs every candidate
        whatever it costs; ``"normal"`` or None: the cost-aware search.
    multisection : bool, optional
        Passed to the ``nd`` candidates.

    Returns
    -------
    perm : ndarray of int64
    info : dict
        ``chosen``; ``candidates``: per candidate what it cost and gave (``seconds``,
        ``nnz_factor``, ``factor_ops``, ``predicted_factor_seconds``) or why it did not run
        (``skipped`` with ``predicted_order_seconds`` and ``expected_saving_seconds``);
        ``stopped`` (why the search ended); ``factorizations``; ``predicted_factor_seconds``;
        ``rates`` (``measured``, ``cache`` or ``default``).

    References
    ----------
    J. R. Gilbert, E. G. Ng and B. W. Peyton, SIAM J. Matrix Anal. Appl. 15 (1994) 1075–1091 (the
    exact column counts that make pricing candidates cheap).
    """
    if s.candidates is not None:
        return _exhaustive(graph, s, seed)
    ladder = tuple(r for r in LADDER if not (r.method == "superlu-md" and s.superlu_max == 0))
    ladder = tuple(dataclasses.replace(r, max_n=s.superlu_max) if r.method == "superlu-md" else r for r in ladder)
    if s.effort == "fast":
        ladder = tuple(r for r in ladder if r.label in ("rcm", "nd-fast"))
    return escalate(graph, factorizations=s.factorizations, seed=seed, ladder=ladder,
                    nd_options={"multisection": s.multisection}, time_scale=0.0 if s.effort == "best" else 1.0)
