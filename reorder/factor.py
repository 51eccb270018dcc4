"""Order once, factor many times: SciPy's SuperLU on the reordered matrix, in natural order.

SciPy's ``splu`` takes no user column order, so :class:`OrderedFactor` permutes the matrix itself,
``B = A[p][:, p]``, and factors ``B`` with ``permc_spec="NATURAL"`` in symmetric mode with no
diagonal pivoting (``diag_pivot_thresh=0``, right for SPD matrices). A solve maps the right-hand
side into the new order and the solution back: ``A x = b`` is ``B y = b[p]`` with ``x[p] = y``.
New values on the same pattern reuse the ordering and the permutation map (no reordering, no
indexing work beyond one gather). A matrix whose values are not symmetric or whose factorization
meets a zero or negative pivot is not SPD: it is factored again with threshold partial pivoting
(columns kept in our order) and a one-line :class:`PivotingWarning` says so.

References
----------
J. W. Demmel, S. C. Eisenstat, J. R. Gilbert, X. S. Li and J. W. H. Liu, "A supernodal approach to
sparse partial pivoting", SIAM J. Matrix Anal. Appl. 20 (1999) 720–755 (SuperLU).
N. J. Higham, "Accuracy and Stability of Numerical Algorithms", 2nd ed., SIAM (2002), ch. 10
(Cholesky and LU without pivoting of SPD matrices are stable) and ch. 12 (iterative refinement).
"""

from __future__ import annotations

import time
import warnings

import numpy as np
import scipy.sparse as sp
from scipy.sparse.linalg import splu

from .analysis import symbolic_factor
from .errors import InputError
from .graph import from_matrix
from .permutation import check_permutation, inverse_permutation

__all__ = ["OrderedFactor", "PivotingWarning", "FALLBACK_THRESHOLD"]

#: Diagonal pivot threshold of the fallback for matrices that are not SPD (threshold partial pivoting:
#: the diagonal is kept while it is at least this fraction of the largest entry of its column).
FALLBACK_THRESHOLD = 0.1

_SYM_TOL = 1e-12  # |a_ij - a_ji| <= _SYM_TOL * max|a| counts as symmetric


class PivotingWarning(UserWarning):
    """The matrix is not SPD; it was factored with threshold partial pivoting instead."""


def _canonical(A, what: str = "matrix") -> sp.csr_matrix:
    if not sp.issparse(A):
        A = np.asarray(A)
        if A.ndim != 2:
            raise InputError(f"{what} must be two-dimensional, got shape {A.shape}")
    A = sp.csr_matrix(A)
    if A.shape[0] != A.shape[1]:
        raise InputError(f"{what} must be square, got {A.shape[0]} x {A.shape[1]}")
    if not A.has_canonical_format:
        A = A.copy()
        A.sum_duplicates()
    return A


def _order(graph, method: str, seed: int, factorizations, options: dict):
    """(perm, seconds, info). ``auto`` is told how many factorizations follow (its cost-aware search
    pays for a costlier ordering only while the predicted saving over them exceeds the cost); the
    machine rates of the cost model are measured (once per machine, cached) before the clock."""
    from .orderings import order

    if method.split(":", 1)[0] == "auto":
        if "factorizations=" not in method and "factorizations" not in options:
            options = {"factorizations": 1.0 if factorizations is None else float(factorizations), **options}
        try:
            from .cost import machine_rates

            machine_rates()
        except Exception:  # the cost model falls back to its defaults by itself
            pass
    res = order(graph, method, seed=seed, **options)
    return res.perm, res.seconds, dict(res.info)


class OrderedFactor:
    """A sparse matrix ordered once and factored (and refactored) by SciPy's SuperLU in that order.

    Parameters
    ----------
    A : sparse matrix or array_like
        The matrix, or only its pattern (a boolean matrix, or ``factor=False``): then call
        :meth:`factor` with values later. Its stored pattern (explicit zeros included) is the one
        every later matrix must have.
    method : str
        Ordering computed once (see :func:`reorder.available`); ignored when ``perm`` is given.
    perm : array_like of int, optional
        A permutation to use instead (new position ``k`` holds old index ``perm[k]``).
    seed : int
        Seed of the ordering.
    factorizations : float, optional
        How many factorizations of this pattern will follow. With ``method="auto"`` the ordering is
        the cost-aware search of :func:`reorder.orderings.escalation.escalate`, which pays for a
        costlier ordering only while the predicted saving over that many factorizations exceeds its
        cost (default 1: one factorization). Other methods ignore it.
    factor : bool
        Factor ``A`` now (default, unless ``A`` is a boolean pattern).
    refine : int
        At most this many steps of iterative refinement per solve, taken only while the relative
        residual stays above ``refine_tol``.
    refine_tol : float
    **options
        Passed to the ordering (``effort=...`` for ``nd``).

    Attributes
    ----------
    perm, iperm : ndarray
        The ordering (new-to-old) and its inverse (the new position of each old index).
    order_seconds, symbolic_seconds, factor_seconds, solve_seconds : float
        Ordering; symbolic count; the last factorization; the last solve (refinement included).
    residuals : ndarray
        ``||b - A x|| / ||b||`` of each right-hand side of the last solve.
    pivoting : bool
        True when the last factorization fell back to threshold partial pivoting.

    Examples
    --------
    >>> import numpy as np, scipy.sparse as sp
    >>> T = sp.diags([-1.0, 4.0, -1.0], [-1, 0, 1], shape=(50, 50))
    >>> F = OrderedFactor(T, "rcm")
    >>> x = F.solve(np.ones(50))
    >>> bool(F.residuals.max() < 1e-12)
    True
    >>> x2 = F.refactor(2 * T).solve(np.ones(50))   # same pattern: the ordering is reused
    >>> bool(np.allclose(x2, x / 2))
    True
    """

    def __init__(self, A, method: str = "auto", *, perm=None, seed: int = 0, factorizations: float | None = None,
                 factor: bool | None = None, refine: int = 2, refine_tol: float = 1e-12, **options):
        A = _canonical(A)
        self.n = A.shape[0]
        self._indptr, self._indices = A.indptr.copy(), A.indices.copy()
        self.nnz = A.nnz
        self.refine, self.refine_tol = int(refine), float(refine_tol)
        graph = from_matrix(A)
        if perm is not None:
            t0 = time.perf_counter()
            self.perm = check_permutation(perm, self.n, source="permutation")
            self.method, self.seed = "given", None
            self.order_seconds = time.perf_counter() - t0
            self.order_info: dict = {}
        else:
            self.perm, self.order_seconds, self.order_info = _order(graph, method, seed, factorizations, options)
            self.method, self.seed = method, seed
        self.iperm = inverse_permutation(self.perm)
        t0 = time.perf_counter()
        self.symbolic = symbolic_factor(graph, self.perm)
        self.symbolic_seconds = time.perf_counter() - t0
        self._maps()
        self.factorizations = 0
        self.factor_seconds = self.solve_seconds = 0.0
        self.total_factor_seconds = 0.0
        self.residuals = np.zeros(0)
        self.pivoting = False
        self._lu = None
        self._A = None
        self._rows = None
        if factor is None:
            factor = A.dtype != bool
        if factor:
            self.factor(A)

    # ----------------------------------------------------------------------------------------------
    def _maps(self) -> None:
        """Index maps computed once per pattern: CSR data of A -> CSC data of A[p][:, p], and
        CSR data of A -> CSR data of Aᵀ (for the symmetry test), when the pattern is symmetric."""
        ids = sp.csr_matrix((np.arange(1, self.nnz + 1, dtype=np.float64), self._indices, self._indptr),
                            shape=(self.n, self.n))
        B = ids[self.perm][:, self.perm].tocsc()
        B.sort_indices()
        self._bmap = B.data.astype(np.int64) - 1
        self._bindptr, self._bindices = B.indptr, B.indices
        T = ids.T.tocsr()
        T.sort_indices()
        same = np.array_equal(T.indptr, self._indptr) and np.array_equal(T.indices, self._indices)
        self._tmap = T.data.astype(np.int64) - 1 if same else None

    def _check_pattern(self, A) -> sp.csr_matrix:
        A = _canonical(A)
        if A.shape[0] != self.n:
            raise InputError(f"matrix has {A.shape[0]} rows but the ordering is for {self.n}")
        if A.nnz != self.nnz or not (np.array_equal(A.indptr, self._indptr)
                                     and np.array_equal(A.indices, self._indices)):
            raise InputError(f"the sparsity pattern differs from the one ordered ({A.nnz} stored entries "
                             f"against {self.nnz}); build a new factorization for a new pattern")
        return A

    def _symmetric(self, A: sp.csr_matrix) -> bool:
        data = A.data
        if np.iscomplexobj(data):
            return False
        scale = float(np.abs(data).max()) if data.size else 0.0
        if self._tmap is None:  # pattern not symmetric: compare values through the transpose
            D = (A - A.T).tocsr()
            return bool(D.nnz == 0 or np.abs(D.data).max() <= _SYM_TOL * scale)
        return bool(np.all(np.abs(data - data[self._tmap]) <= _SYM_TOL * scale))

    def _dominant(self, A: sp.csr_matrix) -> bool:
        """True when the (symmetric) A has a positive diagonal and D^-1/2 A D^-1/2 is weakly
        diagonally dominant: then A is positive semidefinite (Gershgorin; the scaling keeps the sign
        of every eigenvalue), so no pivot can be negative and the diagonal of U need not be read.
        A singular one meets a zero pivot, which SuperLU reports."""
        d = A.diagonal()
        if d.size == 0 or not np.all(d > 0):
            return False
        r = 1.0 / np.sqrt(d)
        if self._rows is None:
            self._rows = np.repeat(np.arange(self.n), np.diff(self._indptr))
        scaled = np.abs(A.data) * r[self._rows] * r[A.indices]
        off = np.bincount(self._rows, weights=scaled, minlength=self.n) - 1.0
        return bool(np.all(off <= 1.0 + 1e-12))

    def factor(self, A) -> "OrderedFactor":
        """Factor new values on the pattern that was ordered (the ordering is reused).

        Parameters
        ----------
        A : sparse matrix
            Same shape and stored pattern as the matrix the object was built from.

        Returns
        -------
        OrderedFactor
            ``self``, so that ``F.refactor(A).solve(b)`` reads naturally.

        Raises
        ------
        InputError
            A different pattern, or a matrix that is singular even with pivoting.
        """
        A = self._check_pattern(A)
        if not np.issubdtype(A.dtype, np.number) or A.dtype == bool:
            raise InputError(f"matrix values must be numbers, not {A.dtype}")
        if not np.all(np.isfinite(A.data)):
            raise InputError("matrix holds NaN or infinite values")
        if A.dtype.kind in "iub":
            A = A.astype(np.float64)
        t0 = time.perf_counter()
        B = sp.csc_matrix((A.data[self._bmap], self._bindices, self._bindptr), shape=(self.n, self.n))
        reason = None if self._symmetric(A) else "its values are not symmetric"
        lu = None
        if reason is None:
            try:
                lu = splu(B, permc_spec="NATURAL", diag_pivot_thresh=0.0, options={"SymmetricMode": True})
            except RuntimeError:  # an exactly zero pivot
                reason = "a zero pivot appeared"
            else:
                d = np.ones(1) if self._dominant(A) else lu.U.diagonal()  # building U costs 5-25% of a factorization
                bad = np.flatnonzero(~(d.real > 0)) if d.size else d
                if bad.size:
                    k = int(bad[0])
                    reason = f"pivot {d[k].real:.3g} at new position {k} is not positive"
                    lu = None
        if lu is None:
            try:
                lu = splu(B, permc_spec="NATURAL", diag_pivot_thresh=FALLBACK_THRESHOLD,
                          options={"SymmetricMode": True})
            except RuntimeError:
                raise InputError("the matrix is singular: SuperLU met a zero pivot even with partial pivoting") from None
            warnings.warn(f"matrix is not symmetric positive definite ({reason}): factored with threshold "
                          f"partial pivoting (threshold {FALLBACK_THRESHOLD}) in the same column order",
                          PivotingWarning, stacklevel=2)
        self.factor_seconds = time.perf_counter() - t0
        self.total_factor_seconds += self.factor_seconds
        self.factorizations += 1
        self.pivoting = reason is not None
        self.pivot_reason = reason
        self._lu, self._A, self._nnz_l = lu, A, None
        return self

    refactor = factor

    # ----------------------------------------------------------------------------------------------
    def _raw_solve(self, b: np.ndarray) -> np.ndarray:
        y = self._lu.solve(np.ascontiguousarray(b[self.perm]))
        x = np.empty_like(y)
        x[self.perm] = y
        return x

    def solve(self, b) -> np.ndarray:
        """Solve ``A x = b`` for one right-hand side (shape ``(n,)``) or many (``(n, k)``).

        The right-hand side is permuted into the new order, solved with the factors and permuted
        back; the relative residual ``||b - A x|| / ||b||`` of each column is kept in
        :attr:`residuals`, and iterative refinement (at most :attr:`refine` steps) runs while it is
        above :attr:`refine_tol`.

        Raises
        ------
        InputError
            Nothing factored yet, or a right-hand side of the wrong length.
        """
        if self._lu is None:
            raise InputError("nothing factored yet: call factor(A) with the matrix values first")
        b = np.asarray(b)
        if b.ndim not in (1, 2) or b.shape[0] != self.n:
            raise InputError(f"right-hand side must have {self.n} rows, got shape {b.shape}")
        if b.dtype.kind not in "fc":
            b = b.astype(np.float64)
        t0 = time.perf_counter()
        x = self._raw_solve(b)
        res = self._residuals(b, x)
        for _ in range(self.refine):
            if not res.max(initial=0.0) > self.refine_tol:
                break
            r = b - self._A @ x
            x_new = x + self._raw_solve(r)
            res_new = self._residuals(b, x_new)
            if res_new.max(initial=0.0) >= res.max(initial=0.0):
                break
            x, res = x_new, res_new
        self.solve_seconds = time.perf_counter() - t0
        self.residuals = res
        return x

    def _residuals(self, b: np.ndarray, x: np.ndarray) -> np.ndarray:
        r = b - self._A @ x
        nr = np.linalg.norm(r.reshape(self.n, -1), axis=0)
        nb = np.linalg.norm(b.reshape(self.n, -1), axis=0)
        return np.where(nb > 0, nr / np.where(nb > 0, nb, 1.0), nr)

    # ----------------------------------------------------------------------------------------------
    @property
    def nnz_l(self) -> int:
        """Stored nonzeros of SuperLU's L (unit diagonal included) of the last factorization."""
        if self._lu is None:
            return 0
        if self._nnz_l is None:
            self._nnz_l = int(self._lu.L.nnz)
        return self._nnz_l

    def report(self) -> dict:
        """What a user weighs: times, fill (measured and predicted), memory, pivoting, residuals.

        Keys: ``n``, ``nnz``, ``method``, ``chosen`` (the candidate the cost-aware ``auto`` kept), ``seed``, ``order_seconds``, ``symbolic_seconds``,
        ``factor_seconds`` (last), ``factorizations``, ``total_factor_seconds``, ``solve_seconds``
        (last), ``nnz_l`` (SuperLU's L), ``nnz_factors`` (SuperLU's L + U storage), ``factor_bytes``
        (that storage in bytes: values plus 4-byte indices), ``predicted_nnz_l`` (exact symbolic
        Cholesky count), ``predicted_factor_ops``, ``predicted_factor_seconds`` (cost model, None
        when unavailable), ``pivoting``, ``residuals``.
        """
        lu = self._lu
        itemsize = lu.L.dtype.itemsize if lu is not None else 8
        pred = None
        try:
            from .cost import predict_seconds

            pred = predict_seconds(self.symbolic)
        except Exception:  # the cost model is an optional extra, never a reason to fail
            pred = None
        return {
            "n": self.n, "nnz": self.nnz, "method": self.method, "chosen": self.order_info.get("chosen"),
            "seed": self.seed,
            "order_seconds": self.order_seconds, "symbolic_seconds": self.symbolic_seconds,
            "factor_seconds": self.factor_seconds, "factorizations": self.factorizations,
            "total_factor_seconds": self.total_factor_seconds, "solve_seconds": self.solve_seconds,
            "nnz_l": self.nnz_l, "nnz_factors": int(lu.nnz) if lu is not None else 0,
            "factor_bytes": int(lu.nnz) * (itemsize + 4) if lu is not None else 0,
            "predicted_nnz_l": self.symbolic.nnz_factor, "predicted_factor_ops": self.symbolic.factor_ops,
            "predicted_factor_seconds": pred, "pivoting": self.pivoting,
            "residuals": [float(r) for r in np.atleast_1d(self.residuals)],
        }
