"""Multilevel hierarchies for graph bisection: heavy-edge matching and contraction, level by level.

The matchings visit vertices in a locality-keeping random order drawn from the SplitMix64 stream of
:mod:`reorder.kernels.smallsep` (the compiled small-subproblem path draws the same numbers).

References
----------
.. [1] B. Hendrickson and R. Leland, "A multilevel algorithm for partitioning graphs", Proc.
       Supercomputing '95 (1995).
.. [2] G. Karypis and V. Kumar, "A fast and high quality multilevel scheme for partitioning irregular
       graphs", SIAM J. Sci. Comput. 20 (1998) 359–392.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .defaults import COARSE_SIZE
from .kernels import separators as _k
from .kernels import smallsep as _ks

__all__ = ["Level", "coarsen"]


@dataclass(frozen=True, eq=False)
class Level:
    """One graph of a multilevel hierarchy: CSR arrays with int64 edge and vertex weights and the
    map ``cmap`` from this level's vertices to the next coarser level (None on the coarsest)."""

    indptr: np.ndarray
    indices: np.ndarray
    ewgt: np.ndarray
    vweight: np.ndarray
    cmap: np.ndarray | None = None

    @property
    def n(self) -> int:
        return self.indptr.size - 1


def _local_random_order(n: int, state) -> np.ndarray:
    """A random visiting order that keeps memory locality: the blocks of 256 consecutive vertices
    are visited in random order, each block in a random order of its own (one random permutation of
    the block, composed with a random XOR mask per block); ``state`` is a generator state of
    :func:`reorder.kernels.smallsep.rng_state` (advanced).

    A fully random order makes the matching cache-bound: on a 10⁶-vertex grid the finest-level
    matching took 363 ms with it and 94 ms with 256-vertex blocks, and the contraction 104 and 61 ms
    (measured); the blocks also matched slightly more vertices (coarse/fine 0.512 against 0.544).
    """
    return _ks.random_visit(int(n), state)


def coarsen(indptr, indices, *, seed: int = 0, coarse_size: int = COARSE_SIZE, min_ratio: float = 0.9,
            ewgt=None, vweight=None, sorted_visit: bool = False, state=None) -> list[Level]:
    """Multilevel hierarchy by repeated heavy-edge matching until at most ``coarse_size`` vertices
    remain (or a matching shrinks the graph by less than ``1 - min_ratio``).

    Parameters
    ----------
    indptr, indices : ndarray of int64
        CSR of the (connected) graph.
    seed : int
        Seeds the random visiting order of the matching (a locality-keeping random order, see
        :func:`_local_random_order`).
    coarse_size : int
    min_ratio : float
    ewgt, vweight : ndarray of int64, optional
        Edge and vertex weights (ones if omitted).
    state : ndarray, optional
        Generator state to draw from (and advance) instead of a fresh one seeded by ``seed``.

    Returns
    -------
    list of Level
        Finest first; each level's ``cmap`` maps it to the next one.

    References
    ----------
    Hendrickson & Leland (1995); G. Karypis and V. Kumar, "A fast and high quality multilevel scheme
    for partitioning irregular graphs", SIAM J. Sci. Comput. 20 (1998) 359–392 (heavy-edge matching).
    """
    n = indptr.size - 1
    ewgt = np.ones(indices.size, dtype=np.int64) if ewgt is None else np.asarray(ewgt, dtype=np.int64)
    vweight = np.ones(n, dtype=np.int64) if vweight is None else np.asarray(vweight, dtype=np.int64)
    state = _ks.rng_state(int(seed)) if state is None else state
    total = int(vweight.sum())
    maxv = max(2, int(1.5 * total / max(coarse_size, 1)))
    levels = []
    cur = Level(indptr, indices, ewgt, vweight)
    while cur.n > coarse_size:
        visit = _local_random_order(cur.n, state)
        if sorted_visit:
            visit = visit[np.argsort(np.diff(cur.indptr)[visit], kind="stable")]
        # ties by index on the input graph (its numbering often follows the geometry), by the random
        # visiting order on coarse levels (numbered by their smaller fine vertex, see the kernel)
        nc, cmap, match = _k.heavy_edge_matching(cur.indptr, cur.indices, cur.ewgt, cur.vweight, visit, maxv,
                                                 len(levels) > 0)
        if nc > min_ratio * cur.n:
            break
        ci, cj, cw, cv = _k.contract(cur.indptr, cur.indices, cur.ewgt, cur.vweight, cmap, match, nc)
        levels.append(Level(cur.indptr, cur.indices, cur.ewgt, cur.vweight, cmap))
        cur = Level(ci, cj, cw, cv)
    levels.append(cur)
    return levels
