"""The eigensolvers behind :func:`reorder.spectral.fiedler_vector`: dense ``eigh``, shift-invert
Lanczos (ARPACK), LOBPCG with a smoothed-aggregation AMG preconditioner, and the breadth-first level
structure, tried along a plan until one converges.

References: see :mod:`reorder.spectral`.
"""

from __future__ import annotations

import time
import warnings

import numpy as np
import scipy.linalg as sla
import scipy.sparse as sp
from scipy.sparse.linalg import LinearOperator, eigsh, lobpcg

from .kernels import traversal as _kt

__all__ = ["fix_sign", "run_plan"]


def _spectral():
    from . import spectral  # the level structure lives with the public spectral functions

    return spectral


def fix_sign(x):
    x = np.asarray(x, dtype=np.float64)
    nz = np.flatnonzero(np.abs(x) > 1e-12 * (np.abs(x).max() or 1.0))
    if nz.size and x[nz[0]] > 0:
        x = -x
    return x / (np.linalg.norm(x) or 1.0)


def _project_out(X, y):
    return X - np.outer(y, y @ X)


def _residuals(A, w, V):
    R = A @ V - V * w[None, :]
    return np.linalg.norm(R, axis=0)


def _solve_dense(A, y, k, **_):
    n = A.shape[0]
    M = A if isinstance(A, np.ndarray) else A.toarray()
    hi = min(k, n - 1)
    w, V = sla.eigh(M, subset_by_index=[0, hi], driver="evr")
    # drop the trivial pair: the column closest to y
    t = int(np.argmax(np.abs(y @ V)))
    keep = [i for i in range(V.shape[1]) if i != t][:hi]
    return w[keep], V[:, keep], 0


def _solve_eigsh(A, y, k, *, seed, tol, x0, scale, **_):
    n = A.shape[0]
    rng = np.random.default_rng(seed)
    v0 = rng.standard_normal(n) if x0 is None else np.asarray(x0, dtype=np.float64).reshape(n, -1)[:, 0].copy()
    v0 = v0 - y * (y @ v0)
    if not np.any(v0):
        v0 = rng.standard_normal(n)
    sigma = -1e-8 * scale  # A − σI is positive definite: a factorization without pivoting trouble
    nev = min(k + 1, n - 1)
    ncv = min(n, max(2 * nev + 1, 20))
    w, V = eigsh(sp.csc_matrix(A), k=nev, sigma=sigma, which="LM", v0=v0, tol=min(tol, 1e-6) * 1e-2,
                 ncv=ncv, maxiter=max(1000, n))
    i = np.argsort(w)
    w, V = w[i], V[:, i]
    t = int(np.argmax(np.abs(y @ V)))
    keep = [j for j in range(V.shape[1]) if j != t][:k]
    return w[keep], V[:, keep], 0


def _amg_preconditioner(L, operator, degrees, scale):
    """One smoothed-aggregation V-cycle for ``L + εI`` (constant near-nullspace), as an operator
    approximating the pseudo-inverse of the chosen operator."""
    import pyamg

    n = L.shape[0]
    Ls = sp.csr_matrix(L + (1e-8 * scale) * sp.identity(n, format="csr"))
    # pyamg estimates spectral radii from NumPy's global random generator; seed it for the set-up
    # (determinism) and restore the caller's state afterwards
    state = np.random.get_state()
    try:
        np.random.seed(0)
        ml = pyamg.smoothed_aggregation_solver(
            Ls, B=np.ones((n, 1)), symmetry="hermitian", improve_candidates=None, max_coarse=300,
            smooth=("jacobi", {"omega": 4.0 / 3.0, "weighting": "local"}))
    finally:
        np.random.set_state(state)
    # the Galerkin products come back as BSR with 1×1 blocks; CSR relaxes about twice as fast
    for lvl in ml.levels:
        lvl.A = sp.csr_matrix(lvl.A)
        if hasattr(lvl, "P"):
            lvl.P = sp.csr_matrix(lvl.P)
            lvl.R = sp.csr_matrix(lvl.R)
    P = ml.aspreconditioner(cycle="V")
    if operator == "laplacian":
        return P, ml
    # N = D^{-1/2} L D^{-1/2}, so N^{-1} = D^{1/2} L^{-1} D^{1/2}
    s = np.sqrt(degrees)

    def apply(X):
        X = np.asarray(X)
        if X.ndim == 1:
            return s * (P @ (s * X))
        return s[:, None] * (P @ (s[:, None] * X))

    return LinearOperator((n, n), matvec=apply, matmat=apply, dtype=np.float64), ml


def _lobpcg(A, X, M, y, tol, maxiter):
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        w, V, hist = lobpcg(A, X, M=M, Y=y[:, None], tol=tol, maxiter=maxiter, largest=False,
                            retResidualNormsHistory=True)
    i = np.argsort(w)
    return w[i], V[:, i], max(len(hist) - 1, 1)


def _solve_lobpcg(A, y, k, *, seed, tol, maxiter, x0, amg, operator, degrees, scale, L, graph, block=None,
                  **_):
    """LOBPCG with the trivial vector as constraint.

    LOBPCG only knows absolute residual tolerances; the wanted one is relative to λ₂. Without a warm
    start, the breadth-first level vector (a rough Fiedler vector) is the first starting column and
    its Rayleigh quotient, an upper bound of λ₂, sets the absolute tolerance; restarts with the
    Ritz values then tighten it if needed.
    """
    n = A.shape[0]
    # one vector for the Fiedler vector alone (measured ~1.8x faster than a block of two on grids,
    # whose double λ₂ costs nothing: any vector of the eigenspace is accepted); one spare otherwise
    m = block or (1 if k == 1 else k + 1)
    m = max(1, min(m, (n - 1) // 5))
    rng = np.random.default_rng(seed)
    X = rng.standard_normal((n, m))
    if x0 is not None:
        X0 = np.asarray(x0, dtype=np.float64).reshape(n, -1)
        c = min(m, X0.shape[1])
        X[:, :c] = X0[:, :c]
    else:
        xl = _spectral().level_structure_vector(graph)
        if operator == "normalized":
            xl = xl * np.sqrt(degrees)
        X[:, 0] = xl
    X = _project_out(X, y)
    floor = 1e-3 * scale / n
    q = X[:, 0] / (np.linalg.norm(X[:, 0]) or 1.0)
    rq = float(q @ (A @ q))
    M = None
    setup = 0.0
    if amg:
        t0 = time.perf_counter()
        M, _ = _amg_preconditioner(L, operator, degrees, scale)
        setup = time.perf_counter() - t0
    abs_tol = 0.5 * tol * max(rq, floor)
    its = 0
    for _ in range(6):
        w, V, more = _lobpcg(A, X, M, y, abs_tol, max(maxiter - its, 1))
        its += more
        res = _residuals(A, w[:k], V[:, :k])
        if np.all(res <= tol * np.maximum(np.abs(w[:k]), floor)) or its >= maxiter:
            break
        abs_tol = 0.5 * tol * max(float(np.min(np.abs(w[:k]))), floor)
        X = V
    return w[:k], V[:, :k], its, setup


def _solve_level(graph, A, y, k, **_):
    n = graph.n
    cols = []
    sources = []
    x = _spectral().level_structure_vector(graph)
    cols.append(x)
    sources.append(int(np.argmin(x)))
    dist = np.full(n, np.inf)
    while len(cols) < k:
        for s_ in sources[len(sources) - 1:]:
            dist = np.minimum(dist, _kt.bfs_levels(graph.indptr, graph.indices, s_).astype(float))
        s_new = int(np.argmax(dist))
        sources.append(s_new)
        cols.append(_kt.bfs_levels(graph.indptr, graph.indices, s_new).astype(float))
    V = _project_out(np.column_stack(cols), y)
    Q, _ = np.linalg.qr(V)
    # keep the first column's direction exactly (the level order), Rayleigh quotients as values
    w = np.einsum("ij,ij->j", Q, A @ Q)
    return w, Q, 0


def run_plan(graph, A, y, L, deg, scale, plan, kk, info, *, seed, tol, maxiter, x0, operator, accept):
    n = graph.n
    result = None
    retry = False
    for name in plan:
        t0 = time.perf_counter()
        att = {"solver": name}
        try:
            setup = 0.0
            if name == "dense":
                w, V, its = _solve_dense(A, y, kk)
            elif name == "eigsh":
                w, V, its = _solve_eigsh(A, y, kk, seed=seed, tol=tol, x0=x0, scale=scale)
            elif name in ("lobpcg", "lobpcg-amg"):
                mi = maxiter * 4 if retry else maxiter
                w, V, its, setup = _solve_lobpcg(
                    A, y, kk, seed=seed + (1 if retry else 0), tol=tol, maxiter=mi,
                    x0=None if retry else x0, amg=(name == "lobpcg-amg" or retry), operator=operator,
                    degrees=deg, scale=scale, L=L, graph=graph)
                if name == "lobpcg" and retry:
                    att["solver"] = name = "lobpcg-amg"
                retry = True
            elif name == "level-structure":
                w, V, its = _solve_level(graph, A, y, kk)
            else:
                raise ValueError(f"unknown solver {name!r}")
            w = np.asarray(w, dtype=np.float64)
            V = np.asarray(V, dtype=np.float64)
            if not (np.all(np.isfinite(w)) and np.all(np.isfinite(V))):
                raise FloatingPointError("non-finite eigenpairs")
            res = _residuals(A, w, V)
            att.update(iterations=int(its), seconds=time.perf_counter() - t0,
                       residual=float(res[0] / scale), value=float(w[0]))
            if setup:
                att["amg_setup_seconds"] = setup
            ok = True
            if name in ("lobpcg", "lobpcg-amg"):
                # accepted if the Ritz residuals are small against the eigenvalues themselves
                lim = tol * np.maximum(np.abs(w), 1e-3 * scale / n)
                ok = bool(np.all(res <= lim * accept))
                if not ok:
                    att["error"] = f"not converged in {its} iterations (residual {res.max():.2e})"
            att["ok"] = ok
            info["attempts"].append(att)
            if ok:
                result = (name, w, V, its, res)
                break
        except Exception as exc:  # noqa: BLE001 - every failure moves on to the next strategy
            att.update(ok=False, error=f"{type(exc).__name__}: {exc}"[:200],
                       seconds=time.perf_counter() - t0)
            info["attempts"].append(att)
            if name in ("lobpcg", "lobpcg-amg"):
                retry = True
    assert result is not None  # level-structure cannot fail on a graph with n >= 2
    return result, retry
