"""Compiled inner loops (numba, ``cache=True``), plain NumPy arrays in and out.

Nothing here validates input: callers in :mod:`reorder.analysis` and :mod:`reorder.orderings` do.
"""
