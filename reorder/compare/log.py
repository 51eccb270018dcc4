"""The log of a comparison (``cases.jsonl``): one JSON record per finished case, appended and synced
at once, so an interrupted run loses only the cases in flight and a resumed one reads the rest.
"""

from __future__ import annotations

import json
import os
from pathlib import Path

from ..jsonable import jsonable as _jsonable

#: Log of finished cases, one JSON object per line.
LOG_NAME = "cases.jsonl"


def read_log(path) -> dict[str, dict]:
    """Records of a ``cases.jsonl`` by case key (the last record of a key wins).

    Lines that do not parse, such as a line cut short by a crash, are ignored.
    """
    out: dict[str, dict] = {}
    path = Path(path)
    if not path.exists():
        return out
    with open(path, encoding="utf-8", errors="replace") as fh:
        for line in fh:
            line = line.strip()
            if not line:
                continue
            try:
                rec = json.loads(line)
            except ValueError:
                continue
            if isinstance(rec, dict) and "key" in rec:
                out[rec["key"]] = rec
    return out


class _Log:
    """Append-only JSON-lines log; every record is flushed and fsynced before ``append`` returns."""

    def __init__(self, path: Path):
        self.path = path
        if path.exists() and path.stat().st_size:
            with open(path, "rb") as fh:
                fh.seek(-1, os.SEEK_END)
                cut = fh.read(1) != b"\n"
        else:
            cut = False
        self.fh = open(path, "a", encoding="utf-8")
        if cut:  # a crash left half a line: end it so the next record starts on its own line
            self.fh.write("\n")

    def append(self, rec: dict) -> None:
        self.fh.write(json.dumps(_jsonable(rec), allow_nan=False) + "\n")
        self.fh.flush()
        os.fsync(self.fh.fileno())

    def close(self) -> None:
        self.fh.close()
