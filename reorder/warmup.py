"""Compile (first run) or load (later runs) the kernels before anything is timed.

The orderings' inner loops are numba kernels cached on disk. The first run after an installation
compiles them, which takes tens of seconds; later runs load the cached code in well under a second.
Neither may be counted as ordering time, so ``compare``, ``demo`` and the ``order`` command call
:func:`ensure_compiled` before they start a clock, and :func:`warm` runs every method once on small
graphs in each worker process. When the cache is cold, :func:`ensure_compiled` says so on stderr,
once, and compiles on two cores: a helper process compiles the minimum-degree kernel while this one
compiles the others.
"""

from __future__ import annotations

import os
import subprocess
import sys
import time

__all__ = ["ensure_compiled", "warm", "compile_seconds", "COMPILING_MESSAGE"]

#: What the command line prints (once) before a cold compilation.
COMPILING_MESSAGE = "compiling kernels, first run only (15-30 s for minimum degree, more for the other methods; the code is cached for later runs)"

#: Kernel modules each built-in method uses (the symbolic analysis adds ``symbolic``); other
#: methods are assumed to use them all. ``auto`` needs minimum degree for its cheap start; the
#: search compiles what a costlier candidate needs before it runs it (outside the ordering time).
_KERNELS = {
    "natural": (),
    "rcm": (),
    "spectral": ("traversal", "envelope"),
    "mindegree": ("mindegree",),
    "nd": ("traversal", "separators", "smallsep", "mindegree"),
    "nd-fast": ("traversal", "separators", "smallsep", "mindegree"),
    "rsb": ("traversal", "separators", "smallsep", "mindegree"),
    "auto": ("mindegree",),
}

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
        modules.update(_KERNELS.get(str(m).split(":", 1)[0], kernels.MODULES))  # a spec NAME:OPTION=VALUE
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
        try:
            helper = subprocess.Popen([sys.executable, "-m", "reorder.warmup", "mindegree"],
                                      stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
        except OSError:
            helper = None
    if helper is not None:
        try:
            _compile_symbolic()  # meanwhile: the symbolic analysis and the kernels of light methods
            warm([m for m in ("natural", "rcm", "spectral") if m in methods])
            if "separators" in modules:
                _compile_separators()
        except Exception:
            pass
        try:
            helper.wait()
        except BaseException:
            helper.kill()
            raise
    warm(methods)


if __name__ == "__main__":  # the helper process of ensure_compiled
    warm(sys.argv[1:] or None)
