"""Where the cases run: in this process, in a pool of local processes (whose workers end with the
comparison, and whose crashes are pinned on one case), or on a Dask ``distributed`` scheduler.
"""

from __future__ import annotations

import contextlib
import os
import threading
import time

from ..errors import InputError
from .cases import _error_record, _one_line
from .work import run_case

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
