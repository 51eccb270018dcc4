"""Minimum degree elimination on the quotient graph (numba kernel, plain arrays in and out).

The kernel keeps the graph of the partially eliminated matrix implicitly, as a quotient graph:
eliminated vertices become *elements* (cliques, stored as the list of variables they connect),
uneliminated vertices are *variables* whose lists hold their adjacent elements first and their
remaining variable neighbours after. All lists share one integer workspace of O(nnz) size that is
compacted when it runs full.

Published ingredients, written from their descriptions:

* quotient graph, element absorption, indistinguishable vertices (supervariables) and mass
  elimination: A. George and J. W. H. Liu, "The evolution of the minimum degree ordering algorithm",
  SIAM Review 31 (1989) 1–19;
* approximate external degrees, hash-based supervariable detection and aggressive absorption:
  P. R. Amestoy, T. A. Davis and I. S. Duff, "An approximate minimum degree ordering algorithm",
  SIAM J. Matrix Anal. Appl. 17 (1996) 886–905;
* exact external degrees updated once per stage of multiple elimination: J. W. H. Liu,
  "Modification of the minimum-degree algorithm by multiple elimination", ACM Trans. Math.
  Software 11 (1985) 141–153;
* halo vertices that take part in degrees but are never eliminated: F. Pellegrini, J. Roman and
  P. Amestoy, "Hybridizing nested dissection and halo approximate minimum degree for efficient sparse
  matrix ordering", Concurrency: Practice and Experience 12 (2000) 69–84.

Implementation notes (speed). The elimination loops (:func:`_eliminate` here) take every array as an
argument and call no other compiled function in their hot path (the bucket and heap operations are
written out in place): numba keeps reference counts of arrays that are allocated locally or passed
to callees, and in a loop of this size its pruning of those counts fails, so that each bucket
operation cost a dozen atomic operations (27% of the time on a 10⁶-vertex grid, measured with
``perf``). Index arrays are 32-bit when the workspace fits (the caller picks the type through the
``tie`` array): half the memory traffic. The per-vertex fields read together (list start and
length, element count, weight, state, stamps, degree, bucket and hash links) share one record
``V[v]`` of 16 fields, so that a vertex costs one cache miss instead of one per array. Under the
approximate fill rules the variables of a new element keep their places in the queue through the
step and get their new keys in place (one sift instead of a removal and an insertion). On the 10⁶-vertex
grid these cut the kernel to about a third of the earlier time (score 0). The fill rules' queue
keeps the whole-number keys of single variables in buckets and only the others (supervariables,
large keys) in a 4-ary heap whose slots hold key and sequence number side by side: with one
binary heap for every key, heap operations were half of the loop's time (8.5 ms on the 120² grid,
4.2 ms with the pivots given); now 6.3 ms there, and 0.59 s instead of 0.89 s on the 10⁶-vertex
grid, with the same orders. The heap's sift is a called kernel (:func:`_sift`), not inlined: the
compilation of the first run is what that buys (6.2 s against 9.1 s inlined, 5.6 s before).

Implementation notes (compilation). numba's compile time grows with the number of statements of a
function, and each compiled function is typed, lowered and optimised on its own: the first run of a
fresh installation spends its time here. So the fill rules (:func:`approximate_min_degree`,
what the default ordering uses), the degree rule (:mod:`reorder.kernels.mindegree_degree`, degree
buckets: nested dissection's leaves) and the exact rules (:mod:`reorder.kernels.mindegree_exact`,
only for the multi-rule search and nested dissection) have separate loops and compile separately;
the steps the loops share are written once and inlined into each by numba (``inline="always"``: no
call in the hot loop), and each heap or bucket operation is spelled out once per loop; the set-up (:func:`_setup`, :func:`_merge_initial`) and the finishing
(:func:`_finish`) are kernels of their own, which the warm-up (:mod:`reorder.warmup`) compiles in
one process while another compiles the loop. Nothing here validates input;
:mod:`reorder.orderings.mindegree` does. All kernels release the GIL.
"""

from __future__ import annotations

import numpy as np
from numba import njit

# vertex states
_VAR = 0  # principal variable (uneliminated supervariable representative)
_ELEM = 1  # live element (eliminated pivot whose clique is still needed)
_DEAD = 2  # absorbed element, merged variable, mass-eliminated variable, or excluded vertex

# fields of the per-vertex record V
_START, _LEN, _NEL, _WT, _STATE, _STAMP, _WEXT, _EDEG = 0, 1, 2, 3, 4, 5, 6, 7
_DEG, _BNEXT, _BPREV, _EXTD, _CLIQ, _HKEY, _HNEXT, _PEND = 8, 9, 10, 11, 12, 13, 14, 15
_NFIELD = 16

#: largest workspace (entries) of the 32-bit path; the caller checks ``2 nnz + 3 n + 64`` against it
INT32_LIMIT = 2**31 - 1

# slots of the resumable state of :func:`_eliminate`
_S_MINDEG, _S_NEL, _S_NPIV, _S_TICK, _S_TOCK, _S_USED, _S_HSIZE, _S_SEQ = 0, 1, 2, 3, 4, 5, 6, 7
_S_NPEND, _S_STAGEDEG, _S_NLEFT, _S_NTODO, _S_RESUME, _S_MASK, _S_INIT = 8, 9, 10, 11, 12, 13, 14
_NSTATE = 16


@njit(cache=True, nogil=True)
def _fill_score(d, m, c):
    """Approximate local fill per column of a supervariable of size ``c``.

    Eliminating it joins its ``d`` external neighbours into a clique; ``m`` of them already form one
    (the largest adjacent element), so at most ``d(d-1)/2 - m(m-1)/2`` new entries appear. The
    approximate-fill scores follow E. Rothberg and S. C. Eisenstat, "Node selection strategies for
    bottom-up sparse matrix ordering", SIAM J. Matrix Anal. Appl. 19 (1998) 682–695, and E. G. Ng and
    P. Raghavan, "Performance of greedy ordering heuristics for sparse Cholesky factorization",
    SIAM J. Matrix Anal. Appl. 20 (1999) 902–914.
    """
    if m > d:
        m = d
    return (0.5 * (d * (d - 1.0) - m * (m - 1.0))) / c


@njit(cache=True, nogil=True)
def _minus_ones(size, like):
    """A new array of ``size`` entries -1 of the type of ``like`` (cheaper to compile than np.full)."""
    a = np.empty(size, dtype=like.dtype)
    for k in range(size):
        a[k] = -1
    return a


@njit(cache=True, nogil=True)
def _heapsort(a):
    """Sort the int64 array ``a`` in place (heap sort; O(m log m); compiles in a fraction of the
    time numba's library sorts take)."""
    m = a.size
    for start in range(m // 2 - 1, -1, -1):
        k = start
        x = a[k]
        while True:
            c = 2 * k + 1
            if c >= m:
                break
            if c + 1 < m and a[c + 1] > a[c]:
                c += 1
            if a[c] > x:
                a[k] = a[c]
                k = c
            else:
                break
        a[k] = x
    for end in range(m - 1, 0, -1):
        x = a[end]
        a[end] = a[0]
        k = 0
        while True:
            c = 2 * k + 1
            if c >= end:
                break
            if c + 1 < end and a[c + 1] > a[c]:
                c += 1
            if a[c] > x:
                a[k] = a[c]
                k = c
            else:
                break
        a[k] = x


@njit(cache=True, nogil=True)
def _compact(ws, used, V):
    """Slide the live lists of ``ws`` to the front, in position order; return the new used size.

    The first entry of each live list is replaced by ``-(owner + 1)`` so that one left-to-right
    sweep finds the owners; field ``_EXTD`` of ``V`` (free during compaction) saves the overwritten
    entries.
    """
    n = V.shape[0]
    for o in range(n):
        if V[o, _STATE] != _DEAD and V[o, _LEN] > 0:
            p = V[o, _START]
            V[o, _EXTD] = ws[p]
            ws[p] = -(o + 1)
    dst = 0
    p = 0
    while p < used:
        x = ws[p]
        if x < 0:
            o = -x - 1
            ln = V[o, _LEN]
            V[o, _START] = dst
            ws[dst] = V[o, _EXTD]
            for k in range(1, ln):
                ws[dst + k] = ws[p + k]
            dst += ln
            p += ln
        else:
            p += 1
    return dst



# ---------------------------------------------------------------------------------------------
# Steps shared by the elimination loops (fill rules here, the degree rule in
# :mod:`reorder.kernels.mindegree_degree`, exact rules in
# :mod:`reorder.kernels.mindegree_exact`). They are inlined into each loop by numba itself
# (``inline="always"``: the same code as if written out in place, no call and no reference
# counting in the hot loop), so each loop compiles on its own, when first needed.


@njit(inline="always")
def _new_element(me, ws, V, used, counters):
    """Gather the variables of the new element ``me`` (its own variables and those of the adjacent
    elements, which it absorbs) into one list; their weights turn negative while they are in it.

    Returns ``(degme, used, want)``: the weight of the list, the new used size of ``ws``, and
    ``want > 0`` (nothing done but a compaction) when ``ws`` must first grow to ``want`` entries.
    """
    wslen = ws.size
    ne = V[me, _NEL]
    degme = 0
    if ne == 0:
        p0 = V[me, _START]
        q = p0
        for p in range(p0, p0 + V[me, _LEN]):
            i = ws[p]
            if V[i, _STATE] == _VAR and V[i, _WT] > 0:
                ws[q] = i
                q += 1
                degme += V[i, _WT]
                V[i, _WT] = -V[i, _WT]
        V[me, _LEN] = q - p0
        return degme, used, 0
    need = V[me, _LEN] - ne
    s = V[me, _START]
    for k in range(ne):
        e = ws[s + k]
        if V[e, _STATE] == _ELEM:
            need += V[e, _LEN]
    if used + need > wslen:
        used = _compact(ws, used, V)
        counters[4] += 1
        if used + need > wslen:
            return degme, used, used + need
    p0 = used
    q = p0
    s = V[me, _START]
    for k in range(ne):
        e = ws[s + k]
        if V[e, _STATE] != _ELEM:
            continue
        for p in range(V[e, _START], V[e, _START] + V[e, _LEN]):
            i = ws[p]
            if V[i, _STATE] == _VAR and V[i, _WT] > 0:
                ws[q] = i
                q += 1
                degme += V[i, _WT]
                V[i, _WT] = -V[i, _WT]
        V[e, _STATE] = _DEAD
        V[e, _LEN] = 0
        counters[3] += 1
    for p in range(s + ne, s + V[me, _LEN]):
        i = ws[p]
        if V[i, _STATE] == _VAR and V[i, _WT] > 0:
            ws[q] = i
            q += 1
            degme += V[i, _WT]
            V[i, _WT] = -V[i, _WT]
    V[me, _START] = p0
    V[me, _LEN] = q - p0
    V[me, _NEL] = 0
    return degme, q, 0


@njit(inline="always")
def _clique_degrees(me, lme0, lme1, tick, degme, nel, nleft, aggressive, mask, role, ws, V, hhead, mnext, mlast,
                    xfirst, xlast, counters):
    """For the variables ``ws[lme0:lme1]`` of the new element ``me``: external degrees bounds
    (field ``_EXTD``) and the largest old adjacent element (``_CLIQ``), pruned lists with ``me``
    added, absorption of elements inside ``me``, mass elimination, hash keys (into ``hhead``).

    Returns ``(tick, degme, nel, nleft)`` updated.
    """
    # ---- |Le \ Lme| for every element adjacent to the clique
    tick += 1
    for p in range(lme0, lme1):
        i = ws[p]
        nvi = -V[i, _WT]
        s = V[i, _START]
        for k in range(V[i, _NEL]):
            e = ws[s + k]
            if V[e, _STATE] != _ELEM:
                continue
            if V[e, _STAMP] != tick:
                V[e, _STAMP] = tick
                V[e, _WEXT] = V[e, _EDEG]
            V[e, _WEXT] -= nvi

    # ---- external degrees, list pruning, absorption, mass elimination, hash keys
    for p in range(lme0, lme1):
        i = ws[p]
        nvi = -V[i, _WT]
        s = V[i, _START]
        q = s
        ext = 0
        h = 0
        big = 0
        nei = V[i, _NEL]
        for k in range(nei):
            e = ws[s + k]
            if V[e, _STATE] != _ELEM:
                continue
            we = V[e, _WEXT]
            if we > 0 or not aggressive:
                ext += we
                if V[e, _EDEG] > big:
                    big = V[e, _EDEG]
                ws[q] = e
                q += 1
                h += e
            else:
                V[e, _STATE] = _DEAD
                V[e, _LEN] = 0
                counters[3] += 1
        newne = q - s
        for k in range(nei, V[i, _LEN]):
            j = ws[s + k]
            if V[j, _STATE] == _VAR and V[j, _WT] > 0:
                ext += V[j, _WT]
                ws[q] = j
                q += 1
                h += j
        # add the new element to the element part (there is always room: me itself or an
        # element absorbed into me was pruned from this list)
        if q > s + newne:
            ws[q] = ws[s + newne]
        ws[s + newne] = me
        q += 1
        newne += 1
        h += me
        V[i, _NEL] = newne
        V[i, _LEN] = q - s
        if ext == 0 and role[i] == 1:
            # mass elimination: i is adjacent to nothing outside the new element
            for k in range(newne):
                e = ws[s + k]
                if e != me:
                    V[e, _EDEG] -= nvi
            V[i, _STATE] = _DEAD
            V[i, _WT] = 0
            V[i, _LEN] = 0
            degme -= nvi
            nel += nvi
            nleft -= nvi
            if xfirst[me] == -1:
                xfirst[me] = i
            else:
                mnext[xlast[me]] = i
            xlast[me] = mlast[i]
            counters[1] += nvi
        else:
            V[i, _EXTD] = ext
            V[i, _CLIQ] = big
            V[i, _HKEY] = h
            if role[i] == 1:
                b = h & mask
                V[i, _HNEXT] = hhead[b]
                hhead[b] = i

    return tick, degme, nel, nleft


@njit(inline="always")
def _supervariables(lme0, lme1, tock, mask, role, ws, V, flag, hhead, mnext, mlast, counters):
    """Merge the variables of ``ws[lme0:lme1]`` with identical lists (same hash bucket, then an
    entry-by-entry comparison) into supervariables; returns ``tock`` updated."""
    # ---- supervariables: variables of Lme with identical lists are merged
    for p in range(lme0, lme1):
        i = ws[p]
        if V[i, _STATE] != _VAR or role[i] != 1:
            continue
        b = V[i, _HKEY] & mask
        a = hhead[b]
        if a == -1:
            continue
        hhead[b] = -1
        while a != -1:
            nxt = V[a, _HNEXT]
            if nxt == -1:
                break
            tock += 1
            sa = V[a, _START]
            la = V[a, _LEN]
            for k in range(la):
                flag[ws[sa + k]] = tock
            prev = a
            c = nxt
            while c != -1:
                cn = V[c, _HNEXT]
                same = V[c, _HKEY] == V[a, _HKEY] and V[c, _LEN] == la and V[c, _NEL] == V[a, _NEL]
                if same:
                    sc = V[c, _START]
                    for k in range(la):
                        if flag[ws[sc + k]] != tock:
                            same = False
                            break
                if same:
                    V[a, _WT] += V[c, _WT]  # both negative
                    V[c, _WT] = 0
                    V[c, _STATE] = _DEAD
                    V[c, _LEN] = 0
                    mnext[mlast[a]] = c
                    mlast[a] = mlast[c]
                    counters[2] += 1
                    V[prev, _HNEXT] = cn
                else:
                    prev = c
                c = cn
            a = V[a, _HNEXT]

    return tock


@njit(inline="always")
def _degree_bound(i, nvi, degme, nleft, V):
    """Approximate external degree of variable ``i`` (weight ``nvi``) after the step: an upper
    bound."""
    d = V[i, _DEG] + degme - nvi
    d2 = V[i, _EXTD] + degme - nvi
    if d2 < d:
        d = d2
    if nleft - nvi < d:
        d = nleft - nvi
    if d < 0:
        d = 0
    return d


@njit(cache=True, nogil=True)
def _sift(kk, x, xk, xs, hsize, heap, hpos, hk):
    """Put the entry ``x`` (key ``xk``, negated sequence number ``xs``) into slot ``kk`` of the 4-ary
    heap ``heap``/``hk`` of ``hsize`` entries, sifting it up or down; ``hpos`` follows every move.
    Callers pass ``kk`` and ``x`` as int64 (one compiled signature).

    A called kernel, not inlined: inlined at its five call sites it made the first compilation of
    :func:`_eliminate` 3.5 s longer (9.1 s against 5.6 s before the buckets; now 6.7 s). With the
    buckets taking the keys of single variables, the heap is busy only with supervariables, where
    the call costs about 5% of the loop (an elasticity mesh whose vertices all merge in pairs)."""
    up = False
    if kk > 0:
        pk = (kk - 1) >> 2
        up = xk < hk[pk, 0] or (xk == hk[pk, 0] and xs < hk[pk, 1])
    if up:
        while kk > 0:
            pk = (kk - 1) >> 2
            if xk < hk[pk, 0] or (xk == hk[pk, 0] and xs < hk[pk, 1]):
                u = heap[pk]
                heap[kk] = u
                hk[kk, 0] = hk[pk, 0]
                hk[kk, 1] = hk[pk, 1]
                hpos[u] = kk
                kk = pk
            else:
                break
    else:
        while True:
            c = 4 * kk + 1
            if c >= hsize:
                break
            cend = c + 4 if c + 4 <= hsize else hsize
            m = c
            mk = hk[c, 0]
            ms = hk[c, 1]
            for cc in range(c + 1, cend):
                ck = hk[cc, 0]
                if ck < mk or (ck == mk and hk[cc, 1] < ms):
                    m = cc
                    mk = ck
                    ms = hk[cc, 1]
            if mk < xk or (mk == xk and ms < xs):
                u = heap[m]
                heap[kk] = u
                hk[kk, 0] = mk
                hk[kk, 1] = ms
                hpos[u] = kk
                kk = m
            else:
                break
    heap[kk] = x
    hk[kk, 0] = xk
    hk[kk, 1] = xs
    hpos[x] = kk


@njit(cache=True, nogil=True)
def _eliminate(n, role, aggressive, fifo, score, nb, st, counters, ws, V, flag, hhead, mnext, mlast, xfirst, xlast,
               pivots, heap, hpos, hk, vseq, bhead, tie):
    """The elimination loop of :func:`approximate_min_degree` under the fill rules (scores 1 and 2;
    the degree rule has a loop of its own, :mod:`reorder.kernels.mindegree_degree`).

    Resumable: the loop's scalars live in ``st``. Returns 0 when every vertex is ordered, else the
    workspace size it needs to go on (the caller grows ``ws`` and calls again; the pivot of the
    interrupted step is kept in ``st``).

    The pivot is the variable of least (key, −sequence number): every queued key gets a new
    sequence number, so ties go to the latest key and the order does not depend on how the queue is
    kept. The queue has two parts. Keys of single variables are whole numbers (``d(d−1)/2 −
    m(m−1)/2``); those below ``nb`` sit in buckets (``bhead``, links in the vertex records), each
    a stack, so that its head holds the latest key: no comparison at all, as for degrees in the
    degree rule. Keys of supervariables (fractions) and larger ones go to a 4-ary heap (``heap``,
    ``hk`` = (key, −sequence) per slot, side by side: one cache line holds a node's children).
    ``hpos[v]`` is ``v``'s heap slot, ``-2 - key`` in a bucket, ``-1`` not queued; ``vseq[v]`` the
    sequence number of a bucket entry. With ``nb = 0`` every key goes to the heap (the reference
    for the tests: the same order). Measured on the 120² grid (fill rule): the loop took 8.5 ms
    with one binary heap, about half of it in heap operations; the buckets take most of them.
    The bucket operations are spelled out where they are used (no array crosses a function call
    in the hot loop); heap moves call :func:`_sift` (rare where the buckets take the keys).
    """
    mindeg = st[_S_MINDEG]
    nel = st[_S_NEL]
    npiv = st[_S_NPIV]
    tick = st[_S_TICK]
    tock = st[_S_TOCK]
    used = st[_S_USED]
    hsize = st[_S_HSIZE]
    seq = st[_S_SEQ]
    nleft = st[_S_NLEFT]
    ntodo = st[_S_NTODO]
    resume = st[_S_RESUME]
    mask = st[_S_MASK]

    if st[_S_INIT] == 0:
        # ---- the initial queue, in tie order (later entries win ties)
        st[_S_INIT] = 1
        mindeg = nb
        for k in range(n):
            v = tie[k] if fifo else tie[n - 1 - k]
            if role[v] != 1 or V[v, _STATE] != _VAR:
                continue
            hkv = _fill_score(float(V[v, _DEG]), 0.0, float(V[v, _WT]))
            if V[v, _WT] == 1 and hkv < nb:
                b = int(hkv)
                h0 = bhead[b]
                V[v, _BPREV] = -1
                V[v, _BNEXT] = h0
                if h0 != -1:
                    V[h0, _BPREV] = v
                bhead[b] = v
                hpos[v] = -2 - b
                vseq[v] = seq
                if b < mindeg:
                    mindeg = b
            else:
                hsize += 1
                _sift(int(hsize - 1), int(v), hkv, -float(seq), hsize, heap, hpos, hk)
            seq += 1

    while nel < ntodo:
        if resume >= 0:
            me = resume
            resume = -1
        else:
            # ---- pivot: the least (key, -sequence) of the buckets' first non-empty stack and of
            # the heap
            while mindeg < nb and bhead[mindeg] == -1:
                mindeg += 1
            frombucket = False
            if mindeg < nb:
                me = bhead[mindeg]
                frombucket = hsize == 0 or mindeg < hk[0, 0] or (mindeg == hk[0, 0] and -float(vseq[me]) < hk[0, 1])
            if frombucket:
                nx = V[me, _BNEXT]
                bhead[mindeg] = nx
                if nx != -1:
                    V[nx, _BPREV] = -1
                hpos[me] = -1
            else:
                me = heap[0]
                hpos[me] = -1
                hsize -= 1
                if hsize > 0:
                    _sift(int(0), int(heap[hsize]), hk[hsize, 0], hk[hsize, 1], hsize, heap, hpos, hk)
            pivots[npiv] = me
            npiv += 1
            nvp = V[me, _WT]
            nel += nvp
            nleft -= nvp
            V[me, _STATE] = _ELEM

        # ---- the new element's variables Lme: A_me plus the variables of the adjacent elements
        degme, used, want = _new_element(me, ws, V, used, counters)
        if want > 0:
            # the caller grows the workspace and calls again with this pivot
            st[_S_MINDEG] = mindeg
            st[_S_NEL] = nel
            st[_S_NPIV] = npiv
            st[_S_TICK] = tick
            st[_S_TOCK] = tock
            st[_S_USED] = used
            st[_S_HSIZE] = hsize
            st[_S_SEQ] = seq
            st[_S_NLEFT] = nleft
            st[_S_RESUME] = me
            return want
        lme0 = V[me, _START]
        lme1 = lme0 + V[me, _LEN]

        # ---- |Le \ Lme|, external degrees, absorption, mass elimination; supervariables. The
        # variables of Lme keep their places in the queue meanwhile (no pivot is taken before
        # their new keys)
        tick, degme, nel, nleft = _clique_degrees(me, lme0, lme1, tick, degme, nel, nleft, aggressive, mask, role, ws,
                                                  V, hhead, mnext, mlast, xfirst, xlast, counters)
        tock = _supervariables(lme0, lme1, tock, mask, role, ws, V, flag, hhead, mnext, mlast, counters)

        # ---- finish the element: the variables of Lme merged or mass-eliminated in this step
        # leave the queue, the others get their new keys
        q = lme0
        for p in range(lme0, lme1):
            i = ws[p]
            alive = V[i, _STATE] == _VAR
            if alive:
                nvi = -V[i, _WT]
                V[i, _WT] = nvi
                ws[q] = i
                q += 1
            kk = hpos[i]
            if kk == -1:  # not queued (halo)
                continue
            if kk <= -2:
                # out of its bucket
                b = -2 - kk
                pb = V[i, _BPREV]
                nx = V[i, _BNEXT]
                if pb == -1:
                    bhead[b] = nx
                else:
                    V[pb, _BNEXT] = nx
                if nx != -1:
                    V[nx, _BPREV] = pb
                hpos[i] = -1
                kk = -1
            tobucket = False
            if alive:
                d = _degree_bound(i, nvi, degme, nleft, V)
                V[i, _DEG] = d
                m = V[i, _CLIQ] if V[i, _CLIQ] > degme else degme
                xk = _fill_score(float(d), float(m - nvi), float(nvi))
                if score == 2:
                    xk *= nvi ** 0.5
                tobucket = nvi == 1 and xk < nb
            if kk >= 0 and (tobucket or not alive):
                # out of the heap: the last entry takes the slot
                hpos[i] = -1
                hsize -= 1
                if kk < hsize:
                    _sift(int(kk), int(heap[hsize]), hk[hsize, 0], hk[hsize, 1], hsize, heap, hpos, hk)
                kk = -1
            if not alive:
                continue
            if tobucket:
                # (spelled out, as in the initial queue above: an inline="always" helper for the
                # push made the whole loop 1.35x slower on the 120² grid, numba 0.68)
                b = int(xk)
                h0 = bhead[b]
                V[i, _BPREV] = -1
                V[i, _BNEXT] = h0
                if h0 != -1:
                    V[h0, _BPREV] = i
                bhead[b] = i
                hpos[i] = -2 - b
                vseq[i] = seq
                if b < mindeg:
                    mindeg = b
            else:
                if kk < 0:
                    # a new heap entry
                    kk = hsize
                    hsize += 1
                _sift(int(kk), int(i), xk, -float(seq), hsize, heap, hpos, hk)
            seq += 1
        V[me, _LEN] = q - lme0
        V[me, _EDEG] = degme
        if V[me, _LEN] == 0:
            V[me, _STATE] = _DEAD

    st[_S_NPIV] = npiv
    st[_S_USED] = used
    return 0


@njit(cache=True, nogil=True)
def _merge_initial(n, role, ws, V, flag, mnext, mlast, counters):
    """Initial supervariables: vertices to eliminate with identical closed neighbourhoods are merged
    before the first elimination (their degrees become external degrees). Returns the last stamp
    used in ``flag``."""
    tock = 0
    # initial supervariables: hash of the closed neighbourhood, then an exact comparison
    # (all vertices at once: a table of about n buckets)
    cmask = 1
    while cmask < n:
        cmask *= 2
    chead = _minus_ones(cmask, ws)
    cmask -= 1
    for v in range(n):
        if role[v] != 1:
            continue
        h = v
        for p in range(V[v, _START], V[v, _START] + V[v, _LEN]):
            h += ws[p]
        V[v, _HKEY] = h
        b = h & cmask
        V[v, _HNEXT] = chead[b]
        chead[b] = v
    for v in range(n):
        if role[v] != 1:
            continue
        b = V[v, _HKEY] & cmask
        a = chead[b]
        if a == -1:
            continue
        chead[b] = -1
        while a != -1:
            if V[a, _STATE] != _VAR:
                a = V[a, _HNEXT]
                continue
            tock += 1
            flag[a] = tock
            for p in range(V[a, _START], V[a, _START] + V[a, _LEN]):
                flag[ws[p]] = tock
            prev = a
            c = V[a, _HNEXT]
            while c != -1:
                cn = V[c, _HNEXT]
                same = V[c, _HKEY] == V[a, _HKEY] and V[c, _LEN] == V[a, _LEN] and flag[c] == tock
                if same:
                    for p in range(V[c, _START], V[c, _START] + V[c, _LEN]):
                        x = ws[p]
                        if x != a and flag[x] != tock:
                            same = False
                            break
                if same:
                    V[a, _WT] += 1
                    V[c, _WT] = 0
                    V[c, _STATE] = _DEAD
                    V[c, _LEN] = 0
                    mnext[mlast[a]] = c
                    mlast[a] = mlast[c]
                    counters[2] += 1
                    counters[6] += 1
                    V[prev, _HNEXT] = cn
                else:
                    prev = c
                c = cn
            a = V[a, _HNEXT]
    for v in range(n):
        if V[v, _STATE] == _VAR:
            V[v, _DEG] = V[v, _LEN] - (V[v, _WT] - 1)
    return tock


@njit(cache=True, nogil=True)
def _setup(n, indptr, indices, role, tie, elbow, score, compress):
    """The workspace and every array of the elimination loops (see :func:`quotient_min_degree`):
    ``(ws, V, flag, hhead, mnext, mlast, xfirst, xlast, bhead, btail, pivots, heap, hpos, hval,
    hseq, plist, counters, st, stf)``."""
    itype = tie.dtype
    # ---- workspace: adjacency without left-out vertices and without halo-halo edges
    nnz = 0
    for v in range(n):
        if role[v] < 0:
            continue
        for p in range(indptr[v], indptr[v + 1]):
            u = indices[p]
            if role[u] < 0 or (role[v] == 0 and role[u] == 0):
                continue
            nnz += 1
    wslen = nnz + int(elbow * nnz) + 2 * n + 16
    if wslen <= nnz:  # a negative elbow (tests: forces the growth path) still holds the graph
        wslen = nnz + 1
    if tie.itemsize == 4 and wslen > INT32_LIMIT:
        wslen = INT32_LIMIT
    ws = np.empty(wslen, dtype=itype)
    # per-vertex record: list start, list length, element
    # entries at the front of a variable's list, supervariable size (negative while in the pivot's
    # clique), state, step stamp, |Le \\ Lme| of an element touched in this step, weight of the live
    # variables of an element
    # and, from field 8 on: approximate external degree, degree-bucket links, external degree and
    # largest old element around a variable (this step), hash key (truncated to the index type:
    # equal keys only select the pairs whose lists are compared entry by entry, so a truncation
    # changes no merge), hash-bucket link, 'degree awaits the end of the stage' (exact rules).
    # With 16 fields a vertex fills one cache line.
    V = np.empty((n, _NFIELD), dtype=itype)
    for v in range(n):
        for f in range(_NFIELD):
            V[v, f] = 0
        V[v, _STATE] = _DEAD
        V[v, _BNEXT] = -1
        V[v, _BPREV] = -1
        V[v, _HNEXT] = -1
    flag = np.empty(n, dtype=np.int64)
    for v in range(n):
        flag[v] = 0
    # hash buckets, key & (size - 1): every bucket filled in a step is emptied in the same step,
    # so the table only needs to spread the variables of one new element; a table that stays in
    # cache (at most 2^15 buckets) spares a cache miss per variable. (Any bucket function gives the
    # same merges: only variables of equal key are compared, in the same relative order.)
    mask = 1
    while mask < n and mask < 32768:
        mask *= 2
    hhead = _minus_ones(mask, ws)
    mask -= 1
    mnext = _minus_ones(n, ws)  # member lists of supervariables / pivots
    mlast = np.empty(n, dtype=itype)
    for v in range(n):
        mlast[v] = v
    xfirst = _minus_ones(n, ws)  # mass-eliminated members of a pivot
    xlast = _minus_ones(n, ws)
    bhead = _minus_ones(n + 1, ws)
    btail = _minus_ones(n + 1, ws)
    pivots = np.empty(n, dtype=itype)
    useheap = score == 1 or score == 2 or score >= 4
    nh = n if useheap else 1  # the heap's arrays are not touched under the bucket rules
    heap = np.empty(nh, dtype=itype)
    hpos = _minus_ones(nh, ws)
    # key and sequence number of the entry in heap slot k under the exact rules (kept with the
    # slot, not the vertex: comparisons read neighbouring slots); the fill rules keep them side by
    # side in an array of their own (:func:`approximate_min_degree`) and use ``hseq`` for the
    # sequence numbers of bucket entries, by vertex
    hval = np.empty(n if score >= 4 else 1, dtype=np.float64)
    hseq = np.empty(nh, dtype=np.int64)
    plist = np.empty(n if score >= 3 else 1, dtype=itype)
    counters = np.empty(7, dtype=np.int64)
    for k in range(7):
        counters[k] = 0

    used = 0
    nleft = 0  # weight of variables not yet eliminated (halo included)
    ntodo = 0
    for v in range(n):
        V[v, _START] = used
        if role[v] < 0:
            continue
        for p in range(indptr[v], indptr[v + 1]):
            u = indices[p]
            if role[u] < 0 or (role[v] == 0 and role[u] == 0):
                continue
            ws[used] = u
            used += 1
        V[v, _LEN] = used - V[v, _START]
        V[v, _WT] = 1
        V[v, _DEG] = V[v, _LEN]
        V[v, _STATE] = _VAR
        nleft += 1
        if role[v] == 1:
            ntodo += 1
    tock = 0  # stamp for list comparison
    if compress:
        tock = _merge_initial(n, role, ws, V, flag, mnext, mlast, counters)

    st = np.empty(_NSTATE, dtype=np.int64)
    for k in range(_NSTATE):
        st[k] = 0
    stf = np.empty(1, dtype=np.float64)
    stf[0] = 0.0
    st[_S_TOCK] = tock
    st[_S_USED] = used
    st[_S_NLEFT] = nleft
    st[_S_NTODO] = ntodo
    st[_S_RESUME] = -1
    st[_S_MASK] = mask
    return ws, V, flag, hhead, mnext, mlast, xfirst, xlast, bhead, btail, pivots, heap, hpos, hval, hseq, plist, \
        counters, st, stf


@njit(cache=True, nogil=True)
def _grow(ws, used, want, n):
    """A larger copy of the workspace ``ws`` (its live lists are in ``ws[:used]``), for a loop that
    asked for ``want`` entries: the workspace is full even after compaction."""
    size = max(2 * ws.size, want + n)
    if ws.itemsize == 4 and size > INT32_LIMIT:
        size = INT32_LIMIT
    grown = np.empty(size, dtype=ws.dtype)
    for p in range(used):  # (a loop: a slice copy compiles numba's shape-error path, seconds)
        grown[p] = ws[p]
    return grown


@njit(cache=True, nogil=True)
def _finish(ntodo, npiv, indptr, xfirst, mnext, pivots):
    """The order and the step groups (see :func:`quotient_min_degree`) from the pivots and member
    lists of a finished elimination."""
    # ---- the order: per pivot, the vertices mass-eliminated with it, then its supervariable
    # (members by increasing degree in the given graph, stable). A mass-eliminated vertex has no
    # neighbour outside the pivot's clique, so placing it first never costs more than after the pivot.
    out = np.empty(ntodo, dtype=np.int64)
    group = np.empty(ntodo, dtype=np.int64)
    k = 0
    for t in range(npiv):
        v = xfirst[pivots[t]]
        while v != -1:
            out[k] = v
            group[k] = 2 * t
            k += 1
            v = mnext[v]
        k0 = k
        v = pivots[t]
        while v != -1:
            out[k] = v
            group[k] = 2 * t + 1
            k += 1
            v = mnext[v]
        if k - k0 > 1:
            if k - k0 <= 32:
                for a in range(k0 + 1, k):  # insertion sort by degree (stable)
                    x = out[a]
                    dx = indptr[x + 1] - indptr[x]
                    b = a - 1
                    while b >= k0 and indptr[out[b] + 1] - indptr[out[b]] > dx:
                        out[b + 1] = out[b]
                        b -= 1
                    out[b + 1] = x
            else:
                # stable sort by degree: distinct keys degree * m + position, heap-sorted
                m = k - k0
                seg = out[k0:k].copy()
                keys = np.empty(m, dtype=np.int64)
                for a in range(m):
                    keys[a] = (indptr[seg[a] + 1] - indptr[seg[a]]) * m + a
                _heapsort(keys)
                for a in range(m):
                    out[k0 + a] = seg[keys[a] % m]
    return out, group


@njit(cache=True, nogil=True)
def approximate_min_degree(n, indptr, indices, role, tie, aggressive, fifo, elbow, score, compress, nb):
    """:func:`quotient_min_degree` under the approximate fill rules (``score`` 1 or 2; the degree
    rule, 0, is :func:`reorder.kernels.mindegree_degree.degree_min_degree`); keys of single
    variables below ``nb`` (at most ``n + 1``) are kept in buckets (see :func:`_eliminate`)."""
    ws, V, flag, hhead, mnext, mlast, xfirst, xlast, bhead, btail, pivots, heap, hpos, hval, hseq, plist, \
        counters, st, stf = _setup(n, indptr, indices, role, tie, elbow, score, compress)
    hk = np.empty((n, 2), dtype=np.float64)
    if nb > n + 1:
        nb = n + 1
    while True:
        want = _eliminate(n, role, aggressive, fifo, score, nb, st, counters, ws, V, flag, hhead, mnext, mlast, xfirst,
                          xlast, pivots, heap, hpos, hk, hseq, bhead, tie)
        if want == 0:
            break
        ws = _grow(ws, st[_S_USED], want, n)
    out, group = _finish(st[_S_NTODO], st[_S_NPIV], indptr, xfirst, mnext, pivots)
    counters[0] = st[_S_NPIV]
    counters[5] = ws.size
    return out, counters, group


def quotient_min_degree(n, indptr, indices, role, tie, aggressive, fifo, elbow, score, delta=0, compress=False,
                        buckets=True):
    """Order the vertices with ``role == 1`` by approximate minimum external degree.

    Parameters
    ----------
    n : int
    indptr, indices : int64 (or int32) arrays
        Symmetric graph without self loops (CSR).
    role : int8 array
        ``1`` eliminate, ``0`` halo (kept in the graph, never eliminated), ``-1`` left out entirely
        (postponed dense rows; the caller places them).
    tie : int32 or int64 array
        A permutation of ``0..n-1``; among vertices of equal initial degree the earlier one in
        ``tie`` is eliminated first. Its type is the index type of the workspace: int32 only where
        ``2 nnz + 3 n + 64 < 2**31`` (the caller checks; see :data:`INT32_LIMIT`).
    aggressive : bool
        Absorb every element whose variables all lie in the new element, not only the adjacent ones.
    fifo : bool
        Degree buckets first-in first-out (else last-in first-out).
    elbow : float
        Extra workspace as a fraction of the stored entries (a negative value leaves less than the
        usual slack of ``2 n``, down to one free entry: tests use it to force the growth path).
    score : int
        ``0``: pick the least approximate external degree (degree buckets). ``1``: the least
        approximate mean local fill per eliminated column (binary heap), see :func:`_fill_score`.
        ``2``: that fill divided by the square root of the supervariable size instead (a milder
        preference for large supervariables; our variant). ``3``: the least *exact* external
        degree with multiple elimination (Liu 1985): pivots of degree at most the stage's least
        degree plus ``delta`` that are not adjacent to an element made in the same stage are
        eliminated one after another, and the exact degrees of their neighbours are recomputed
        once, at the end of the stage (a vertex whose approximate degree exceeds four times the
        stage's degree plus 64 keeps the approximate one). ``4``: as ``3``, ties of equal degree
        broken towards the larger adjacent element (binary heap). ``5``: the score of ``1`` from
        the exact degree and the exact largest adjacent element, in stages as for ``3`` (a stage
        takes pivots of the stage's least score).
    delta : int
        Degree tolerance of a multiple-elimination stage (``score >= 3`` only); a negative value
        ``-1 - t`` means tolerance ``t`` with the stage-end updates done in reverse order.
    compress : bool
        Merge vertices with identical closed neighbourhoods into supervariables before the first
        elimination (e.g. the dofs of one node of an elasticity mesh), so that their degrees are
        external degrees from the start.
    buckets : bool
        Under the fill rules, keep the whole-number keys of single variables in buckets (the
        default; the same order, faster); False keeps every key in the heap.

    Returns
    -------
    order : int64 array
        The vertices with ``role == 1`` in elimination order. The members of one pivot
        supervariable (indistinguishable: any order among them gives the same factor) come by
        increasing degree in the given graph, ties in merge order (e.g. the hub of an arrow last).
    counters : int64 array
        ``[pivots, mass_eliminated, merged, absorbed, compactions, workspace, merged_initially]``.
    group : int64 array
        ``group[k] = 2 t`` if ``order[k]`` was mass-eliminated at pivot step ``t``, ``2 t + 1`` if
        it belongs to that step's pivot supervariable.
    """
    if score >= 3:
        from .mindegree_exact import exact_min_degree

        return exact_min_degree(n, indptr, indices, role, tie, aggressive, fifo, elbow, score, delta, compress)
    if score == 0:
        from .mindegree_degree import degree_min_degree

        return degree_min_degree(n, indptr, indices, role, tie, aggressive, fifo, elbow, compress)
    return approximate_min_degree(n, indptr, indices, role, tie, aggressive, fifo, elbow, score, compress,
                                  n + 1 if buckets else 0)
