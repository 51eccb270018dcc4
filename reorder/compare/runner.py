"""The suite runner: :func:`run_compare` checks the inputs, reuses the log, runs the remaining cases
on an executor, saves each permutation as it comes, and hands the rows to :func:`reorder.report.write_report`.
"""

from __future__ import annotations

import contextlib
import os
import time
from pathlib import Path

from ..errors import InputError
from ..io import write_permutation
from ..report import write_report
from ..warmup import ensure_compiled
from .cases import (DEFAULT_FACTOR_MAX_OPS, DEFAULT_FACTOR_MEM_FRACTION, Case, _check_methods, _error_record,
                    collect_inputs, make_cases)
from .executors import _run_dask, _run_processes, _run_serial
from .log import LOG_NAME, _Log, read_log
from .result import CompareResult
from .work import _CACHE


def _progress(console, total: int, enabled: bool):
    """A Rich progress bar (with ETA) on a terminal, one line per case otherwise, or nothing."""
    if not enabled:
        return contextlib.nullcontext(None)
    from rich.progress import (BarColumn, MofNCompleteColumn, Progress, TextColumn, TimeElapsedColumn,
                               TimeRemainingColumn)

    if console is not None and console.is_terminal:
        return Progress(TextColumn("[progress.description]{task.description}"), BarColumn(),
                        MofNCompleteColumn(), TimeElapsedColumn(), TextColumn("eta"), TimeRemainingColumn(),
                        console=console, transient=False)
    return contextlib.nullcontext(None)


def _leave_out(cases, exclude) -> tuple[list, dict, list[str]]:
    """Cases to run, the records of those left out on purpose (a row that says why, in its cells), and
    one note per method and reason naming the matrices left out."""
    skipped: dict[str, dict] = {}
    if not exclude:
        return cases, skipped, []
    kept, left_out = [], {}
    for c in cases:
        why = exclude.get((c.matrix, c.method))
        if why is None:
            kept.append(c)
        else:
            left_out.setdefault((c.method, why), []).append(c.matrix)
            rec = _error_record(c, str(why))
            rec["status"] = "skipped"
            skipped[c.key] = rec
    notes = [f"{m} not run on {', '.join(names)}: {why}" for (m, why), names in left_out.items()]
    return kept, skipped, notes


def _reusable(out: Path, log_path: Path, perm_dir: Path, resume: bool) -> dict[str, dict]:
    """With ``resume``, the successful records of the log whose permutation file is there; without, the
    log (if any) is moved to ``cases.jsonl.prev`` and nothing is reused."""
    done: dict[str, dict] = {}
    if resume:
        for key, rec in read_log(log_path).items():
            if rec.get("status") == "ok" and (perm_dir / f"{rec['matrix']}.{rec['method']}.txt").is_file():
                done[key] = rec
    elif log_path.exists():
        os.replace(log_path, out / (LOG_NAME + ".prev"))
    return done


def _execute(todo, total: int, reused: int, records: dict, *, log_path: Path, perm_dir: Path, console,
             show: bool, cluster, workers: int) -> None:
    """Run ``todo`` on the chosen executor; each result is logged, its permutation saved, the progress shown
    and its record put into ``records``. On Ctrl-C the log is closed and the user told how to resume."""
    log = _Log(log_path)
    counter = {"k": reused}
    try:
        with _progress(console, total, show) as bar:
            task = bar.add_task("ordering", total=total, completed=reused) if bar is not None else None

            def on_result(case: Case, rec: dict) -> None:
                perm = rec.pop("_perm", None)
                if perm is not None:
                    write_permutation(
                        perm_dir / f"{case.matrix}.{case.method}.txt", perm,
                        method=case.method, seed=case.seed, matrix=case.matrix,
                    )
                log.append(rec)
                records[case.key] = rec
                counter["k"] += 1
                if bar is not None:
                    bar.update(task, advance=1, description=f"{case.matrix} · {case.method}")
                elif show:
                    what = (f"nnz(L) {rec['nnz_factor']:,}, {rec['order_seconds']:.3g} s" if rec["status"] == "ok"
                            else f"error: {rec['error']}")
                    console.print(f"[{counter['k']}/{total}] {case.matrix} {case.method}: {what}",
                                  markup=False, highlight=False)

            if cluster is not None:
                _run_dask(todo, cluster, on_result)
            elif workers > 1 and len(todo) > 1:
                _run_processes(todo, workers, on_result)
            else:
                _run_serial(todo, on_result)
    except KeyboardInterrupt:
        log.close()
        _CACHE.clear()
        if console is not None:
            console.print(f"interrupted: {counter['k']} of {total} cases are saved in {log_path}; "
                          "run again with --resume to finish", markup=False, highlight=False)
        raise
    log.close()
    _CACHE.clear()  # do not hold the last matrix after the run


def _final_rows(all_cases, records: dict) -> list[dict]:
    """One row per case in the order of the grid (matrix, then method), without the log's key."""
    rows = []
    for c in all_cases:
        rec = dict(records[c.key])
        rec.pop("key", None)
        rec.pop("_perm", None)
        rows.append(rec)
    return rows


def _measurement_notes(rows) -> list[str]:
    """How the memory columns were measured, and that measured columns differ from run to run."""
    notes = []
    sources = sorted({r.get("order_peak_source") for r in rows if r.get("order_peak_source")})
    if sources:
        how = {"rss": "resident-memory high-water mark above the level before the ordering (Linux VmHWM, reset "
                      "per case)",
               "tracemalloc": "tracemalloc peak (Python and NumPy allocations only)"}
        notes.append("order_peak_mb: " + "; ".join(f"{s} = {how.get(s, s)}" for s in sources))
    notes.append("order_seconds and the memory columns are measurements and differ from run to run; all other "
                 "numbers are exact and repeatable.")
    return notes


def run_compare(inputs, methods=None, out="reorder-compare", *, workers: int = 1, resume: bool = False,
                factor: bool = False, cluster=None, seed: int = 0, progress: bool = False, console=None,
                plots: bool = True, exclude: dict | None = None, print_table: bool = True,
                factor_max_ops: float = DEFAULT_FACTOR_MAX_OPS,
                factor_mem_fraction: float = DEFAULT_FACTOR_MEM_FRACTION) -> CompareResult:
    """Order every matrix with every method, measure, and write the comparison into ``out``.

    Parameters
    ----------
    inputs : list of path-like
        Matrix files and folders (a folder stands for the matrix files in it).
    methods : list of str or str, optional
        Registered ordering names (a comma-separated string is accepted); all by default.
    out : path-like
        Output folder, created if needed. It receives ``cases.jsonl`` (the log), ``results.csv``,
        ``results.json``, ``summary.md``, ``permutations/<matrix>.<method>.txt`` (0-based, new
        position ``k`` holds old index ``perm[k]``), ``plots/*.png|svg`` and ``report.html``.
    workers : int
        Local worker processes (``1``: run in this process).
    resume : bool
        Take the cases already in the log (successful, with their permutation file present) and run
        only the rest. Without it an existing log is moved to ``cases.jsonl.prev`` and all cases run.
    factor : bool
        Also factor each reordered matrix with SciPy's SuperLU (natural order, no pivoting); matrices
        that are not symmetric positive definite are replaced by the M-matrix with their pattern.
    cluster : str or distributed.Client or cluster object, optional
        Send the cases to this Dask scheduler (``"tcp://HOST:PORT"``) instead of local processes.
        Workers read the matrix files by their absolute path, so the files must be visible to them.
    seed : int
        Seed passed to every ordering.
    progress : bool
        Show progress on ``console``: a live bar with ETA on a terminal, one line per case otherwise.
    console : rich.console.Console, optional
    plots : bool
        Draw the plots (matplotlib, Agg).
    exclude : dict, optional
        ``{(matrix, method): reason}``: cases not to run; the notes list them with the reason.
    print_table : bool
        With ``progress``, print the final table (best method per matrix marked) and the paths.
    factor_max_ops, factor_mem_fraction : float
        Factorizations above this symbolic operation count, or whose estimated storage exceeds this
        share of RAM, are skipped with a message in the row.

    Returns
    -------
    CompareResult
        Rows, paths (``result.paths["html"]`` is the report) and counts. Rich renders it as the table
        of nnz(L) with the best method per matrix marked.

    Raises
    ------
    InputError
        Missing inputs, unknown methods, an unreachable cluster, an invalid worker count.
    """
    t_start = time.perf_counter()
    methods = _check_methods(methods)
    matrices = collect_inputs(inputs)
    if int(workers) < 1:
        raise InputError(f"workers must be at least 1, not {workers}")
    out = Path(out)
    if out.exists() and not out.is_dir():
        raise InputError("output path exists and is not a folder", str(out))
    out.mkdir(parents=True, exist_ok=True)
    perm_dir = out / "permutations"
    perm_dir.mkdir(exist_ok=True)

    all_cases = make_cases(matrices, methods, seed=seed, factor=factor, factor_max_ops=factor_max_ops,
                           factor_mem_fraction=factor_mem_fraction)
    cases, skipped, notes = _leave_out(all_cases, exclude)
    log_path = out / LOG_NAME
    done = _reusable(out, log_path, perm_dir, resume)
    todo = [c for c in cases if c.key not in done]
    reused = len(cases) - len(todo)

    show = bool(progress)
    if show and console is None:
        from rich.console import Console

        console = Console()
    if todo and cluster is None:  # compile here once, so that no worker times (or repeats) a compilation
        ensure_compiled(sorted({c.method for c in todo}))  # says so on stderr when it compiles
    records: dict[str, dict] = {c.key: done[c.key] for c in cases if c.key in done}
    _execute(todo, len(cases), reused, records, log_path=log_path, perm_dir=perm_dir, console=console, show=show,
             cluster=cluster, workers=int(workers))

    records.update(skipped)
    rows = _final_rows(all_cases, records)
    notes += _measurement_notes(rows)
    meta = {"methods": methods, "seed": int(seed), "factor": bool(factor),
            "matrices": {k: str(v) for k, v in matrices.items()}}
    paths = write_report(out, rows, matrices=matrices, perm_dir=perm_dir, notes=notes, meta=meta, plots=plots)
    paths["log"] = log_path
    paths["permutations"] = perm_dir
    failed = sum(1 for r in rows if r.get("status") == "error")
    result = CompareResult(rows=rows, out=out, paths=paths, methods=methods, ran=len(todo), reused=reused,
                           failed=failed, notes=notes, seconds=time.perf_counter() - t_start)
    if show and print_table:
        console.print(result)
    return result


def run_demo(*args, **kwargs):
    """Kept for callers of the old location: see :func:`reorder.demo.run_demo`."""
    from ..demo import run_demo as _run_demo

    return _run_demo(*args, **kwargs)
