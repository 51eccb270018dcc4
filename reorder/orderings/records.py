"""The settings records of the built-in orderings, in one light module.

Each built-in ordering declares its settings here as one frozen dataclass (see
:mod:`reorder.orderings.settings`); its module imports the record from here. They live apart from
the numerical code so that listing methods and options (``reorder methods``, ``--help``, checking an
option before a matrix is read) needs neither NumPy, SciPy nor the compiled kernels. Values left at
None come from the method's presets (for ``nd``: :data:`reorder.orderings.nd.presets.TABLE`).
"""

from __future__ import annotations

from dataclasses import dataclass

from ..defaults import BALANCE, COARSE_SIZE, OPERATORS, SOLVERS, WEIGHTS
from ..errors import InputError
from .settings import setting

__all__ = ["EFFORTS", "SCORES", "PIVOT_RULES", "ENVELOPE_CANDIDATES", "AutoSettings", "SpectralSettings",
           "MinDegreeSettings", "NdSettings", "RsbSettings"]

#: presets of ``nd`` (``effort``), cheapest first
EFFORTS = ("fast", "normal", "best")
#: pivot rules of minimum degree, in the order of the kernel's rule numbers
SCORES = ("degree", "mean_fill", "fill", "exact", "exact_fill", "exact_mean_fill")
#: pivot rules of the subtree choice of ``nd`` (each may carry a tie seed, ``"degree/1"``)
PIVOT_RULES = SCORES + ("auto",)
#: candidate families of the spectral envelope ordering
ENVELOPE_CANDIDATES = ("spectral", "hybrid", "sloan", "rcm", "polish")

_TABLE = "from the effort table (reorder.orderings.nd.presets)"


@dataclass(frozen=True)
class AutoSettings:
    """Settings of ``auto`` (see :func:`auto`)."""

    factorizations: float = setting(1.0, "how many factorizations of this pattern follow (Newton or time steps); "
                                    "the more, the more ordering effort pays", minimum=0.0, flag="--factorizations",
                                    metavar="K")
    candidates: tuple | None = setting(None, "run exactly these methods (comma-separated) and keep the least nnz(L), "
                                       "instead of the cost-aware search")
    superlu_max: int = setting(50_000, "up to this many rows SciPy SuperLU's minimum degree may be a candidate "
                               "(0: never)", minimum=0)
    effort: str | None = setting(None, "fast: search no further than nd-fast; best: run every candidate whatever "
                                 "it costs; normal: the cost-aware search (the default)", choices=EFFORTS,
                                 flag="--effort")
    multisection: bool | None = setting(None, "multisection of the nd candidates (see nd)", flag="--multisection")


@dataclass(frozen=True)
class SpectralSettings:
    """Settings of ``spectral`` (see :func:`spectral_envelope`); the last group goes to
    :func:`reorder.spectral.fiedler_vector`."""

    operator: str = setting("laplacian", "spectral operator", choices=OPERATORS, flag="--operator")
    weights: str = setting("pattern", "edge weights: pattern (all ones) or values (|a_ij|)", choices=WEIGHTS,
                           flag="--weights")
    refine: bool = setting(True, "keep the least profile among the candidate families (false: plain Fiedler sort)")
    candidates: tuple = setting(ENVELOPE_CANDIDATES, "candidate families tried when refining", items=ENVELOPE_CANDIDATES)
    polish_rounds: int = setting(2, "rounds of polishing passes", minimum=0)
    large: int = setting(200_000, "above this many rows fewer weight pairs and one eigenvector", minimum=0)
    near_double: float = setting(0.05, "relative gap of lambda2 and lambda3 below which v3 also drives candidates",
                                 minimum=0.0)
    tol: float = setting(1e-3, "eigensolver relative tolerance", minimum=0.0)
    maxiter: int = setting(200, "eigensolver iteration limit", minimum=1)
    solver: str = setting("auto", "eigensolver", choices=("auto",) + SOLVERS)
    fallbacks: tuple = setting(("eigsh", "lobpcg", "level-structure"), "eigensolvers tried after a failed one",
                               items=SOLVERS)
    dense_max: int = setting(200, "dense eigensolver up to this many rows", minimum=0)
    eigsh_max: int = setting(5000, "shift-invert Lanczos up to this many rows", minimum=0)
    fallback_eigsh_max: int = setting(50_000, "Lanczos as a fallback up to this many rows", minimum=0)
    accept: float = setting(2.0, "slack of the eigensolver's convergence test", minimum=1.0)
    blas_threads: int | None = setting(1, "BLAS threads while solving (none: leave as is)", minimum=1)


@dataclass(frozen=True)
class MinDegreeSettings:
    """Settings of ``mindegree`` (see :func:`minimum_degree` for what each does)."""

    score: str = setting("auto", "pivot rule; auto tries several and keeps the least nnz(L)",
                         choices=("auto",) + SCORES)
    dense: float = setting(10.0, "postpone rows of degree above DENSE*sqrt(n) to the end (<= 0: never)")
    aggressive: bool = setting(True, "absorb every element covered by the new one, not only adjacent ones")
    fifo: bool = setting(False, "degree buckets first-in first-out (default last-in first-out)")
    reverse: bool = setting(False, "break ties by the reversed tie order (an explicit score only)")
    delta: int = setting(0, "degree tolerance of a multiple-elimination stage (exact rules only)")
    compress: bool | str | None = setting(None, "merge identical rows before the first pivot: true, false or auto "
                                          "(default: auto with score auto, else false)", choices=(True, False, "auto"))
    elbow: float = setting(0.2, "extra workspace as a fraction of the stored entries", minimum=0.0)


@dataclass(frozen=True)
class NdSettings:
    """Settings of ``nd``; those left at None come from the effort table
    (:data:`reorder.orderings.nd.presets.TABLE`)."""

    effort: str = setting("normal", "presets: fast suits a single factorization; best polishes every size and keeps "
                          "the best of three runs (see the effort table)", choices=EFFORTS, flag="--effort")
    multisection: bool | None = setting(None, "let subtrees take the multisection order (leaves first, then their "
                                        "separators by minimum degree) where the exact fill is lower; false keeps "
                                        "every tree separator a single dissection separator; default " + _TABLE,
                                        flag="--multisection")
    leaf_size: int | None = setting(None, "subgraphs of at most this many vertices are not split; default " + _TABLE,
                                    minimum=2)
    balance: float = setting(BALANCE, "balance window: no side lighter than about this share of its subgraph",
                             minimum=0.0)
    multilevel: bool = setting(True, "coarsen by heavy-edge matching before each split")
    refine: bool = setting(True, "FM vertex refinement of each separator")
    split: str = setting("window", "split of the spectral vector: best cut in the balance window, or the median",
                         choices=("window", "median"))
    leaf_order: str = setting("auto", "ordering of the leaves", choices=("auto", "halo", "mindegree", "rcm"))
    coarse_size: int = setting(COARSE_SIZE, "coarsening stops at about this many vertices", minimum=2)
    eigenvectors: int = setting(2, "eigenvectors computed on each coarsest graph", minimum=1)
    top_eigenvectors: int | None = setting(None, "eigenvectors on the top subproblems; default " + _TABLE, minimum=1)
    spectral_min: int | None = setting(None, "smaller subproblems use breadth-first candidates only; default "
                                       + _TABLE, minimum=0)
    trials: int | None = setting(None, "separators computed per subproblem (best kept); default " + _TABLE, minimum=1)
    trials_min: int = setting(0, "subproblems smaller than this use one trial", minimum=0)
    ratio_key: bool = setting(True, "keep the trial of best separator-to-balance ratio (false: smallest separator)")
    top_trials: int | None = setting(None, "trials on the top subproblems; default " + _TABLE, minimum=1)
    top_fraction: float = setting(0.1, "top subproblems hold at least this share of the graph", minimum=0.0)
    keep: int | None = setting(None, "coarse candidates carried to the finest level; default " + _TABLE, minimum=1)
    smooth: int | None = setting(None, "smoothing steps per level of interpolated eigenvectors; default " + _TABLE,
                                 minimum=0)
    hybrid_max: int | None = setting(None, "subtrees up to this size compete with minimum degree and multisection "
                                     "(0: off); default " + _TABLE, minimum=0)
    hybrid_scores: tuple | None = setting(None, "pivot rules tried there, NAME or NAME/TIESEED; default " + _TABLE)
    hybrid_key: str = setting("nnz", "cost of a subtree's columns: sum c_j (nnz) or sum c_j^2 (ops)",
                              choices=("nnz", "ops"))
    hybrid_wide: int | None = setting(None, "subtrees above this size try only hybrid_wide_scores; default " + _TABLE,
                                      minimum=0)
    hybrid_wide_scores: tuple = setting(("degree", "fill"), "pivot rules of the wide subtrees")
    hybrid_climb: int | None = setting(None, "the choice climbs up to this size while minimum degree keeps winning; "
                                       "default " + _TABLE, minimum=0)
    hybrid_gate: float | None = setting(0.25, "skip further rules where the first costs over 1+GATE times the best "
                                        "(none: try all)", minimum=0.0)
    restarts: int | None = setting(None, "whole runs with different seeds, best kept; default " + _TABLE, minimum=1)
    restart_key: str = setting("nnz", "what the restarts minimise", choices=("nnz", "ops"))
    compiled: bool = setting(True, "dissect subproblems below spectral_min in one compiled call each (same result "
                             "as the Python loop, faster)")
    threads: int | None = setting(None, "worker threads for independent subtrees (the result does not depend on "
                                  "it); default: REORDER_THREADS or min(2, cores)", minimum=1)

    def __post_init__(self):
        for field in ("hybrid_scores", "hybrid_wide_scores"):
            for rule in getattr(self, field) or ():
                name, _, tie = rule.partition("/")
                if name not in PIVOT_RULES or (tie and not tie.isdigit()):
                    raise InputError(f"nd: option {field}: unknown pivot rule '{rule}' "
                                     f"(rules: {', '.join(PIVOT_RULES)}, optionally /TIESEED)")


@dataclass(frozen=True)
class RsbSettings:
    """Settings of ``rsb`` (see :func:`recursive_spectral_bisection`)."""

    parts: int = setting(8, "number of blocks (a power of two gives the classic method)", minimum=1, flag="--parts")
    within: str = setting("auto", "ordering inside each block (auto: minimum degree)",
                          choices=("auto", "mindegree", "rcm"))
