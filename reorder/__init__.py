"""reorder: fill-reducing and envelope orderings for sparse symmetric matrices, and their measures.

The public API::

    import reorder
    A = reorder.read_matrix("plate.mtx")
    g = reorder.from_matrix(A)
    o = reorder.order(g, "rcm")
    s = reorder.analyse(A, o.perm, graph=g)

An ordering changes only the speed and memory of a factorization, never the solution of an SPD
system; solvers that pivot for stability may reorder further.

The names below are imported on first use (PEP 562 module ``__getattr__``), so that the command
line can list methods and print help without loading SciPy or the compiled kernels.
"""

from __future__ import annotations

import importlib
import os as _os
import sys as _sys

if _sys.argv and _os.path.basename(_sys.argv[0] or "") in ("reorder", "reorder.exe"):  # the console script
    from ._startup import guard as _guard

    _guard()

__version__ = "0.1.0"

#: public name -> module that defines it
_EXPORTS = {
    "Stats": "analysis",
    "analyse": "analysis",
    "bandwidth_profile": "analysis",
    "symbolic_factor": "analysis",
    "InputError": "errors",
    "OrderedFactor": "factor",
    "solve_sequence": "sequence",
    "Graph": "graph",
    "components": "graph",
    "from_matrix": "graph",
    "subgraph": "graph",
    "read_matrix": "io",
    "read_permutation": "io",
    "write_matrix": "io",
    "write_permutation": "io",
    "Ordering": "orderings",
    "available": "orderings",
    "order": "orderings",
}

__all__ = sorted(_EXPORTS)


def __getattr__(name: str):
    module = _EXPORTS.get(name)
    if module is None:
        raise AttributeError(f"module 'reorder' has no attribute '{name}'")
    value = getattr(importlib.import_module(f".{module}", __name__), name)
    globals()[name] = value  # later look-ups skip this function
    return value


def __dir__():
    return sorted(set(globals()) | set(__all__))
