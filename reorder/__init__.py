"""reorder: fill-reducing and envelope orderings for sparse symmetric matrices, and their measures.

The public API::

    import reorder
    A = reorder.read_matrix("plate.mtx")
    g = reorder.from_matrix(A)
    o = reorder.order(g, "rcm")
    s = reorder.analyse(A, o.perm, graph=g)

An ordering changes only the speed and memory of a factorization, never the solution of an SPD
system; solvers that pivot for stability may reorder further.
"""

from .analysis import Stats, analyse, bandwidth_profile, symbolic_factor
from .errors import InputError
from .graph import Graph, components, from_matrix, subgraph
from .io import read_matrix, read_permutation, write_matrix, write_permutation
from .orderings import Ordering, available, order

__version__ = "0.1.0"

__all__ = [
    "Graph",
    "InputError",
    "Ordering",
    "Stats",
    "analyse",
    "available",
    "bandwidth_profile",
    "components",
    "from_matrix",
    "order",
    "read_matrix",
    "read_permutation",
    "subgraph",
    "symbolic_factor",
    "write_matrix",
    "write_permutation",
]
