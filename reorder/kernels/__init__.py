"""Compiled inner loops (numba, ``cache=True``), plain NumPy arrays in and out.

Nothing here validates input: callers in :mod:`reorder.analysis` and :mod:`reorder.orderings` do.
The modules compile on first use and keep the machine code in numba's on-disk cache;
:func:`cache_is_cold` tells whether that cache is still empty (the first run after an
installation), so that :mod:`reorder.warmup` can say so before the compilation starts.
"""

from __future__ import annotations

import importlib

#: The kernel modules, in the order the warm-up loads them.
MODULES = ("symbolic", "traversal", "envelope", "separators", "smallsep", "mindegree", "mindegree_degree", "mindegree_exact")


def dispatchers(modules=MODULES) -> list:
    """The compiled functions (numba dispatchers) of the given kernel modules (default: all)."""
    out = []
    for name in modules:
        mod = importlib.import_module(f"{__name__}.{name}")
        for obj in vars(mod).values():
            if getattr(obj, "__module__", None) == mod.__name__ and hasattr(obj, "_cache") and hasattr(obj, "py_func"):
                out.append(obj)
    return out


def cache_is_cold(modules=MODULES) -> bool:
    """True when some module of ``modules`` has no kernel at all in numba's on-disk cache (or only
    code of an older source): its first use compiles it.

    A module counts as compiled when any of its kernels is cached: a method need not use every
    kernel of a module (asking for all of them announced a compilation on every run of a method that
    never calls some of them), and what it has not used yet compiles in a second or two on first
    call. Reads the cache index of the kernels (a small file each); compiles nothing. A kernel whose
    cache cannot be inspected counts as cached, so that an unusual numba set-up never makes the
    command line announce a compilation that does not happen.
    """
    for name in modules:
        cached = False
        for disp in dispatchers((name,)):
            try:
                if disp._cache._cache_file._load_index():
                    cached = True
                    break
            except Exception:  # numba internals differ: do not guess
                cached = True
                break
        if not cached:
            return True
    return False
