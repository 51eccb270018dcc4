"""What a comparison returns (:class:`CompareResult`): rows, paths and counts, shown in a terminal as
the table of nnz(L) with the best ordering per matrix marked.
"""

from __future__ import annotations

from dataclasses import asdict, dataclass, field
from pathlib import Path

from ..report.tables import best_table, results_table, table_width

_EXPLANATIONS = ("order_peak_mb:", "order_seconds and")


@dataclass
class CompareResult:
    """What :func:`run_compare` did.

    Attributes
    ----------
    rows : list of dict
        The final rows (as in ``results.csv``), sorted by matrix then method order.
    out : Path
        The output folder.
    paths : dict
        ``{"csv", "json", "summary", "html", "log", "permutations", "plots"}`` → paths written.
    methods : list of str
    ran, reused, failed : int
        Cases computed in this call, taken from the log (``resume``), and failed overall.
    notes : list of str
    seconds : float
    """

    rows: list
    out: Path
    paths: dict
    methods: list
    ran: int = 0
    reused: int = 0
    failed: int = 0
    notes: list = field(default_factory=list)
    seconds: float = 0.0

    @property
    def report(self) -> Path:
        return self.paths["html"]

    def table(self):
        """Rich table of nnz(L) per matrix and method, best marked."""
        return results_table(self.rows)

    def __rich_console__(self, console, options):
        from rich.text import Text

        if table_width(self.rows) <= options.max_width:
            yield self.table()
        else:  # too narrow for one column per method: the best per matrix; the full grid is in the report
            yield best_table(self.rows)
            yield Text(f"(the full table of every ordering is in {self.paths.get('summary', 'summary.md')} and "
                       "the report; widen the terminal to see it here)", style="dim")
        for n in self.notes:
            if not n.startswith(_EXPLANATIONS):  # those are for the report; the terminal shows the news
                yield Text(f"note: {n}", style="yellow")
        yield Text(
            f"{len(self.rows)} cases ({self.ran} run, {self.reused} reused from the log of this folder, "
            f"{self.failed} failed) in {self.seconds:.1f} s; results in {self.out}; report: {self.report}"
        )

    def __str__(self) -> str:
        return (f"{len(self.rows)} cases ({self.ran} run, {self.reused} reused from the log of this folder, "
                f"{self.failed} failed); report: {self.report}")

    def to_dict(self) -> dict:
        d = asdict(self)
        d["out"] = str(self.out)
        d["paths"] = {k: ([str(p) for p in v] if isinstance(v, list) else str(v)) for k, v in self.paths.items()}
        return d
