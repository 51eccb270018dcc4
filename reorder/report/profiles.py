"""Dolan–Moré performance profiles: ratios to the best solver per problem, and the profile curves.

Pure NumPy over a problems × solvers array of costs; the figures draw them (:mod:`reorder.report.plots`).
"""

from __future__ import annotations

import numpy as np

__all__ = ["performance_ratios", "performance_profile", "profile_breakpoints"]


def performance_ratios(values) -> np.ndarray:
    """Performance ratios ``r[p, s] = t[p, s] / min_s t[p, s]``; failures give ``inf``.

    Parameters
    ----------
    values : array_like, shape (n_problems, n_solvers)
        A cost per problem and solver (smaller is better). NaN, inf or negative entries mark a
        failure of that solver on that problem.

    Returns
    -------
    ndarray of float64, same shape
        ``r[p, s] >= 1`` where solver ``s`` solved problem ``p``, ``inf`` where it failed (Dolan &
        Moré's ``r_M``: larger than any ratio, so a failed solver never counts as solved). A zero
        cost gives ratio 1 if it is the best and ``inf`` against a best of zero otherwise; a problem
        that no solver solved has ``inf`` everywhere.

    References
    ----------
    E. D. Dolan and J. J. Moré, "Benchmarking optimization software with performance profiles",
    Math. Programming 91 (2002) 201–213.
    """
    t = np.array(values, dtype=np.float64, copy=True)
    if t.ndim != 2:
        raise ValueError(f"values must be two-dimensional (problems × solvers), got shape {t.shape}")
    bad = ~np.isfinite(t) | (t < 0)
    t[bad] = np.inf
    best = t.min(axis=1, keepdims=True) if t.shape[1] else np.zeros((t.shape[0], 1))
    with np.errstate(divide="ignore", invalid="ignore"):
        r = t / best
    r[t == best] = 1.0  # covers 0/0 for a best cost of zero
    r[bad | ~np.isfinite(best) | ~np.isfinite(r)] = np.inf
    return r


def performance_profile(values, taus) -> np.ndarray:
    """Dolan–Moré performance profile ``ρ_s(τ) = |{p : r[p, s] <= τ}| / n_problems``.

    Parameters
    ----------
    values : array_like, shape (n_problems, n_solvers)
        Costs as for :func:`performance_ratios`.
    taus : array_like of float
        The factors ``τ >= 1`` at which to evaluate the profile.

    Returns
    -------
    ndarray, shape (len(taus), n_solvers)
        The fraction of problems that each solver solved within a factor ``τ`` of the best.

    References
    ----------
    E. D. Dolan and J. J. Moré, "Benchmarking optimization software with performance profiles",
    Math. Programming 91 (2002) 201–213, equation (1).
    """
    r = performance_ratios(values)
    taus = np.atleast_1d(np.asarray(taus, dtype=np.float64))
    if r.shape[0] == 0:
        return np.zeros((taus.size, r.shape[1]))
    return (r[None, :, :] <= taus[:, None, None]).mean(axis=1)


def profile_breakpoints(values) -> np.ndarray:
    """The sorted distinct finite ratios (at least ``[1.0]``): where a profile can change."""
    r = performance_ratios(values)
    finite = r[np.isfinite(r)]
    return np.unique(np.concatenate([[1.0], finite]))
