"""Run every ordering on every matrix of a suite, resumably, serially, in local processes or on Dask.

A *case* is one (matrix, method, seed). Each finished case is appended at once (flush + fsync) to
``cases.jsonl`` in the output folder and its permutation saved, so an interrupted run loses only the
cases in flight and ``resume=True`` finishes it; the final files are rebuilt from the log alone, in a
fixed order, by :func:`reorder.report.write_report`.

Modules: ``cases`` (inputs, methods, :class:`Case`), ``work`` (one case: :func:`run_case`),
``measure`` (peak memory, the SuperLU factorization), ``log`` (``cases.jsonl``), ``executors``
(serial, local processes, Dask), ``result`` (:class:`CompareResult`) and ``runner``
(:func:`run_compare`).
"""

from __future__ import annotations

from .cases import (DEFAULT_FACTOR_MAX_OPS, DEFAULT_FACTOR_MEM_FRACTION, MATRIX_SUFFIXES, Case, _check_methods,
                    _error_record, _fingerprint, _is_matrix_file, _one_line, collect_inputs, make_cases)
from .executors import (_dask_client, _mp_context, _parent_alive, _proc_identity, _run_dask, _run_processes,
                        _run_serial, _watch_parent)
from .log import LOG_NAME, _Log, read_log
from .measure import _factor, _looks_spd, _mmatrix, _PeakMemory, _status_kb, _superlu
from .result import _EXPLANATIONS, CompareResult
from .runner import _progress, run_compare, run_demo
from .work import _CACHE, _LOCK, _jsonable_info, _load, run_case

__all__ = [
    "Case",
    "CompareResult",
    "MATRIX_SUFFIXES",
    "collect_inputs",
    "make_cases",
    "run_case",
    "run_compare",
    "run_demo",
    "read_log",
]
