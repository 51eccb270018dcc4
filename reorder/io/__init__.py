"""Intake and output: sparse matrices and permutation files.

This module is the one validation gate for user files. Readers return SciPy CSR matrices (square,
duplicates summed, explicit zeros kept unless asked otherwise) or 0-based permutation arrays, and raise
:class:`~reorder.errors.InputError` with a one-line message for anything malformed. Writers are atomic:
they write a temporary file beside the target and rename it.
"""

from ..permutation import check_permutation
from .paths import STDIO, atomic_path, check_output_folder, check_outputs, is_stdio
from .permfile import (DIRECTIONS, PermutationFile, permutation_header, read_permutation, read_permutation_file,
                       write_permutation)
from .guard import parse_size
from .readers import (MAX_DIMENSION, MAX_ENTRIES, _mm_header, available_memory, estimate_bytes, matrix_name,
                      read_matrix)
from .writers import write_matrix

__all__ = [
    "read_matrix",
    "write_matrix",
    "read_permutation",
    "write_permutation",
    "read_permutation_file",
    "permutation_header",
    "PermutationFile",
    "DIRECTIONS",
    "atomic_path",
    "check_outputs",
    "check_output_folder",
    "is_stdio",
    "STDIO",
    "parse_size",
    "check_permutation",
    "MAX_DIMENSION",
    "MAX_ENTRIES",
    "available_memory",
    "estimate_bytes",
    "matrix_name",
]
