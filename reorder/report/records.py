"""Result rows (one dict per matrix × method): their columns, their order, and lookups over them.

Shared by the tables, the Markdown summary, the HTML page, the figures and the compare runner.
"""

from __future__ import annotations

import numpy as np

__all__ = [
    "COLUMNS",
    "FACTOR_COLUMNS",
    "MEASURED_COLUMNS",
    "REFERENCES",
    "best_methods",
    "metric_table",
]

#: Columns of ``results.csv`` (one row per matrix × method), in this order.
COLUMNS = [
    "matrix",
    "method",
    "seed",
    "status",
    "error",
    "n",
    "nnz",
    "nnz_factor",
    "factor_ops",
    "bandwidth",
    "profile",
    "etree_height",
    "fill",
    "components",
    "order_seconds",
    "order_peak_mb",
    "order_peak_source",
    "analyse_seconds",
]
#: Extra columns present when the run factored the matrices (``factor=True``).
FACTOR_COLUMNS = [
    "factor_status",
    "factor_matrix",
    "factor_nnz_l",
    "factor_mb",
    "factor_peak_mb",
    "factor_seconds",
    "factor_message",
]
#: Columns measured from the clock or the memory of a process: they differ from run to run.
MEASURED_COLUMNS = frozenset(
    {"order_seconds", "order_peak_mb", "analyse_seconds", "factor_seconds", "factor_peak_mb"}
)

#: Orderings drawn for reference only: left out of performance profiles and relative plots, where
#: they would stretch the axes (the file order is often tens of times worse than any ordering).
REFERENCES = ("natural",)


def _ok(row) -> bool:
    return row.get("status") == "ok"


def _unique(rows, key) -> list[str]:
    """The distinct ``row[key]`` in order of first appearance."""
    return list(dict.fromkeys(r[key] for r in rows))


def _matrices(rows) -> list[str]:
    return _unique(rows, "matrix")


def _methods(rows) -> list[str]:
    return _unique(rows, "method")


def _by_case(rows) -> dict:
    """``{(matrix, method): row}``."""
    return {(r["matrix"], r["method"]): r for r in rows}


def _columns(rows) -> list[str]:
    """The columns of ``rows``: :data:`COLUMNS`, and :data:`FACTOR_COLUMNS` if the run factored."""
    cols = list(COLUMNS)
    if any("factor_status" in r for r in rows):
        cols += FACTOR_COLUMNS
    return cols


def best_methods(rows, key: str = "nnz_factor") -> dict[str, list[str]]:
    """``{matrix: [methods with the smallest row[key]]}`` over successful rows (ties all listed)."""
    best: dict[str, list[str]] = {}
    value: dict[str, float] = {}
    for r in rows:
        if not _ok(r) or r.get(key) is None:
            continue
        m, v = r["matrix"], float(r[key])
        if m not in value or v < value[m]:
            value[m], best[m] = v, [r["method"]]
        elif v == value[m]:
            best[m].append(r["method"])
    return best


def metric_table(rows, matrices, methods, key: str) -> np.ndarray:
    """``(len(matrices), len(methods))`` array of ``row[key]``; NaN where missing or failed."""
    idx = _by_case(rows)
    out = np.full((len(matrices), len(methods)), np.nan)
    for i, m in enumerate(matrices):
        for j, s in enumerate(methods):
            r = idx.get((m, s))
            if r is not None and _ok(r) and r.get(key) is not None:
                out[i, j] = float(r[key])
    return out
