"""Minimum degree elimination under the degree rule (numba kernel; score 0): the least approximate
external degree, kept in degree buckets.

Approximate external degrees: P. R. Amestoy, T. A. Davis and I. S. Duff, "An approximate minimum
degree ordering algorithm", SIAM J. Matrix Anal. Appl. 17 (1996) 886–905. The quotient graph, its
workspace and the steps shared with the other rules are those of :mod:`reorder.kernels.mindegree`
(see its notes). This loop is a module of its own so that it compiles only where the degree rule is
used (nested dissection's leaves and subtrees, the multi-rule search of ``mindegree``): the
default ordering uses a fill rule, and its first run compiles that much less. Nothing here
validates input. All kernels release the GIL.
"""

from __future__ import annotations

from numba import njit

from .mindegree import (_BNEXT, _BPREV, _DEAD, _DEG, _EDEG, _ELEM, _LEN, _S_INIT, _S_MASK, _S_MINDEG, _S_NEL,
                        _S_NLEFT, _S_NPIV, _S_NTODO, _S_RESUME, _S_TICK, _S_TOCK, _S_USED, _START, _STATE, _VAR, _WT,
                        _clique_degrees, _degree_bound, _finish, _grow, _new_element, _setup, _supervariables)

__all__ = ["degree_min_degree"]


@njit(cache=True, nogil=True)
def _eliminate_degree(n, role, aggressive, fifo, st, counters, ws, V, flag, hhead, mnext, mlast, xfirst, xlast,
                      bhead, btail, pivots, tie):
    """The elimination loop of :func:`degree_min_degree`, resumable as the loop of
    :func:`reorder.kernels.mindegree.approximate_min_degree`. The bucket operations are spelled out
    where they are used (no array crosses a function call in the hot loop); the pivot leaves its
    bucket together with the other variables of its new element."""
    mindeg = st[_S_MINDEG]
    nel = st[_S_NEL]
    npiv = st[_S_NPIV]
    tick = st[_S_TICK]
    tock = st[_S_TOCK]
    used = st[_S_USED]
    nleft = st[_S_NLEFT]
    ntodo = st[_S_NTODO]
    resume = st[_S_RESUME]
    mask = st[_S_MASK]

    if st[_S_INIT] == 0:
        # ---- the initial buckets, in tie order
        st[_S_INIT] = 1
        for k in range(n):
            v = tie[k] if fifo else tie[n - 1 - k]
            if role[v] != 1 or V[v, _STATE] != _VAR:
                continue
            d = V[v, _DEG]
            if fifo:
                t = btail[d]
                V[v, _BNEXT] = -1
                V[v, _BPREV] = t
                if t == -1:
                    bhead[d] = v
                else:
                    V[t, _BNEXT] = v
                btail[d] = v
            else:
                h0 = bhead[d]
                V[v, _BPREV] = -1
                V[v, _BNEXT] = h0
                if h0 != -1:
                    V[h0, _BPREV] = v
                else:
                    btail[d] = v
                bhead[d] = v

    while nel < ntodo:
        if resume >= 0:
            me = resume
            resume = -1
        else:
            # ---- pivot: a variable of least approximate external degree (it leaves its bucket
            # below, with the variables of its element)
            while bhead[mindeg] == -1:
                mindeg += 1
            me = bhead[mindeg]
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
            st[_S_NLEFT] = nleft
            st[_S_RESUME] = me
            return want
        lme0 = V[me, _START]
        lme1 = lme0 + V[me, _LEN]

        # ---- the pivot and the variables of Lme leave their buckets (their degrees change)
        for p in range(lme0 - 1, lme1):
            i = me if p < lme0 else ws[p]
            if role[i] != 1:
                continue
            pb = V[i, _BPREV]
            qb = V[i, _BNEXT]
            if pb == -1:
                bhead[V[i, _DEG]] = qb
            else:
                V[pb, _BNEXT] = qb
            if qb != -1:
                V[qb, _BPREV] = pb
            else:
                btail[V[i, _DEG]] = pb

        # ---- |Le \ Lme|, external degrees, absorption, mass elimination; supervariables
        tick, degme, nel, nleft = _clique_degrees(me, lme0, lme1, tick, degme, nel, nleft, aggressive, mask, role, ws,
                                                  V, hhead, mnext, mlast, xfirst, xlast, counters)
        tock = _supervariables(lme0, lme1, tock, mask, role, ws, V, flag, hhead, mnext, mlast, counters)

        # ---- finish the element and put its variables back into the buckets
        q = lme0
        for p in range(lme0, lme1):
            i = ws[p]
            if V[i, _STATE] != _VAR:
                continue
            nvi = -V[i, _WT]
            V[i, _WT] = nvi
            ws[q] = i
            q += 1
            if role[i] != 1:
                continue
            d = _degree_bound(i, nvi, degme, nleft, V)
            V[i, _DEG] = d
            if fifo:
                t2 = btail[d]
                V[i, _BNEXT] = -1
                V[i, _BPREV] = t2
                if t2 == -1:
                    bhead[d] = i
                else:
                    V[t2, _BNEXT] = i
                btail[d] = i
            else:
                h0 = bhead[d]
                V[i, _BPREV] = -1
                V[i, _BNEXT] = h0
                if h0 != -1:
                    V[h0, _BPREV] = i
                else:
                    btail[d] = i
                bhead[d] = i
            if d < mindeg:
                mindeg = d
        V[me, _LEN] = q - lme0
        V[me, _EDEG] = degme
        if V[me, _LEN] == 0:
            V[me, _STATE] = _DEAD

    st[_S_NPIV] = npiv
    st[_S_USED] = used
    return 0


@njit(cache=True, nogil=True)
def degree_min_degree(n, indptr, indices, role, tie, aggressive, fifo, elbow, compress):
    """:func:`reorder.kernels.mindegree.quotient_min_degree` under the degree rule (``score`` 0)."""
    ws, V, flag, hhead, mnext, mlast, xfirst, xlast, bhead, btail, pivots, heap, hpos, hval, hseq, plist, \
        counters, st, stf = _setup(n, indptr, indices, role, tie, elbow, 0, compress)
    while True:
        want = _eliminate_degree(n, role, aggressive, fifo, st, counters, ws, V, flag, hhead, mnext, mlast, xfirst,
                                 xlast, bhead, btail, pivots, tie)
        if want == 0:
            break
        ws = _grow(ws, st[_S_USED], want, n)
    out, group = _finish(st[_S_NTODO], st[_S_NPIV], indptr, xfirst, mnext, pivots)
    counters[0] = st[_S_NPIV]
    counters[5] = ws.size
    return out, counters, group
