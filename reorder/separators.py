"""Graph bisection and vertex separators: spectral splits, König covers, FM refinement, multilevel.

The entry point is :func:`vertex_separator` (a :class:`Separator` of a connected graph): heavy-edge
coarsening, candidate splits on the coarsest graph (Fiedler vectors with their sums/differences,
breadth-first level structures), each made a vertex separator by a König cover and FM-refined; the
best few coarse candidates are projected and refined level by level up to the finest graph, and the
coarse eigenvectors are also interpolated with damped-Jacobi smoothing on every level and split at the
finest level (the coarse separator weight predicts the final one poorly on 3-D meshes, measured:
27-point 24³ grid, 808-850 vertices with one candidate carried, 746-850 with three plus smoothing;
a plane has 576). The pieces
(:func:`split_vector`, :func:`cover_separator`, :func:`refine_separator`, :func:`coarsen` from
:mod:`reorder.multilevel`) are public for tests and experiments. Inner loops live in
:mod:`reorder.kernels.separators`; the whole step for small subproblems (no eigensolver) also runs
compiled, in :func:`reorder.kernels.smallsep.cheap_separator`, with the same result.

References
----------
.. [1] M. Fiedler, "Algebraic connectivity of graphs", Czech. Math. J. 23 (1973) 298–305.
.. [2] A. Pothen, H. D. Simon and K.-P. Liou, "Partitioning sparse matrices with eigenvectors of
       graphs", SIAM J. Matrix Anal. Appl. 11 (1990) 430–452 (spectral vertex separators via a
       minimum vertex cover of the cut).
.. [3] C. Ashcraft and J. W. H. Liu, "A partition improvement algorithm for generalized nested
       dissection", Boeing Computer Services report BCSTECH-94-020 (1994).
.. [4] B. Hendrickson and E. Rothberg, "Improving the run time and quality of nested dissection
       ordering", SIAM J. Sci. Comput. 20 (1998) 468–489.
.. [5] S. T. Barnard and H. D. Simon, "Fast multilevel implementation of recursive spectral
       bisection for partitioning unstructured problems", Concurrency: Pract. Exper. 6 (1994) 101–117.
.. [6] B. Hendrickson and R. Leland, "A multilevel algorithm for partitioning graphs", Proc.
       Supercomputing '95 (1995).
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
import scipy.sparse as sp
from scipy.sparse.csgraph import maximum_bipartite_matching

from .defaults import BALANCE, COARSE_SIZE
from .graph import Graph
from .kernels import separators as _k
from .kernels import smallsep as _ks
from .multilevel import Level, _local_random_order, coarsen  # noqa: F401  (public here too)
from .kernels import traversal as _kt

__all__ = [
    "Separator",
    "Level",
    "vertex_separator",
    "split_vector",
    "cover_separator",
    "refine_separator",
    "coarsen",
    "check_separator",
]


@dataclass(frozen=True, eq=False)
class Separator:
    """A vertex separator of a graph.

    Attributes
    ----------
    part : ndarray of int8, shape (n,)
        0 or 1 for the two sides, 2 for the separator; no edge joins side 0 and side 1.
    sizes : tuple of int
        ``(|side 0|, |side 1|, |separator|)`` (vertex counts).
    info : dict
        How it was found: levels, coarsest size, candidate that won, eigensolver path.
    """

    part: np.ndarray
    sizes: tuple
    info: dict = field(default_factory=dict)


_LIMIT = None


def _max_side(total: int, balance: float) -> int:
    """Largest side weight allowed by the balance window: ``floor((1 - balance) * total)``, at
    least ``ceil(total / 2)`` so a split always exists."""
    return int(max(np.floor((1.0 - balance) * total + 1e-9), -(-total // 2)))


def split_vector(indptr, indices, vector, *, ewgt=None, vweight=None, balance: float = BALANCE,
                 mode: str = "window") -> tuple[np.ndarray, int]:
    """Two-way split of the vertices by a vector (e.g. a Fiedler vector).

    Vertices are sorted by ``vector``; every prefix is a candidate side 0. ``mode="median"`` takes
    the weighted median; ``mode="window"`` takes, among the prefixes whose sides both weigh at least
    ``balance`` of the total, the one minimising ``cut · W² / (4 w0 w1)`` (the edge cut with a mild
    preference for balance).

    Returns
    -------
    part : ndarray of int8
        0 / 1 per vertex.
    cut : int
        Weight of the cut edges.

    References
    ----------
    Pothen, Simon & Liou (1990) for the median split; the sweep over a window is common practice.
    """
    n = indptr.size - 1
    ewgt = np.ones(indices.size, dtype=np.int64) if ewgt is None else ewgt
    vweight = np.ones(n, dtype=np.int64) if vweight is None else vweight
    order = np.argsort(np.asarray(vector, dtype=np.float64), kind="stable").astype(np.int64)
    part, cut = _k.prefix_split(indptr, indices, ewgt, vweight, order, float(balance), mode == "median")
    return part, int(cut)


def cover_separator(indptr, indices, part, *, vweight=None) -> np.ndarray:
    """Turn a two-way split into a vertex separator by a minimum vertex cover of the cut edges.

    The cut edges form a bipartite graph; a maximum matching (SciPy's
    ``maximum_bipartite_matching``) gives a minimum vertex cover by König's theorem. With vertex
    weights the lighter of that cover and the two one-sided boundaries is used.

    Returns
    -------
    ndarray of int8
        0 / 1 sides and 2 for separator vertices.

    References
    ----------
    D. König (1931); Pothen, Simon & Liou (1990), section 4.
    """
    part = np.asarray(part, dtype=np.int8).copy()
    rows, cols, bptr, bind = _k.cut_bipartite(indptr, indices, part)
    if rows.size == 0:
        return part
    B = sp.csr_matrix((np.ones(bind.size, dtype=np.int8), bind, bptr), shape=(rows.size, cols.size))
    rm = np.asarray(maximum_bipartite_matching(B, perm_type="column"), dtype=np.int64)
    rc, cc = _k.konig_cover(bptr, bind, rm, cols.size)
    sep = np.concatenate((rows[rc], cols[cc]))
    if vweight is not None:
        options = [sep, rows, cols]
        wts = [int(vweight[s].sum()) for s in options]
        sep = options[int(np.argmin(wts))]
    part[sep] = 2
    return part


def refine_separator(indptr, indices, part, *, vweight=None, balance: float = BALANCE, passes: int = 8,
                     limit: int | None = None) -> np.ndarray:
    """Improve a vertex separator in place by Fiduccia–Mattheyses vertex moves under the balance
    window (no side heavier than ``floor((1 - balance) · W)``).

    Returns the side weights ``[w0, w1, w_sep]``.

    References
    ----------
    C. M. Fiduccia and R. M. Mattheyses, "A linear-time heuristic for improving network partitions",
    19th Design Automation Conference (1982); Ashcraft & Liu (1994); Hendrickson & Rothberg (1998).
    """
    n = indptr.size - 1
    vweight = np.ones(n, dtype=np.int64) if vweight is None else vweight
    total = int(vweight.sum())
    if limit is None:
        limit = int(min(max(25, n // 100), 150)) if _LIMIT is None else _LIMIT
    return _k.vertex_fm(indptr, indices, vweight, part, _max_side(total, balance), passes, limit)


def _pseudo_peripheral_distance(indptr, indices):
    """BFS distances from a pseudo-peripheral vertex (a fallback vector when no eigenvector)."""
    dist = _kt.bfs_levels(indptr, indices, 0)
    for _ in range(3):
        far = int(np.argmax(dist))
        d2 = _kt.bfs_levels(indptr, indices, far)
        if d2.max() <= dist.max() and _ > 0:
            dist = d2
            break
        dist = d2
    return dist.astype(np.float64)


# the 10 directions of {-1, 0, 1}³ (up to sign) that are not axes: diagonals of faces and of the cube
_DIRECTIONS3 = ((1, 1, 0), (1, -1, 0), (1, 0, 1), (1, 0, -1), (0, 1, 1), (0, 1, -1),
                (1, 1, 1), (1, 1, -1), (1, -1, 1), (1, -1, -1))


def _candidate_vectors(indptr, indices, ewgt, seed, k, directions=len(_DIRECTIONS3)):
    """Fiedler vector (and the next eigenvectors with their sums/differences; with three, the first
    ``directions`` of the 10 diagonal directions of their span) of a small weighted graph from the
    spectral engine; BFS distance as fallback."""
    from .spectral import fiedler_vector

    n = indptr.size - 1
    info = {}
    vecs = []
    try:
        g = Graph(n=n, indptr=indptr, indices=indices, weights=ewgt.astype(np.float64))
        kk = max(1, min(k, n - 2))
        res = fiedler_vector(g, weights="values", seed=seed, k=kk)
        info["path"] = res.path
        if res.vectors is not None and res.vectors.ndim == 2 and res.vectors.shape[1] > 1:
            V = res.vectors
            vecs = [V[:, j] for j in range(V.shape[1])]
            if V.shape[1] == 2:
                a, b = V[:, 0], V[:, 1]
                vecs += [a + b, a - b]
            elif V.shape[1] >= 3:
                vecs += [V[:, :3] @ np.asarray(d, dtype=np.float64) for d in _DIRECTIONS3[:max(int(directions), 0)]]
        else:
            vecs = [res.vector]
    except Exception as exc:  # eigensolver failure: fall back to a level structure
        info["path"] = f"bfs ({type(exc).__name__})"
    vecs.append(_pseudo_peripheral_distance(indptr, indices))
    return vecs, info


def _smooth_up(levels, vecs, steps: int = 4, omega: float = 0.6):
    """Interpolate coarsest-level vectors to the finest level, smoothing on every level by damped
    Jacobi steps ``x ← (1 − ω) x + ω D⁻¹ W x`` (which keep the low end of the Laplacian spectrum and
    damp what the piecewise-constant interpolation adds), the mean removed after each level.

    References
    ----------
    Barnard & Simon (1994) (interpolated Fiedler vectors, refined level by level).
    """
    X = np.column_stack(vecs).astype(np.float64)
    for lev in reversed(levels[:-1]):
        X = X[lev.cmap]
        m = lev.n
        W = sp.csr_matrix((lev.ewgt.astype(np.float64), lev.indices, lev.indptr), shape=(m, m))
        d = np.asarray(W.sum(axis=1)).ravel()
        d[d == 0] = 1.0
        for _ in range(steps):
            X = (1.0 - omega) * X + omega * ((W @ X) / d[:, None])
        X -= X.mean(axis=0)
    return [X[:, j] for j in range(X.shape[1])]


def _score(w, maxside):
    viol = max(0, int(max(w[0], w[1])) - maxside)
    return (viol, int(w[2]), abs(int(w[0]) - int(w[1])))


def vertex_separator(indptr, indices, *, seed: int = 0, balance: float = BALANCE, multilevel: bool = True,
                     refine: bool = True, mode: str = "window", coarse_size: int = COARSE_SIZE,
                     eigenvectors: int = 2, spectral_min: int = 2000, bfs_starts: int = 4,
                     keep: int = 3, smooth: int = 4, smooth_refine: int = 4,
                     directions: int = len(_DIRECTIONS3)) -> Separator:
    """Vertex separator of a connected graph: coarsen, split spectrally, cover, refine, project.

    Parameters
    ----------
    indptr, indices : ndarray of int64
        CSR of a connected graph (n ≥ 3).
    seed : int
        Seeds the matchings and the breadth-first starts (one SplitMix64 stream,
        :mod:`reorder.kernels.smallsep`) and the eigensolver.
    balance : float
        Balance window: no side heavier than ``floor((1 - balance) · n)`` after refinement, and the
        spectral split keeps each side at least ``balance`` of the coarsest graph.
    multilevel : bool
        Coarsen by heavy-edge matching first (False: split the graph itself).
    refine : bool
        Apply FM vertex refinement (at every level when multilevel).
    mode : {"window", "median"}
        How the spectral vector is split (see :func:`split_vector`).
    coarse_size : int
        Coarsening stops at about this many vertices.
    eigenvectors : int
        Eigenvectors computed on the coarsest graph; with two, their sum and difference are tried
        too (square meshes have a double λ₂); with three or more, the 10 diagonal directions of the
        first three's span (face and cube diagonals). Each spectral vector is also smoothed up to
        the finest level (``smooth``) and split there; of more than four, the four with the least
        cover are refined.
    spectral_min : int
        Graphs with fewer vertices skip the eigensolver and use only breadth-first candidates (the
        cheap path for the many small subproblems of nested dissection).
    bfs_starts : int
        Breadth-first level structures (from a pseudo-peripheral vertex and random vertices) tried as
        further candidate vectors on the coarsest graph.
    smooth_refine : int
        Of the smoothed vectors' separators, only the ``smooth_refine`` of least cover are refined
        (FM on the finest level is the costly step).
    directions : int
        With three eigenvectors, how many of the 10 diagonal directions are tried (the face
        diagonals of the first two eigenvectors come first, then the others): each costs a smoothed
        vector and a split on the finest level, so the ramp of ``normal`` gives them up one by one.
    keep : int
        The best ``keep`` distinct coarsest-level separators are each projected and refined up to
        the finest level, where the best is kept (the coarse separator weight predicts the final one
        poorly).

    Returns
    -------
    Separator

    References
    ----------
    Barnard & Simon (1994); Hendrickson & Leland (1995); Pothen, Simon & Liou (1990);
    Hendrickson & Rothberg (1998); A. George and J. W. H. Liu, "Computer Solution of Large Sparse
    Positive Definite Systems", Prentice-Hall (1981) (level structures).
    """
    n = indptr.size - 1
    st = _ks.rng_state(int(seed))  # one random stream for the coarsening and the breadth-first starts
    if multilevel:
        levels = coarsen(indptr, indices, seed=seed, coarse_size=coarse_size, state=st)
    else:
        levels = [Level(indptr, indices, np.ones(indices.size, dtype=np.int64), np.ones(n, dtype=np.int64))]
    c = levels[-1]
    total = int(c.vweight.sum())
    maxside = _max_side(total, balance)
    info = {}
    vecs = []
    if n >= spectral_min or not multilevel:
        vecs, info = _candidate_vectors(c.indptr, c.indices, c.ewgt, seed, eigenvectors if mode == "window" else 1,
                                        directions)
        if mode == "median":
            vecs = vecs[:1]
    nspectral = len(vecs)
    if mode == "window" or not vecs:
        # the farthest vertex from a random one (not from vertex 0: coarse vertices keep the fine
        # numbering's order, so vertex 0 sits in a corner of a grid-like graph)
        r0 = int(_ks.rand_below(st, c.n))
        starts = [int(np.argmax(_kt.bfs_levels(c.indptr, c.indices, r0)))]
        starts += [int(_ks.rand_below(st, c.n)) for _ in range(max(bfs_starts - 1, 0))]
        for s0 in starts[:max(bfs_starts, 1)]:
            vecs.append(_kt.bfs_levels(c.indptr, c.indices, s0).astype(np.float64))
    cands = []
    for j, vec in enumerate(vecs):
        p2, _ = split_vector(c.indptr, c.indices, vec, ewgt=c.ewgt, vweight=c.vweight, balance=balance, mode=mode)
        if j < nspectral or not refine:
            part = cover_separator(c.indptr, c.indices, p2, vweight=c.vweight if multilevel else None)
        else:  # breadth-first candidates on the cheap path: one-sided boundary, FM does the rest
            part = p2
            _k.boundary_cover(c.indptr, c.indices, part, c.vweight)
        if refine:
            w = refine_separator(c.indptr, c.indices, part, vweight=c.vweight, balance=balance)
        else:
            w = np.bincount(part, weights=c.vweight, minlength=3).astype(np.int64)
        key = _score(w, maxside)
        if any(np.array_equal(part, q) for _, _, q in cands):
            continue
        cands.append((key, j, part))
    # carry the best few coarse candidates through the uncoarsening: the coarse separator weight is
    # a poor predictor of the final one (a coarse separator is a thick band that FM thins level by level)
    cands.sort(key=lambda t: (t[0], t[1]))
    cands = cands[:max(1, int(keep))] if len(levels) > 1 else cands[:1]
    best, best_key = None, None
    if smooth and nspectral and len(levels) > 1:
        # interpolated, smoothed eigenvectors split at the finest level (the projected separators
        # above follow the coarse graph's shape; these follow the fine graph's spectrum). With more
        # than four vectors (three eigenvectors: 13 directions) only the four least covers are
        # refined: FM is the costly step, and the cover ranks the directions well
        fine = []
        maxside_n = _max_side(n, balance)
        for j, vec in enumerate(_smooth_up(levels, vecs[:nspectral], steps=smooth)):
            p2, _ = split_vector(indptr, indices, vec, balance=balance, mode=mode)
            part = cover_separator(indptr, indices, p2)
            fine.append((_score(np.bincount(part, minlength=3), maxside_n), j, part))
        if len(fine) > smooth_refine:
            fine = sorted(fine, key=lambda t: (t[0], t[1]))[:max(int(smooth_refine), 1)]
        for key, j, part in fine:
            if refine:
                refine_separator(indptr, indices, part, balance=balance)
                key = _score(np.bincount(part, minlength=3), maxside_n)
            if best_key is None or key < best_key:
                best, best_key, info["candidate"] = part, key, f"smoothed {j}"
    for key, j, part in cands:
        for lev in reversed(levels[:-1]):
            part = part[lev.cmap]
            if refine:
                w = refine_separator(lev.indptr, lev.indices, part, vweight=lev.vweight, balance=balance)
        if len(levels) > 1:
            w = np.bincount(part, minlength=3)
            key = _score(w, _max_side(n, balance))
        if best_key is None or key < best_key:
            best, best_key, info["candidate"] = part, key, j
    part = best
    sizes = tuple(int(x) for x in np.bincount(part, minlength=3))
    info.update(levels=len(levels), coarsest=int(c.n))
    return Separator(part=part, sizes=sizes, info=info)


def check_separator(indptr, indices, part) -> bool:
    """True if no edge joins side 0 and side 1 directly."""
    return int(_k.edges_cross(indptr, indices, np.asarray(part, dtype=np.int8))) == 0
