"""Where the entries of the Cholesky factor fall, counted per block of a spy plot.

Used by the report only (not timed); plain arrays in and out, nothing validated.
"""

from __future__ import annotations

import numpy as np
from numba import njit


@njit(cache=True)
def factor_blocks(n, indptr, indices, perm, inv, parent, nb):
    """Counts of the strictly lower entries of L per ``(row block, column block)``, split into
    entries of A (``orig``) and fill (``fill``); block of index ``i`` is ``i * nb // n``.

    Row ``i`` of L (new order) is the union of the elimination-tree paths from each ``k < i`` with
    ``a_ik != 0`` up to ``i`` (the row subtree; Liu 1986), so the walk costs O(nnz(L)).
    ``parent`` is the elimination tree in new positions (-1 at roots).
    """
    orig = np.zeros((nb, nb), dtype=np.int64)
    fill = np.zeros((nb, nb), dtype=np.int64)
    mark = np.full(n, -1, dtype=np.int64)
    amark = np.full(n, -1, dtype=np.int64)
    for i in range(n):
        v = perm[i]
        for t in range(indptr[v], indptr[v + 1]):
            amark[inv[indices[t]]] = i
        mark[i] = i
        bi = i * nb // n
        for t in range(indptr[v], indptr[v + 1]):
            k = inv[indices[t]]
            while k >= 0 and k < i and mark[k] != i:
                mark[k] = i
                if amark[k] == i:
                    orig[bi, k * nb // n] += 1
                else:
                    fill[bi, k * nb // n] += 1
                k = parent[k]
    return orig, fill
