"""Compile (first run) or load (later runs) the kernels before anything is timed.

The orderings' inner loops are numba kernels cached on disk. The first run after an installation
compiles them, which takes tens of seconds; later runs load the cached code in well under a second.
Neither may be counted as ordering time, so ``compare``, ``demo`` and the ``order`` command call
:func:`ensure_compiled` before they start a clock, and :func:`warm` runs every method once on small
graphs in each worker process. When the cache is cold, :func:`ensure_compiled` says so on stderr,
once, and compiles on two cores: a helper process compiles the minimum-degree elimination loops
while this one compiles the others.
"""

from __future__ import annotations

import os
import subprocess
import sys
import time

__all__ = ["ensure_compiled", "warm", "compile_seconds", "COMPILING_MESSAGE"]

#: What the command line prints (once) before a cold compilation.
COMPILING_MESSAGE = "compiling kernels, first run only (8-15 s for the default ordering, more for the other methods; the code is cached for later runs)"

#: Kernel modules each built-in method uses (the symbolic analysis adds ``symbolic``); other
#: methods are assumed to use them all. ``auto`` needs minimum degree under one approximate rule for
#: its cheap start; the search compiles what a costlier candidate needs before it runs it (outside
#: the ordering time). The exact-degree rules of minimum degree (its multi-rule search, the root
#: of nested dissection) have a kernel module of their own.
_KERNELS = {
    "natural": (),
    "rcm": (),
    "spectral": ("traversal", "envelope"),
    "mindegree": ("mindegree", "mindegree_degree", "mindegree_exact"),
    "nd": ("traversal", "separators", "smallsep", "mindegree", "mindegree_degree", "mindegree_exact"),
    "nd-fast": ("traversal", "separators", "smallsep", "mindegree", "mindegree_degree", "mindegree_exact"),
    "rsb": ("traversal", "separators", "smallsep", "mindegree", "mindegree_degree", "mindegree_exact"),
    "auto": ("mindegree",),
}
#: pivot rules of ``mindegree`` that need no exact-degree kernel
_APPROXIMATE_RULES = ("degree", "mean_fill", "fill")
#: ... and of those, the ones that need no degree-bucket kernel either
_FILL_RULES = ("mean_fill", "fill")


def _modules_of(method) -> tuple:
    """Kernel modules of a method name or spec ``NAME:OPTION=VALUE:...`` (all of them for an
    unknown name); ``mindegree`` with a fill rule as ``score`` needs only its main module, with the
    degree rule also the bucket loop's."""
    from . import kernels

    name, _, rest = str(method).partition(":")
    mods = _KERNELS.get(name, kernels.MODULES)
    if name == "mindegree":
        opts = [opt.strip() for opt in rest.split(":")]
        if any(f"score={r}" in opts for r in _FILL_RULES):
            mods = ("mindegree",)
        elif "score=degree" in opts:
            mods = ("mindegree", "mindegree_degree")
    return mods


_WARM: set = set()
_ANNOUNCED = False
_READY: set = set()  # kernel modules known to be compiled (checked or built in this process)
_SPENT = [0.0]  # seconds spent compiling in ensure_compiled, in this process


def compile_seconds() -> float:
    """Seconds this process has spent in compilations started by :func:`ensure_compiled`; an
    ordering's clock subtracts what it grew by while the ordering ran."""
    return _SPENT[0]


def _grid(k: int):
    """The 5-point k × k grid graph."""
    from .gallery import grid2d
    from .graph import from_matrix

    return from_matrix(grid2d(k))


#: Warm-up graphs: a tiny one (paths for small subproblems) and one large enough for the multilevel
#: separator path of nested dissection.
_SIZES = (6, 32)


def warm(methods=None, *, seed: int = 0) -> None:
    """Run each method (and the symbolic analysis) on small grids once in this process.

    Afterwards no kernel these methods use compiles or loads from disk on a later call, so the
    next timed call measures the ordering alone. Each method is warmed once per process. Failures
    are ignored here: the timed call will report them.
    """
    from .analysis import analyse
    from .orderings import available, order

    todo = [m for m in (available() if methods is None else methods) if m not in _WARM]
    if not todo:
        return
    graphs = [_grid(k) for k in _SIZES]
    for m in todo:
        for g in graphs:
            try:
                analyse(None, order(g, m, seed=seed).perm, graph=g)
            except Exception:
                break
        _WARM.add(m)


def _compile_symbolic() -> None:
    """The symbolic-analysis kernels alone."""
    import numpy as np

    from .analysis import symbolic_factor

    g = _grid(_SIZES[0])
    symbolic_factor(g, np.arange(g.n))


def _compile_separators() -> None:
    """The separator kernels alone (no minimum degree): one multilevel vertex separator."""
    import numpy as np

    from .kernels import smallsep
    from .separators import check_separator, vertex_separator

    g = _grid(_SIZES[-1])
    sep = vertex_separator(g.indptr, g.indices, seed=0)
    check_separator(g.indptr, g.indices, sep.part)
    # the compiled small-subproblem dissection, with the argument types nested dissection passes
    n = g.n
    smallsep.dissect_small(g.indptr, g.indices, np.arange(n, dtype=np.int64), 0, 0, False,
                           np.full(n, -1, dtype=np.int64), np.full(n, -1, dtype=np.int64),
                           np.full(n, -1, dtype=np.int64), 50, np.zeros(1, dtype=np.int64), 1, 0, 1, float(n), 1, 1,
                           0.3, 100, True)


def _mindegree_arrays(score: int):
    """Arguments of the minimum-degree loops for a 6² grid, set up by the interpreted
    ``_setup`` (so that only the loop itself compiles where this is used)."""
    import numpy as np

    from .kernels import mindegree as md

    g = _grid(_SIZES[0])
    n = g.n
    role = np.ones(n, dtype=np.int8)
    tie = np.arange(n, dtype=np.int32)  # 32-bit indices: what every graph below 2^30 entries uses
    return n, role, tie, md._setup.py_func(n, g.indptr, g.indices, role, tie, 0.2, score, False)


def _compile_mindegree_loops(degree: bool = False, exact: bool = False) -> None:
    """The elimination loop of minimum degree under the fill rules (with ``degree`` also the
    degree-bucket loop, with ``exact`` the exact-rule loop), alone: the longest compilations, run in
    the helper process of :func:`ensure_compiled` while this one compiles the rest."""
    import numpy as np

    from .kernels import mindegree as md

    n, role, tie, a = _mindegree_arrays(2)
    ws, V, flag, hhead, mnext, mlast, xfirst, xlast, bhead, btail, pivots, heap, hpos, _, hseq, _, cnt, st, _ = a
    hk = np.empty((n, 2), dtype=np.float64)
    md._eliminate(n, role, True, False, 2, n + 1, st, cnt, ws, V, flag, hhead, mnext, mlast, xfirst, xlast, pivots,
                  heap, hpos, hk, hseq, bhead, tie)
    # then the entry point around it, with the argument types orderings.mindegree passes: its
    # set-up and finishing kernels are cached by the main process by now (it compiles them first),
    # so only the entry point itself compiles here, and the main process merely loads it
    g = _grid(_SIZES[0])
    md.approximate_min_degree(g.n, g.indptr.astype(np.int64), g.indices.astype(np.int64), role, tie, True, False,
                              0.2, 2, True, g.n + 1)
    if degree:
        from .kernels import mindegree_degree as mb

        n, role, tie, a = _mindegree_arrays(0)
        ws, V, flag, hhead, mnext, mlast, xfirst, xlast, bhead, btail, pivots, _, _, _, _, _, cnt, st, _ = a
        mb._eliminate_degree(n, role, True, False, st, cnt, ws, V, flag, hhead, mnext, mlast, xfirst, xlast, bhead,
                             btail, pivots, tie)
    if exact:
        from .kernels import mindegree_exact as mx

        n, role, tie, a = _mindegree_arrays(5)
        ws, V, flag, hhead, mnext, mlast, xfirst, xlast, bhead, btail, pivots, heap, hpos, hval, hseq, plist, cnt, st, \
            stf = a
        mx._eliminate_exact(n, role, False, 5, 0, True, st, stf, cnt, ws, V, flag, hhead, mnext, mlast, xfirst, xlast,
                            bhead, btail, pivots, heap, hpos, hval, hseq, plist, tie)


def _compile_mindegree_parts() -> None:
    """The set-up and finishing kernels of minimum degree (what its entry points call besides the
    loops), with the argument types the entry points pass."""
    import numpy as np

    from .kernels import mindegree as md

    g = _grid(_SIZES[0])
    n = g.n
    role = np.ones(n, dtype=np.int8)
    tie = np.arange(n, dtype=np.int32)
    a = md._setup(n, g.indptr, g.indices, role, tie, 0.2, 2, True)
    ws, mnext, xfirst, pivots = a[0], a[4], a[6], a[10]
    md._grow(ws, 0, ws.size + 1, n)
    md._finish(0, 0, g.indptr, xfirst, mnext, pivots)


def _calibrate() -> None:
    """Measure (or load) this machine's factorization rates (:func:`reorder.cost.machine_rates`,
    about 0.5-1 s once per machine, then cached on disk). On a cold start this runs while the helper
    process still compiles: every ``reorder order`` prices its factorization, and ``auto`` its
    candidates, so the first run would measure them afterwards anyway. A failure is left to the
    first real use (it falls back to the default rates there)."""
    try:
        from .cost import machine_rates

        machine_rates()
    except Exception:
        pass


def ensure_compiled(methods=None, *, announce=None, parallel: bool = True, load: bool = True) -> bool:
    """Make sure the kernels of ``methods`` are compiled and loaded before anything is timed.

    Parameters
    ----------
    methods : list of str, optional
        Orderings about to run (all built-in ones by default).
    announce : callable, optional
        Called with :data:`COMPILING_MESSAGE` when the on-disk cache is cold, at most once per
        process; by default the message goes to stderr as ``reorder: ...``.
    parallel : bool
        On a cold cache with two or more cores, compile the minimum-degree kernel in a helper process
        while this one compiles the rest.
    load : bool
        On a warm cache, still run :func:`warm` (load the cached code into this process). False
        skips it: the command line then pays a fraction of a second of loading in its first call.

    Returns
    -------
    bool
        True if the cache was cold (a compilation took place).
    """
    from . import kernels
    from .orderings import available

    methods = list(available() if methods is None else methods)
    modules = {"symbolic"}
    for m in methods:
        modules.update(_modules_of(m))
    needed = tuple(k for k in kernels.MODULES if k in modules and k not in _READY)
    cold = bool(needed) and kernels.cache_is_cold(needed)
    if not cold and not load:
        _READY.update(needed)
        return False
    t0 = time.perf_counter()
    try:
        _build(methods, modules, cold, announce, parallel)
    finally:
        if cold:
            _SPENT[0] += time.perf_counter() - t0
    _READY.update(modules)
    return cold


def _build(methods, modules, cold, announce, parallel) -> None:
    """Compile (cold cache) or load the kernels of ``methods``; announce a compilation once."""
    global _ANNOUNCED
    if cold and not _ANNOUNCED:
        _ANNOUNCED = True
        if announce is None:
            print(f"reorder: {COMPILING_MESSAGE}", file=sys.stderr, flush=True)
        else:
            announce(COMPILING_MESSAGE)
    helper = None
    if cold and parallel and "mindegree" in modules and (os.cpu_count() or 1) >= 2:
        # the minimum-degree loops (the longest compilations) in a helper process; this one
        # compiles the symbolic analysis, the set-up kernels of minimum degree and the rest meanwhile
        args = ["--mindegree-loops"] + (["--degree"] if "mindegree_degree" in modules else []) \
            + (["--exact"] if "mindegree_exact" in modules else [])
        try:
            helper = subprocess.Popen([sys.executable, "-m", "reorder.warmup", *args],
                                      stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
        except OSError:
            helper = None
    if helper is not None:
        try:
            _compile_mindegree_parts()  # first: the helper's entry point loads them when its loop is done
            _compile_symbolic()
            warm([m for m in ("natural", "rcm", "spectral") if m in methods])
            if "separators" in modules:
                _compile_separators()
        except Exception:
            pass
        _calibrate()  # while the helper still compiles: the first ordering needs the rates anyway
        try:
            helper.wait()
        except BaseException:
            helper.kill()
            raise
    warm(methods)


if __name__ == "__main__":  # the helper process of ensure_compiled
    if sys.argv[1:2] == ["--mindegree-loops"]:
        _compile_mindegree_loops(degree="--degree" in sys.argv[2:], exact="--exact" in sys.argv[2:])
    else:
        warm(sys.argv[1:] or None)
