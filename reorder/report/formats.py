"""How values and measures are written in the report: number formats, labels, shortened reasons.

One place for the wording shared by the terminal tables, the Markdown summary, the HTML page and the figures.
"""

from __future__ import annotations

import math

import numpy as np

__all__ = ["LABELS", "SUPERLU_NOTE"]

#: Display names of the measures.
LABELS = {
    "nnz_factor": "nnz(L)",
    "factor_ops": "factor operations",
    "order_seconds": "ordering time (s)",
    "total_seconds": "ordering + factorization time (s)",
    "bandwidth": "bandwidth",
    "profile": "profile",
    "etree_height": "elimination-tree height",
}

#: Why SuperLU's count may differ from the exact symbolic one (shown with the factorization table).
SUPERLU_NOTE = ("SuperLU's nnz(L) can differ from the exact symbolic count of the nnz(L) table: it stores "
                "relaxed supernodes (neighbouring columns merged, with explicit zeros inside, dropped here "
                "before counting, together with entries that cancel numerically), and a solver that pivots "
                "for stability changes the structure; without pivoting on an M-matrix the two counts agree.")

#: Longest reason written into a table cell (the full text is in the cell's tooltip and the notes).
_CELL_REASON = 90


def _fmt(v, key: str = "") -> str:
    """A value in full: seconds to 3 digits, MB to one decimal, integers with separators."""
    if v is None or (isinstance(v, float) and not math.isfinite(v)):
        return "–"
    if key.endswith("_seconds"):
        return f"{v:.3g}"
    if key.endswith("_mb"):
        return f"{v:.1f}"
    if isinstance(v, (int, np.integer)) or (isinstance(v, float) and v.is_integer() and abs(v) < 1e15):
        v = int(v)
        return f"{v:.3e}" if abs(v) >= 10**9 else f"{v:,}"
    if isinstance(v, float):
        return f"{v:.4g}"
    return str(v)


def _compact(v) -> str:
    """Three significant digits with a k/M/G/T suffix: 1234567 → '1.23M'."""
    if v is None or (isinstance(v, float) and not math.isfinite(v)):
        return "–"
    v = float(v)
    for div, suffix in ((1e12, "T"), (1e9, "G"), (1e6, "M"), (1e3, "k")):
        if abs(v) >= div:
            return f"{v / div:.3g}{suffix}"
    return f"{v:.3g}" if not v.is_integer() else str(int(v))


def _short(text, limit: int = _CELL_REASON) -> str:
    """``text`` on one line, cut at a word before ``limit`` characters (with an ellipsis)."""
    text = " ".join(str(text or "").split())
    return text if len(text) <= limit else text[: limit - 1].rsplit(" ", 1)[0] + " …"
