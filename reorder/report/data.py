"""The data files of a comparison: ``results.csv`` and ``results.json``, one row per matrix × method.

Their layout (columns, keys, number spelling) is a contract read by checks outside the repository.
"""

from __future__ import annotations

import csv
import json
from pathlib import Path

from ..io import atomic_path
from ..jsonable import jsonable as _jsonable
from .records import _columns

__all__ = ["write_csv", "write_json"]


def write_csv(path, rows, columns=None) -> Path:
    """Write ``rows`` to ``path`` as CSV (atomic); missing values are empty cells."""
    path = Path(path)
    columns = columns or _columns(rows)
    with atomic_path(path) as tmp:
        with open(tmp, "w", newline="", encoding="utf-8") as fh:
            w = csv.writer(fh, lineterminator="\n")
            w.writerow(columns)
            for r in rows:
                out = []
                for c in columns:
                    v = _jsonable(r.get(c))
                    out.append("" if v is None else (repr(v) if isinstance(v, float) else v))
                w.writerow(out)
    return path


def write_json(path, rows, meta=None) -> Path:
    """Write ``{"columns", "rows", **meta}`` to ``path`` (atomic, NaN written as null)."""
    path = Path(path)
    doc = {"columns": _columns(rows), **_jsonable(meta or {}), "rows": _jsonable(list(rows))}
    with atomic_path(path) as tmp:
        tmp.write_text(json.dumps(doc, indent=1, allow_nan=False) + "\n", encoding="utf-8")
    return path
