"""Present a comparison of orderings: CSV/JSON tables, Markdown summary, plots, a self-contained HTML page.

Everything here is a pure function of the result rows (one dict per matrix × method, as written by
:mod:`reorder.compare`), the saved permutations and the matrix files, so a resumed run rebuilds the
same files. Plots use matplotlib's Agg backend and are written as PNG and SVG.

Modules: ``records`` (columns and lookups over rows), ``formats`` (number formats, labels),
``profiles`` (Dolan–Moré performance profiles), ``tables`` (the terminal's Rich tables), ``data``
(``results.csv``, ``results.json``), ``markdown`` (``summary.md``), ``plots`` (the figures),
``page`` (``report.html``) and ``build`` (all of them at once: :func:`write_report`).
"""

from __future__ import annotations

from ..jsonable import jsonable as _jsonable
from .build import write_report
from .data import write_csv, write_json
from .formats import LABELS as _LABELS
from .formats import SUPERLU_NOTE, _CELL_REASON, _compact, _fmt, _short
from .markdown import _md_metric, summary_markdown
from .page import _CSS, _html_cell, _html_factor_table, _html_metric, _img, write_html
from .plots import plot_profiles, plot_relative, plot_spy, profile_problems
from .profiles import performance_profile, performance_ratios, profile_breakpoints
from .records import (COLUMNS, FACTOR_COLUMNS, MEASURED_COLUMNS, REFERENCES, _columns, _matrices, _methods, _ok,
                      best_methods, metric_table)
from .tables import best_table, results_table, table_width

__all__ = [
    "COLUMNS",
    "FACTOR_COLUMNS",
    "MEASURED_COLUMNS",
    "performance_ratios",
    "performance_profile",
    "profile_breakpoints",
    "profile_problems",
    "metric_table",
    "best_methods",
    "results_table",
    "write_csv",
    "write_json",
    "summary_markdown",
    "plot_spy",
    "plot_relative",
    "plot_profiles",
    "write_html",
    "write_report",
]
