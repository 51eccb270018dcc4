"""Vocabularies and defaults shared by several layers, importable without NumPy or SciPy.

The spectral and separator layers use them as their own defaults, and the orderings' settings
records (:mod:`reorder.orderings.records`) declare the same values, so the layers cannot disagree;
the command line reads the records to list methods and options without loading the numerics.
"""

from __future__ import annotations

__all__ = ["OPERATORS", "WEIGHTS", "SOLVERS", "BALANCE", "COARSE_SIZE"]

#: spectral operators: ``L = D - W`` and the normalized ``I - D^-1/2 W D^-1/2``
OPERATORS = ("laplacian", "normalized")
#: edge weights of the spectral steps: all ones, or ``(|a_ij| + |a_ji|) / 2``
WEIGHTS = ("pattern", "values")
#: eigensolvers of :func:`reorder.spectral.fiedler_vector`
SOLVERS = ("dense", "eigsh", "lobpcg-amg", "lobpcg", "level-structure")
#: balance window of a bisection: no side lighter than about this share of its graph
BALANCE = 0.3
#: multilevel coarsening stops at about this many vertices
COARSE_SIZE = 100
