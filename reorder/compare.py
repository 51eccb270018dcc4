"""Run every ordering on every matrix of a suite, resumably, serially, in local processes or on Dask.

A *case* is one (matrix, method, seed). Each finished case is appended at once (flush + fsync) to
``cases.jsonl`` in the output folder and its permutation saved, so an interrupted run loses only the
cases in flight and ``resume=True`` finishes it; the final files are rebuilt from the log alone, in a
fixed order, by :func:`reorder.report.write_report`.
"""

from __future__ import annotations

import contextlib
import json
import os
import threading
import time
import tracemalloc
from dataclasses import asdict, dataclass, field
from pathlib import Path

import numpy as np
import scipy.sparse as sp

from . import report as _report
from .errors import InputError
from .io import matrix_name, read_matrix, write_permutation
from .warmup import ensure_compiled, warm

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

#: File endings recognised as matrices when a folder is given.
MATRIX_SUFFIXES = (".mtx", ".mtx.gz", ".mm", ".mm.gz", ".rb", ".rua", ".rsa", ".hb", ".npz")
#: Log of finished cases, one JSON object per line.
LOG_NAME = "cases.jsonl"
#: Largest factor operation count (Σ c_j²) factored by default; SuperLU managed about 1e9 per second
#: on the development machine (2 cores), so this is about a minute.
DEFAULT_FACTOR_MAX_OPS = 5e10
#: Largest share of physical memory an estimated factorization may take.
DEFAULT_FACTOR_MEM_FRACTION = 0.25


# --------------------------------------------------------------------------------------------------
# inputs and cases
# --------------------------------------------------------------------------------------------------
def _is_matrix_file(p: Path) -> bool:
    name = p.name.lower()
    return p.is_file() and not name.startswith(".") and name.endswith(MATRIX_SUFFIXES)


def collect_inputs(inputs) -> dict[str, Path]:
    """Resolve matrix files and folders to ``{matrix name: absolute path}``, sorted by name.

    A folder stands for the matrix files directly inside it (``.mtx``, ``.mtx.gz``, ``.rb``,
    ``.rua``, ``.rsa``, ``.npz``, …). The name is the file name without extension
    (:func:`reorder.io.matrix_name`).

    Raises
    ------
    InputError
        A missing path, a folder without matrices, no inputs at all, or two inputs with one name.
    """
    if isinstance(inputs, (str, os.PathLike)):
        inputs = [inputs]
    found: dict[str, Path] = {}
    from .bundled import resolve

    for item in inputs or []:
        p = resolve(item).expanduser()
        if not p.exists():
            raise InputError("no such file or folder", str(p))
        if p.is_dir():
            files = sorted(q for q in p.iterdir() if _is_matrix_file(q))
            if not files:
                raise InputError(f"folder holds no matrix files ({', '.join(MATRIX_SUFFIXES)})", str(p))
        else:
            files = [p]
        for f in files:
            name = matrix_name(f)
            f = f.resolve()
            if name in found and found[name] != f:
                raise InputError(f"two inputs are named '{name}': {found[name]} and {f}; rename one")
            found[name] = f
    if not found:
        raise InputError("no input matrices given")
    return dict(sorted(found.items()))


def _check_methods(methods) -> list[str]:
    from .orderings import available

    known = available()
    if methods is None:
        return known
    if isinstance(methods, str):
        methods = methods.split(",")
    out: list[str] = []
    for m in methods:
        m = str(m).strip()
        if not m or m in out:
            continue
        if m not in known:
            from .orderings import resolve

            resolve(m)  # a method spec NAME:OPTION=VALUE...; InputError if unknown or invalid
        out.append(m)
    if not out:
        raise InputError("no methods given")
    return out


def _fingerprint(path: Path) -> str:
    st = path.stat()
    return f"{st.st_size}:{st.st_mtime_ns}"


@dataclass(frozen=True)
class Case:
    """One unit of work: order one matrix with one method (and optionally factor it).

    Attributes
    ----------
    matrix : str
        The matrix name (file name without extension).
    path : str
        The matrix file; workers read it themselves, so on a cluster it must be visible to them.
    method : str
    seed : int
    factor : bool
        Also factor the reordered matrix with SciPy's SuperLU.
    fingerprint : str
        Size and modification time of the file: a changed file is not taken from the log.
    factor_max_ops : float
        Factorizations with more symbolic operations are skipped (with a message).
    factor_mem_fraction : float
        Factorizations whose estimated storage exceeds this share of RAM are skipped.
    """

    matrix: str
    path: str
    method: str
    seed: int = 0
    factor: bool = False
    fingerprint: str = ""
    factor_max_ops: float = DEFAULT_FACTOR_MAX_OPS
    factor_mem_fraction: float = DEFAULT_FACTOR_MEM_FRACTION

    @property
    def key(self) -> str:
        """Identity of the case in the log."""
        return json.dumps([self.matrix, self.method, int(self.seed), bool(self.factor), self.fingerprint])


def make_cases(matrices: dict, methods, *, seed: int = 0, factor: bool = False, **limits) -> list[Case]:
    """The grid of cases, sorted by matrix name then in the given method order."""
    return [
        Case(matrix=name, path=str(path), method=m, seed=int(seed), factor=bool(factor),
             fingerprint=_fingerprint(Path(path)), **limits)
        for name, path in sorted(matrices.items())
        for m in methods
    ]


# --------------------------------------------------------------------------------------------------
# work done for one case (runs in a worker: process, Dask worker, or this process)
# --------------------------------------------------------------------------------------------------
_LOCK = threading.Lock()
_CACHE: dict = {}


def _load(path: str, fingerprint: str):
    """Matrix and graph of ``path``, cached (one matrix per process) for the next method."""
    from .graph import from_matrix

    key = (path, fingerprint)
    with _LOCK:
        hit = _CACHE.get(key)
    if hit is not None:
        return hit
    A = read_matrix(path)
    g = from_matrix(A)
    with _LOCK:
        _CACHE.clear()
        _CACHE[key] = (A, g)
    return A, g


def _status_kb(field_name: str) -> int | None:
    try:
        with open("/proc/self/status") as fh:
            for line in fh:
                if line.startswith(field_name + ":"):
                    return int(line.split()[1])
    except OSError:
        return None
    return None


class _PeakMemory:
    """Peak memory of a block, in MiB.

    On Linux the process's resident high-water mark is reset (``/proc/self/clear_refs``, value 5)
    and the peak is ``VmHWM`` after the block minus ``VmRSS`` before it: everything the block made
    resident, NumPy, SciPy and compiled kernels alike (pages reused from the allocator's free lists
    do not count). Elsewhere, or where the reset is refused, it is the :mod:`tracemalloc` peak,
    which sees allocations through Python's and NumPy's allocators only. ``source`` says which.
    Threads working at the same time in one process (a threaded Dask worker) blur the number.
    """

    def __enter__(self):
        self.source, self.mb = "rss", None
        self._base = None
        try:
            with open("/proc/self/clear_refs", "w") as fh:
                fh.write("5")
            self._base = _status_kb("VmRSS")
        except OSError:
            self._base = None
        if self._base is None:
            self.source = "tracemalloc"
            self._started = not tracemalloc.is_tracing()
            if self._started:
                tracemalloc.start()
            tracemalloc.reset_peak()
        return self

    def __exit__(self, *exc):
        if self.source == "rss":
            hwm = _status_kb("VmHWM")
            self.mb = None if hwm is None else max(0, hwm - self._base) / 1024.0
        else:
            _, peak = tracemalloc.get_traced_memory()
            if self._started:
                tracemalloc.stop()
            self.mb = peak / 2**20
        return False


def _one_line(exc: BaseException) -> str:
    msg = " ".join(str(exc).split())
    text = f"{type(exc).__name__}: {msg}" if msg else type(exc).__name__
    return text if len(text) <= 400 else text[:397] + "..."


def _mmatrix(graph, perm) -> sp.csc_matrix:
    """The M-matrix with the graph's pattern (off-diagonals −1, diagonal = degree + 1), reordered."""
    from .gallery import m_matrix

    return sp.csc_matrix(m_matrix(graph).tocsr()[perm][:, perm])


def _looks_spd(B) -> bool:
    """Real, finite, numerically symmetric with a positive diagonal: worth trying as SPD."""
    if B.dtype.kind not in "fiu" or B.nnz == 0:
        return False
    data = B.data
    if not np.all(np.isfinite(data)) or not np.all(B.diagonal() > 0):
        return False
    scale = float(np.abs(data).max())
    diff = abs(B - B.T)
    return diff.nnz == 0 or float(diff.max()) <= 1e-12 * scale


def _superlu(B):
    from scipy.sparse.linalg import splu

    return splu(B, permc_spec="NATURAL", diag_pivot_thresh=0.0, options={"SymmetricMode": True})


def _factor(A, graph, perm, nnz_factor: int, factor_ops: int, case: Case) -> dict:
    """Factor ``A[perm][:, perm]`` (or its M-matrix) with SuperLU; skip if too big."""
    n = graph.n
    rec = {"factor_status": "skipped", "factor_matrix": None, "factor_nnz_l": None, "factor_mb": None,
           "factor_peak_mb": None, "factor_seconds": None, "factor_message": ""}
    # SuperLU keeps L and U: about 2·nnz(L) entries of 8-byte values and 4-byte row indices
    est_mb = 2.0 * nnz_factor * 12 / 2**20
    try:
        ram_mb = os.sysconf("SC_PAGE_SIZE") * os.sysconf("SC_PHYS_PAGES") / 2**20
    except (ValueError, OSError, AttributeError):
        ram_mb = float("inf")
    if est_mb > case.factor_mem_fraction * ram_mb:
        rec["factor_message"] = (f"skipped: estimated {est_mb:,.0f} MB exceeds {case.factor_mem_fraction:.0%} "
                                 f"of {ram_mb:,.0f} MB RAM")
        return rec
    if factor_ops > case.factor_max_ops:
        rec["factor_message"] = f"skipped: {factor_ops:.2e} operations exceed the limit {case.factor_max_ops:.2e}"
        return rec
    B = sp.csc_matrix(A[perm][:, perm])
    lu, kind, why = None, "original", ""
    if _looks_spd(B):
        try:
            with _PeakMemory() as mem:
                t0 = time.perf_counter()
                lu = _superlu(B.astype(np.float64))
                secs = time.perf_counter() - t0
            # a symmetric matrix is positive definite iff elimination without pivoting has positive pivots
            if not (np.array_equal(lu.perm_r, np.arange(n)) and np.all(lu.U.diagonal() > 0)):
                lu, why = None, "not positive definite (a pivot was not positive)"
        except RuntimeError as exc:  # exactly singular
            lu, why = None, f"not positive definite ({_one_line(exc)})"
    else:
        why = "not symmetric positive definite (values not symmetric, or a diagonal entry not positive)"
    if lu is None:
        kind = "m-matrix"
        with _PeakMemory() as mem:
            t0 = time.perf_counter()
            lu = _superlu(_mmatrix(graph, perm))
            secs = time.perf_counter() - t0
    L = lu.L
    L.eliminate_zeros()
    rec.update(
        factor_status="ok",
        factor_matrix=kind,
        factor_nnz_l=int(L.nnz),
        factor_mb=lu.nnz * 12 / 2**20,
        factor_peak_mb=mem.mb,
        factor_seconds=secs,
        factor_message=(f"M-matrix with the same pattern factored: {why}" if kind == "m-matrix" else ""),
    )
    if kind == "m-matrix" and L.nnz != nnz_factor:  # structural count: must agree with the symbolic one
        rec["factor_message"] += f"; SuperLU nnz(L) {L.nnz} differs from the symbolic count {nnz_factor}"
    return rec


def _jsonable_info(info: dict, limit: int = 4000):
    safe = _report._jsonable(info)
    text = json.dumps(safe)
    if len(text) <= limit:
        return safe
    return {"truncated": True, "keys": sorted(str(k) for k in info)}


def run_case(case: Case) -> dict:
    """Run one case and return its record; never raises for a failure of the case itself.

    The record holds the columns of :data:`reorder.report.COLUMNS` (and the factor columns if
    ``case.factor``), the ordering's ``info`` and, under ``"_perm"``, the permutation (removed by
    the runner before logging). ``status`` is ``"ok"`` or ``"error"`` with ``error`` one line.
    """
    from .analysis import analyse
    from .orderings import order

    rec: dict = {"key": case.key, "matrix": case.matrix, "method": case.method, "seed": case.seed,
                 "status": "error", "error": ""}
    for c in _report.COLUMNS:
        rec.setdefault(c, None)
    if case.factor:
        rec.update({c: None for c in _report.FACTOR_COLUMNS})
    try:
        A, g = _load(case.path, case.fingerprint)
        rec["n"], rec["nnz"] = int(A.shape[0]), int(A.nnz)
        warm([case.method], seed=case.seed)  # kernels compiled and loaded before the clock starts
        with _PeakMemory() as mem:
            o = order(g, case.method, seed=case.seed)
        stats = analyse(A, o.perm, graph=g)
        rec.update(
            nnz_factor=stats.nnz_factor, factor_ops=stats.factor_ops, bandwidth=stats.bandwidth,
            profile=stats.profile, etree_height=stats.etree_height, fill=stats.fill,
            components=stats.components, order_seconds=o.seconds, order_peak_mb=mem.mb,
            order_peak_source=mem.source, analyse_seconds=stats.analyse_seconds,
            info=_jsonable_info(o.info),
        )
        if case.factor:
            try:
                rec.update(_factor(A, g, o.perm, stats.nnz_factor, stats.factor_ops, case))
            except MemoryError as exc:
                rec.update(factor_status="error", factor_message=_one_line(exc))
            except Exception as exc:  # a factorization problem does not void the ordering's numbers
                rec.update(factor_status="error", factor_message=_one_line(exc))
        rec["status"] = "ok"
        rec["_perm"] = o.perm
    except (KeyboardInterrupt, SystemExit):
        raise
    except BaseException as exc:  # MemoryError included: record it, the run goes on
        rec["error"] = _one_line(exc)
    return rec


def _error_record(case: Case, message: str) -> dict:
    rec = {c: None for c in _report.COLUMNS}
    if case.factor:
        rec.update({c: None for c in _report.FACTOR_COLUMNS})
    rec.update(key=case.key, matrix=case.matrix, method=case.method, seed=case.seed, status="error", error=message)
    return rec


# --------------------------------------------------------------------------------------------------
# the log
# --------------------------------------------------------------------------------------------------
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
        self.fh.write(json.dumps(_report._jsonable(rec), allow_nan=False) + "\n")
        self.fh.flush()
        os.fsync(self.fh.fileno())

    def close(self) -> None:
        self.fh.close()


# --------------------------------------------------------------------------------------------------
# executors
# --------------------------------------------------------------------------------------------------
def _run_serial(cases, on_result):
    for c in cases:
        on_result(c, run_case(c))


def _mp_context():
    import multiprocessing as mp

    import sys

    methods = mp.get_all_start_methods()
    main_file = getattr(sys.modules.get("__main__"), "__file__", None)
    if main_file and not os.path.exists(main_file) and "fork" in methods:
        # a main program read from stdin cannot be re-imported by spawned workers; fork copies it
        return mp.get_context("fork")
    return mp.get_context("forkserver" if "forkserver" in methods else "spawn")


def _proc_identity(pid: int):
    """``(state, start time)`` of a process from /proc, or None if it is gone (or no /proc)."""
    try:
        with open(f"/proc/{pid}/stat", encoding="ascii", errors="replace") as fh:
            fields = fh.read().rsplit(")", 1)[1].split()
        return fields[0], fields[19]
    except (OSError, IndexError):
        return None


def _parent_alive(pid: int, start) -> bool:
    if start is not None:
        ident = _proc_identity(pid)
        return ident is not None and ident[0] not in ("Z", "X") and ident[1] == start
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except PermissionError:
        return True
    return True


def _watch_parent(pid: int, period: float = 0.5) -> None:
    """Worker initializer: end this worker as soon as the compare process ``pid`` is gone.

    A pool worker's own parent is the fork server, not the compare process, so the operating
    system's parent-death signal cannot be used; the worker polls instead (by /proc identity, so a
    reused process id is not mistaken for the parent). Without this, a ``kill -9`` of compare left
    its workers (about 200 MB each) running."""
    ident = _proc_identity(pid)
    start = ident[1] if ident is not None else None

    def poll():
        while _parent_alive(pid, start):
            time.sleep(period)
        os._exit(1)

    threading.Thread(target=poll, name="reorder-parent-watch", daemon=True).start()


def _run_processes(cases, workers: int, on_result):
    """Cases in a pool of local processes. If a worker dies (killed for memory, a crash), the cases
    it left unfinished are rerun one at a time so that only the culprit is recorded as failed."""
    from concurrent.futures import ProcessPoolExecutor, as_completed
    from concurrent.futures.process import BrokenProcessPool

    ctx = _mp_context()
    unfinished: list = []
    watch = dict(initializer=_watch_parent, initargs=(os.getpid(),))
    ex = ProcessPoolExecutor(max_workers=workers, mp_context=ctx, **watch)
    try:
        futs = {ex.submit(run_case, c): (i, c) for i, c in enumerate(cases)}
        for f in as_completed(futs):
            i, c = futs[f]
            try:
                rec = f.result()
            except BrokenProcessPool:
                unfinished.append((i, c))
                continue
            except Exception as exc:
                rec = _error_record(c, _one_line(exc))
            on_result(c, rec)
    except BaseException:
        ex.shutdown(wait=False, cancel_futures=True)
        raise
    ex.shutdown(wait=True)
    unfinished = [c for _, c in sorted(unfinished, key=lambda t: t[0])]
    single = None
    try:
        for c in unfinished:
            single = single or ProcessPoolExecutor(max_workers=1, mp_context=ctx, **watch)
            try:
                rec = single.submit(run_case, c).result()
            except BrokenProcessPool:
                rec = _error_record(c, "worker process died (killed for memory, or a crash)")
                single.shutdown(wait=False)
                single = None
            on_result(c, rec)
    finally:
        if single is not None:
            single.shutdown(wait=False, cancel_futures=True)


def _dask_client(cluster):
    try:
        import distributed
    except ImportError:
        raise InputError("a Dask cluster needs the 'distributed' package: pip install 'reorder[cluster]'") from None
    if isinstance(cluster, distributed.Client):
        return cluster, False
    try:
        return distributed.Client(cluster, timeout="20s"), True
    except (OSError, TimeoutError, ValueError) as exc:
        raise InputError(f"cannot reach the Dask scheduler at {cluster}: {_one_line(exc)}") from None


def _run_dask(cases, cluster, on_result):
    """Cases as tasks on a Dask ``distributed`` scheduler (an address, a Client or a Cluster)."""
    import distributed

    import uuid

    client, own = _dask_client(cluster)
    futs = []
    run_id = uuid.uuid4().hex[:12]  # task keys unique to this run, so two runs never share results
    try:
        futs = [client.submit(run_case, c, pure=False, key=f"reorder-case-{run_id}-{i}")
                for i, c in enumerate(cases)]
        which = {f.key: c for f, c in zip(futs, cases)}
        for f in distributed.as_completed(futs):
            c = which[f.key]
            try:
                rec = f.result()
            except Exception as exc:  # the worker died (KilledWorker) or the task could not run
                rec = _error_record(c, _one_line(exc))
            on_result(c, rec)
    except BaseException:
        with contextlib.suppress(Exception):
            client.cancel(futs)
        raise
    finally:
        if own:
            with contextlib.suppress(Exception):
                client.close()


# --------------------------------------------------------------------------------------------------
# the runner
# --------------------------------------------------------------------------------------------------
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
        return _report.results_table(self.rows)

    def __rich_console__(self, console, options):
        from rich.text import Text

        if _report.table_width(self.rows) <= options.max_width:
            yield self.table()
        else:  # too narrow for one column per method: the best per matrix; the full grid is in the report
            yield _report.best_table(self.rows)
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


def run_compare(
    inputs,
    methods=None,
    out="reorder-compare",
    *,
    workers: int = 1,
    resume: bool = False,
    factor: bool = False,
    cluster=None,
    seed: int = 0,
    progress: bool = False,
    console=None,
    plots: bool = True,
    exclude: dict | None = None,
    print_table: bool = True,
    factor_max_ops: float = DEFAULT_FACTOR_MAX_OPS,
    factor_mem_fraction: float = DEFAULT_FACTOR_MEM_FRACTION,
) -> CompareResult:
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
    notes: list[str] = []

    cases = make_cases(matrices, methods, seed=seed, factor=factor, factor_max_ops=factor_max_ops,
                       factor_mem_fraction=factor_mem_fraction)
    skipped: dict[str, dict] = {}  # cases left out on purpose: a row that says why, in its cells
    if exclude:
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
        notes += [f"{m} not run on {', '.join(names)}: {why}" for (m, why), names in left_out.items()]
        all_cases, cases = cases, kept
    else:
        all_cases = cases

    log_path = out / LOG_NAME
    done: dict[str, dict] = {}
    if resume:
        for key, rec in read_log(log_path).items():
            if rec.get("status") == "ok" and (perm_dir / f"{rec['matrix']}.{rec['method']}.txt").is_file():
                done[key] = rec
    elif log_path.exists():
        os.replace(log_path, out / (LOG_NAME + ".prev"))
    todo = [c for c in cases if c.key not in done]
    reused = len(cases) - len(todo)

    show = bool(progress)
    if show and console is None:
        from rich.console import Console

        console = Console()
    if todo and cluster is None:  # compile here once, so that no worker times (or repeats) a compilation
        ensure_compiled(sorted({c.method for c in todo}))  # says so on stderr when it compiles
    log = _Log(log_path)
    records: dict[str, dict] = {c.key: done[c.key] for c in cases if c.key in done}
    bar_cm = _progress(console, len(cases), show)
    counter = {"k": reused}

    try:
        with bar_cm as bar:
            task = bar.add_task("ordering", total=len(cases), completed=reused) if bar is not None else None

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
                    console.print(f"[{counter['k']}/{len(cases)}] {case.matrix} {case.method}: {what}",
                                  markup=False, highlight=False)

            if cluster is not None:
                _run_dask(todo, cluster, on_result)
            elif int(workers) > 1 and len(todo) > 1:
                _run_processes(todo, int(workers), on_result)
            else:
                _run_serial(todo, on_result)
    except KeyboardInterrupt:
        log.close()
        _CACHE.clear()
        if console is not None:
            console.print(f"interrupted: {counter['k']} of {len(cases)} cases are saved in {log_path}; "
                          "run again with --resume to finish", markup=False, highlight=False)
        raise
    log.close()
    _CACHE.clear()  # do not hold the last matrix after the run

    records.update(skipped)
    rows = []
    for c in all_cases:
        rec = dict(records[c.key])
        rec.pop("key", None)
        rec.pop("_perm", None)
        rows.append(rec)
    sources = sorted({r.get("order_peak_source") for r in rows if r.get("order_peak_source")})
    if sources:
        how = {"rss": "resident-memory high-water mark above the level before the ordering (Linux VmHWM, reset "
                      "per case)",
               "tracemalloc": "tracemalloc peak (Python and NumPy allocations only)"}
        notes.append("order_peak_mb: " + "; ".join(f"{s} = {how.get(s, s)}" for s in sources))
    notes.append("order_seconds and the memory columns are measurements and differ from run to run; all other "
                 "numbers are exact and repeatable.")
    meta = {"methods": methods, "seed": int(seed), "factor": bool(factor),
            "matrices": {k: str(v) for k, v in matrices.items()}}
    paths = _report.write_report(out, rows, matrices=matrices, perm_dir=perm_dir, notes=notes, meta=meta,
                                 plots=plots)
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
    from .demo import run_demo as _run_demo

    return _run_demo(*args, **kwargs)
