"""Predicted factorization seconds from the exact symbolic counts, with a machine rate measured once.

The model prices a factorization of ``A[perm][:, perm]`` by SciPy's SuperLU (natural order, no
pivoting, symmetric mode) as

    t = rate_ops · ops_wide + rate_thin · ops_thin + rate_entry · nnz(L) + rate_column · n

where ``ops = Σ c_j²`` over the column counts ``c_j`` of the Cholesky factor is split into the columns
that sit in fundamental supernodes of width one (``ops_thin``: no dense block operation serves them,
e.g. most columns of a banded order) and the others (``ops_wide``). SuperLU's time does not follow
the operation count alone (SuperLU spends per entry and per column too, and runs far slower on
columns that form no supernode), which is why the four terms are there.

The rates come from :func:`machine_rates`: a short calibration (SuperLU on a few generated grids,
about half a second) run once per user and machine and cached in a JSON file under the user's cache
folder (``$REORDER_CACHE_DIR``, else ``$XDG_CACHE_HOME/reorder``, else ``~/.cache/reorder``). With
``REORDER_CALIBRATE=0`` in the environment, or when calibration fails, :data:`DEFAULT_RATES` is used
(measured on a shared 2-core machine; see DEVELOPERS.md).

References
----------
J. W. H. Liu, E. G. Ng and B. W. Peyton, "On finding supernodes for sparse matrix computations",
SIAM J. Matrix Anal. Appl. 14 (1993) 242–252 (fundamental supernodes from the elimination tree and
the column counts).
J. W. Demmel, S. C. Eisenstat, J. R. Gilbert, X. S. Li and J. W. H. Liu, "A supernodal approach to
sparse partial pivoting", SIAM J. Matrix Anal. Appl. 20 (1999) 720–755 (the factorization priced).
"""

from __future__ import annotations

import json
import os
import platform
import tempfile
import time
from dataclasses import asdict, dataclass
from pathlib import Path

import numpy as np
import scipy.sparse as sp

from .analysis import Symbolic, symbolic_factor
from .gallery import grid, m_matrix
from .graph import Graph, from_matrix

__all__ = ["Rates", "DEFAULT_RATES", "FactorCounts", "factor_counts", "predict_seconds", "machine_rates",
           "calibrate", "cache_file"]

#: version of the model and of the cache file layout: a cache of another version is measured again
MODEL_VERSION = 1


@dataclass(frozen=True)
class Rates:
    """Seconds per unit of each term of the model (see the module docstring).

    Attributes
    ----------
    ops : float
        Seconds per unit of ``Σ c_j²`` in columns of supernodes wider than one.
    thin : float
        Seconds per unit of ``Σ c_j²`` in columns that are supernodes of their own.
    entry : float
        Seconds per entry of L.
    column : float
        Seconds per column.
    source : str
        ``"default"``, ``"measured"`` or ``"cache"``.
    """

    ops: float
    thin: float
    entry: float
    column: float
    source: str = "default"


#: rates fitted (least squares in relative error) to 70 SuperLU runs on a shared 2-core machine:
#: bundled meshes, graphs and 2-D/3-D grids of 1 500-90 000 rows, each in RCM, minimum-degree and
#: nested-dissection order; the fit predicts those runs within 0.27-1.35x (geometric mean error
#: 1.23x). The calibration rescales them to the machine at hand.
DEFAULT_RATES = Rates(ops=2.0e-10, thin=1.3e-9, entry=5.0e-8, column=6.0e-7, source="default")


@dataclass(frozen=True)
class FactorCounts:
    """The symbolic counts the model prices.

    Attributes
    ----------
    n : int
    nnz_factor : int
        nnz(L), diagonal included.
    ops : float
        ``Σ c_j²``.
    ops_thin : float
        The part of ``ops`` in columns that form a fundamental supernode of width one.
    supernodes : int
        Number of fundamental supernodes.
    """

    n: int
    nnz_factor: int
    ops: float
    ops_thin: float
    supernodes: int


def factor_counts(sym: Symbolic) -> FactorCounts:
    """Counts of :class:`FactorCounts` from a symbolic factorization.

    Column ``j`` and ``j + 1`` share a fundamental supernode when ``j + 1`` is the parent of ``j`` in
    the elimination tree, ``j`` is its only child and ``c_j = c_{j+1} + 1`` (Liu, Ng & Peyton 1993).

    Parameters
    ----------
    sym : Symbolic
        From :func:`reorder.analysis.symbolic_factor`.

    Returns
    -------
    FactorCounts

    Examples
    --------
    >>> import numpy as np
    >>> from reorder.graph import from_edges
    >>> from reorder.analysis import symbolic_factor
    >>> g = from_edges(3, [0, 1], [1, 2])           # a path: no fill
    >>> factor_counts(symbolic_factor(g)).nnz_factor
    5
    """
    parent = np.asarray(sym.parent, dtype=np.int64)
    cc = np.asarray(sym.colcounts, dtype=np.float64)
    n = int(parent.size)
    if n == 0:
        return FactorCounts(0, 0, 0.0, 0.0, 0)
    nchild = np.bincount(parent[parent >= 0], minlength=n)
    j = np.arange(n - 1)
    joined = (parent[:-1] == j + 1) & (cc[:-1] == cc[1:] + 1) & (nchild[1:] == 1)
    # width of the supernode of each column: a column is thin if joined neither to the previous
    # nor to the next column
    with_next = np.zeros(n, dtype=bool)
    with_next[:-1] = joined
    with_prev = np.zeros(n, dtype=bool)
    with_prev[1:] = joined
    thin = ~(with_next | with_prev)
    sq = cc * cc
    return FactorCounts(n=n, nnz_factor=int(cc.sum()), ops=float(sq.sum()), ops_thin=float(sq[thin].sum()),
                        supernodes=int(n - np.count_nonzero(joined)))


def predict_seconds(counts: FactorCounts | Symbolic, rates: Rates | None = None) -> float:
    """Predicted seconds of one SuperLU factorization (natural order, no pivoting) of the ordered matrix.

    Parameters
    ----------
    counts : FactorCounts or Symbolic
    rates : Rates, optional
        Default: :func:`machine_rates` (measured once per machine and cached).

    Returns
    -------
    float

    Examples
    --------
    >>> from reorder.graph import from_edges
    >>> from reorder.analysis import symbolic_factor
    >>> g = from_edges(3, [0, 1], [1, 2])
    >>> predict_seconds(symbolic_factor(g), DEFAULT_RATES) < 1e-5
    True
    """
    if isinstance(counts, Symbolic):
        counts = factor_counts(counts)
    r = machine_rates() if rates is None else rates
    wide = counts.ops - counts.ops_thin
    return float(r.ops * wide + r.thin * counts.ops_thin + r.entry * counts.nnz_factor + r.column * counts.n)


# --------------------------------------------------------------------------------------------------
# calibration and cache
# --------------------------------------------------------------------------------------------------


def cache_file() -> Path:
    """Where the measured rates are kept: ``$REORDER_CACHE_DIR/factor_rates.json``, else under
    ``$XDG_CACHE_HOME/reorder`` or ``~/.cache/reorder``."""
    base = os.environ.get("REORDER_CACHE_DIR")
    if not base:
        xdg = os.environ.get("XDG_CACHE_HOME")
        base = os.path.join(xdg, "reorder") if xdg else os.path.join(os.path.expanduser("~"), ".cache", "reorder")
    return Path(base) / "factor_rates.json"


def _machine_key() -> str:
    import scipy

    return f"{platform.node()}|{platform.machine()}|{os.cpu_count()}|scipy {scipy.__version__}"


def _grid(dims) -> sp.csc_matrix:
    """M-matrix of the 5-point (2-D) or 7-point (3-D) stencil, diagonal = degree + 1."""
    return m_matrix(grid(*dims))


def _time_superlu(B: sp.csc_matrix, repeat: int) -> float:
    from scipy.sparse.linalg import splu

    best = np.inf
    for _ in range(repeat):
        t0 = time.perf_counter()
        splu(B, permc_spec="NATURAL", diag_pivot_thresh=0, options={"SymmetricMode": True})
        best = min(best, time.perf_counter() - t0)
    return best


def calibrate(repeat: int = 3) -> Rates:
    """Measure this machine's speed: SuperLU on a 2-D grid (100²) and a 3-D grid (16³), each in
    SciPy's own minimum-degree order, against :data:`DEFAULT_RATES`' prediction; all rates are
    scaled by the geometric mean of measured over predicted (kept within [1/10, 10]). Takes about
    a quarter of a second.

    Returns
    -------
    Rates
        With ``source="measured"``.
    """
    ratios = []
    for dims in ((100, 100), (16, 16, 16)):
        A = _grid(dims)
        g = from_matrix(A)
        perm = _cheap_fill_order(g)
        B = sp.csc_matrix(A[perm][:, perm])
        pred = predict_seconds(factor_counts(symbolic_factor(g, perm)), DEFAULT_RATES)
        ratios.append(_time_superlu(B, repeat) / pred)
    scale = float(np.clip(np.exp(np.mean(np.log(ratios))), 0.1, 10.0))
    d = DEFAULT_RATES
    return Rates(ops=d.ops * scale, thin=d.thin * scale, entry=d.entry * scale, column=d.column * scale,
                 source="measured")


def _cheap_fill_order(g: Graph) -> np.ndarray:
    """SciPy SuperLU's own minimum degree on the pattern (no project ordering needed here)."""
    from .orderings.basic import superlu_minimum_degree

    return superlu_minimum_degree(g)


_RATES: Rates | None = None


def machine_rates(*, refresh: bool = False) -> Rates:
    """The rates for this machine: from memory, else the cache file, else a calibration (written to
    the cache file atomically; a cache folder that cannot be written is not an error).

    ``REORDER_CALIBRATE=0`` in the environment returns :data:`DEFAULT_RATES` without measuring.

    Parameters
    ----------
    refresh : bool
        Measure again and rewrite the cache.

    Returns
    -------
    Rates
    """
    global _RATES
    if os.environ.get("REORDER_CALIBRATE", "1").strip() in ("0", "no", "false"):
        return DEFAULT_RATES
    if _RATES is not None and not refresh:
        return _RATES
    path = cache_file()
    key = _machine_key()
    if not refresh:
        try:
            data = json.loads(path.read_text())
            if data.get("version") == MODEL_VERSION and data.get("machine") == key:
                r = data["rates"]
                _RATES = Rates(ops=float(r["ops"]), thin=float(r["thin"]), entry=float(r["entry"]),
                               column=float(r["column"]), source="cache")
                return _RATES
        except (OSError, ValueError, KeyError, TypeError):
            pass
    try:
        rates = calibrate()
    except Exception:  # a failed measurement must not stop an ordering
        _RATES = DEFAULT_RATES
        return _RATES
    _RATES = rates
    _write_cache(path, {"version": MODEL_VERSION, "machine": key, "measured_at": time.time(),
                        "rates": {k: v for k, v in asdict(rates).items() if k != "source"}})
    return _RATES


def _write_cache(path: Path, data: dict) -> None:
    try:
        path.parent.mkdir(parents=True, exist_ok=True)
        if path.exists() and not path.is_file():
            return  # never replace what is not a regular file
        fd, tmp = tempfile.mkstemp(prefix=".factor_rates.", dir=path.parent)
        try:
            with os.fdopen(fd, "w") as fh:
                json.dump(data, fh, indent=1)
            os.replace(tmp, path)
        except BaseException:
            try:
                os.unlink(tmp)
            except OSError:
                pass
            raise
    except OSError:
        pass
