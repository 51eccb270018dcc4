"""The report's figures under their first import path; they live in :mod:`reorder.report.plots`.

Kept so that ``reorder.plots`` and its names (``factor_blocks``, ``plot_spy``, …) stay importable.
"""

from __future__ import annotations

from .report.formats import LABELS, _compact
from .report.plots import (A_COLOUR, FILL_COLOUR, _STYLES, _compared, _figure, _image, _save, _with_totals,
                           factor_blocks, plot_profiles, plot_relative, plot_spy, profile_problems)
from .report.records import REFERENCES, _ok, _unique, metric_table

__all__ = ["factor_blocks", "plot_spy", "plot_relative", "plot_profiles", "profile_problems", "REFERENCES"]
