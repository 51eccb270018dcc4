"""Baseline orderings: the natural order and reverse Cuthill–McKee (SciPy)."""

from __future__ import annotations

import numpy as np
from scipy.sparse.csgraph import reverse_cuthill_mckee

from ..gallery import m_matrix
from ..graph import Graph
from ..permutation import inverse_permutation
from . import register
from .settings import NoSettings


@register("natural", summary="the order of the file (identity permutation)", split_components=False, rank=0)
def natural(graph: Graph, s: NoSettings, seed: int = 0):
    """Identity permutation."""
    return np.arange(graph.n, dtype=np.int64), {}


@register("rcm", summary="reverse Cuthill-McKee (SciPy), the bandwidth baseline", rank=10)
def rcm(graph: Graph, s: NoSettings, seed: int = 0):
    """Reverse Cuthill–McKee ordering of a connected graph, by SciPy.

    References
    ----------
    E. Cuthill and J. McKee, "Reducing the bandwidth of sparse symmetric matrices", Proc. 24th ACM
    National Conference (1969) 157–172; A. George, "Computer implementation of the finite element
    method", Stanford report STAN-CS-71-208 (1971) for the reversal.
    """
    perm = reverse_cuthill_mckee(graph.to_csr(), symmetric_mode=True)
    return np.asarray(perm, dtype=np.int64), {}


def superlu_minimum_degree(graph: Graph) -> np.ndarray:
    """SciPy SuperLU's own minimum degree on A + Aᵀ, as an ordering in our convention (the inverse
    of its column permutation ``perm_c``), from the factorization of the M-matrix of the graph's
    pattern (:func:`reorder.gallery.m_matrix`; no pivoting). The reference that ``auto`` and the
    cost-aware search compete with.
    """
    from scipy.sparse.linalg import splu

    lu = splu(m_matrix(graph), permc_spec="MMD_AT_PLUS_A", diag_pivot_thresh=0, options={"SymmetricMode": True})
    return inverse_permutation(lu.perm_c)
