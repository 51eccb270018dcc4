"""Seeded mutation fuzzing of the matrix intake (Matrix Market, also gzipped; Harwell-Boeing; .npz).

Each case is a mutation of a small valid file (byte flips, truncation, NUL and control bytes, huge or
negative numbers, dropped or repeated lines, inconsistent arrays). It is read in a forked child
process: read_matrix, then the graph, an RCM ordering and the symbolic factorization when the file was
accepted. The child's end is classified:

    accepted   exit 0                refused    exit 2 (InputError: one line)
    error      any other exception   crash      killed by a signal (segfault, abort)
    hang       over --timeout s

Errors, crashes and hangs are failures (exit code 1 of this script). The peak memory (max RSS) and
the longest time of a child are reported too.

    python scripts/fuzz_intake.py --cases 3000 --seed 1     # the benchmark run; writes results/*.json
    python scripts/fuzz_intake.py --cases 300 --no-json     # the fast subset run by the test suite
"""

from __future__ import annotations

import argparse
import gzip
import io
import json
import os
import random
import resource
import signal
import sys
import tempfile
import time
import traceback
from pathlib import Path

import numpy as np
import scipy.io
import scipy.sparse as sp

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from reorder.errors import InputError  # noqa: E402

HERE = Path(__file__).resolve().parent


# ---- seeds (valid files) -------------------------------------------------------------------------
def _plate(k=5):
    T = sp.diags([-1.0, 2.0, -1.0], [-1, 0, 1], shape=(k, k))
    return sp.csr_matrix(sp.kron(T, sp.eye(k)) + sp.kron(sp.eye(k), T))


def _mm_bytes(A, **kw) -> bytes:
    buf = io.BytesIO()
    scipy.io.mmwrite(buf, A, **kw)
    return buf.getvalue()


def seeds() -> list[tuple[str, bytes]]:
    A = _plate()
    out = [
        ("general.mtx", _mm_bytes(sp.coo_matrix(A))),
        ("symmetric.mtx", _mm_bytes(sp.coo_matrix(A), symmetry="symmetric")),
        ("pattern.mtx", b"%%MatrixMarket matrix coordinate pattern symmetric\n5 5 5\n2 1\n3 2\n4 3\n5 4\n5 1\n"),
        ("array.mtx", b"%%MatrixMarket matrix array real general\n3 3\n4\n-1\n0\n-1\n4\n-1\n0\n-1\n4\n"),
        ("hermitian.mtx", b"%%MatrixMarket matrix coordinate complex hermitian\n3 3 4\n1 1 2 0\n2 1 1 1\n"
                          b"3 2 0 -1\n3 3 2 0\n"),
        ("plate.mtx.gz", gzip.compress(_mm_bytes(sp.coo_matrix(A), symmetry="symmetric"), mtime=0)),
    ]
    with tempfile.TemporaryDirectory() as d:
        p = Path(d) / "m.rua"
        scipy.io.hb_write(str(p), sp.csc_matrix(A))
        out.append(("plate.rua", p.read_bytes()))
        rsa = p.read_bytes().replace(b"\nRUA", b"\nRSA", 1)
        out.append(("plate.rsa", rsa))
        for fmt in ("csr", "csc", "coo", "bsr", "dia"):
            q = Path(d) / f"m_{fmt}.npz"
            B = {"csr": A.tocsr(), "csc": A.tocsc(), "coo": A.tocoo(), "bsr": A.tobsr(blocksize=(5, 5)),
                 "dia": A.todia()}[fmt]
            sp.save_npz(q, B, compressed=fmt in ("csr", "dia"))
            out.append((f"plate_{fmt}.npz", q.read_bytes()))
    return out


# ---- mutations ------------------------------------------------------------------------------------
HUGE = [b"99999999999999999999", b"-1", b"0", b"2147483648", b"9223372036854775808", b"1e308", b"nan",
        b"-0", b"+5", b"1_0", b"\xef\xbc\x91", b"4294967296"]
CONTROL = [b"\x00", b"\x01", b"\x1b", b"\x7f", b"\x0b", b"\x0c", b"\r", b"\t", b"\xff", b"\xc3\xa9"]


def _text_mutation(data: bytes, rng: random.Random) -> bytes:
    b = bytearray(data)
    kind = rng.randrange(9)
    if kind == 0 and b:  # byte flips
        for _ in range(rng.randint(1, 4)):
            i = rng.randrange(len(b))
            b[i] ^= 1 << rng.randrange(8)
    elif kind == 1:  # truncation
        b = b[: rng.randrange(len(b) + 1)]
    elif kind == 2:  # NUL / control byte inserted
        i = rng.randrange(len(b) + 1)
        b[i:i] = rng.choice(CONTROL)
    elif kind == 3:  # a number replaced by a huge / negative / odd one
        import re

        nums = [m.span() for m in re.finditer(rb"[0-9]+", bytes(b))]
        if nums:
            s, e = rng.choice(nums)
            b[s:e] = rng.choice(HUGE)
    elif kind == 4:  # a line dropped or repeated
        lines = bytes(b).split(b"\n")
        i = rng.randrange(len(lines))
        if rng.random() < 0.5:
            del lines[i]
        else:
            lines.insert(i, lines[i])
        b = bytearray(b"\n".join(lines))
    elif kind == 5:  # random bytes spliced in
        i = rng.randrange(len(b) + 1)
        b[i:i] = bytes(rng.randrange(256) for _ in range(rng.randint(1, 16)))
    elif kind == 6:  # header words changed
        for old, new in [(b"coordinate", b"array"), (b"general", b"symmetric"), (b"real", b"complex"),
                         (b"real", b"pattern"), (b"symmetric", b"skew-symmetric"), (b"RUA", b"RZA"),
                         (b"MatrixMarket", b"MATRIXMARKET"), (b"matrix", b"vector")]:
            if old in b and rng.random() < 0.4:
                b = bytearray(bytes(b).replace(old, new, 1))
    elif kind == 7:  # a long line or many blank lines
        i = rng.randrange(len(b) + 1)
        b[i:i] = rng.choice([b" " * 5000, b"\n" * 5000, b"%" + b"x" * 5000 + b"\n"])
    else:  # two mutations
        return _text_mutation(_text_mutation(bytes(b), rng), rng)
    return bytes(b)


def _npz_mutation(data: bytes, rng: random.Random) -> bytes:
    if rng.random() < 0.3:  # raw damage to the zip
        return _text_mutation(data, rng)
    with np.load(io.BytesIO(data), allow_pickle=False) as z:
        arrays = {k: z[k] for k in z.files}
    keys = [k for k in arrays if k != "format"]
    k = rng.choice(keys)
    a = arrays[k]
    choice = rng.randrange(8)
    if choice == 0 and a.size:
        a = a.copy()
        try:
            a.flat[rng.randrange(a.size)] = rng.choice([-1, 2**31, 2**40, -(2**62), 0, 10**9])
        except (ValueError, OverflowError, TypeError):
            a = a.astype(np.int64)
    elif choice == 1:
        a = a[: rng.randrange(a.size + 1)] if a.ndim == 1 else a.reshape(-1)
    elif choice == 2:
        a = np.concatenate([a.reshape(-1), a.reshape(-1)])
    elif choice == 3:
        a = a.astype(rng.choice(["U4", "S4", "float64", "int8", "uint64", "bool", "complex128"]))
    elif choice == 4 and a.size > 1:
        a = a[::-1].copy()
    elif choice == 5:
        arrays["format"] = np.array(rng.choice([b"lil", b"dok", b"csr", b"coo", b"\x00", b"bsr", b"dia"]))
    elif choice == 6:
        arrays["shape"] = np.array(rng.choice([[2 * 10**9, 2 * 10**9], [25, 26], [-25, -25], [0, 0], [25],
                                               [10**8, 10**8], [25, 25, 1]]))
    else:
        del arrays[k]
    if k in arrays:
        arrays[k] = a
    buf = io.BytesIO()
    np.savez(buf, **arrays)
    return buf.getvalue()


def mutate(name: str, data: bytes, rng: random.Random) -> bytes:
    if name.endswith(".npz"):
        return _npz_mutation(data, rng)
    if name.endswith(".gz"):
        if rng.random() < 0.25:
            return _text_mutation(data, rng)  # damaged compressed stream
        return gzip.compress(_text_mutation(gzip.decompress(data), rng), mtime=0)
    return _text_mutation(data, rng)


# ---- one case in a forked child -------------------------------------------------------------------
def _child(path: str) -> int:
    from reorder.analysis import symbolic_factor
    from reorder.graph import from_matrix
    from reorder.io import read_matrix
    from reorder.orderings import order

    if path.endswith(".selftest-crash"):  # --self-test: the harness must see these
        os.kill(os.getpid(), signal.SIGSEGV)
    if path.endswith(".selftest-hang"):
        time.sleep(3600)
    try:
        import warnings

        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            A = read_matrix(path)
            g = from_matrix(A)
            res = order(g, "rcm")
            symbolic_factor(g, res.perm)
        return 0
    except InputError:
        return 2
    except MemoryError:
        return 4
    except BaseException:
        traceback.print_exc(limit=3)
        return 3


def _spawn_batch(batch) -> tuple[int, int]:
    """Fork a child that reads the cases of ``batch`` ([(key, path)]) one after another and reports
    "start KEY" / "end KEY CODE" lines on a pipe; returns (pid, read end)."""
    r, w = os.pipe()
    pid = os.fork()
    if pid == 0:  # child
        try:
            os.close(r)
            devnull = os.open(os.devnull, os.O_WRONLY)
            os.dup2(devnull, 1)
            for key, path in batch:
                os.write(w, f"start {key}\n".encode())
                code = _child(path)
                os.write(w, f"end {key} {code}\n".encode())
        finally:
            os._exit(0)
    os.close(w)
    os.set_blocking(r, False)
    return pid, r


def _classify(status) -> str:
    if os.WIFSIGNALED(status):
        return f"crash (signal {os.WTERMSIG(status)})"
    return "error"  # the child itself failed outside a case


_OUTCOME = {0: "accepted", 2: "refused", 4: "memory"}


def run_cases(jobs, timeout: float, parallel: int, on_done, batch_size: int = 25):
    """Run ``jobs`` (iterable of (key, path)) in forked children, a batch of cases per child and
    ``parallel`` children at a time; ``on_done(key, outcome, seconds, peak_rss)`` for each case.

    A child that dies (signal) or stalls (a case over ``timeout`` s) marks the case it was reading
    as a crash or a hang; the rest of its batch is run again in a new child. Forking once per batch
    keeps the cost of a case near that of reading it (a fork of this process takes ~40 ms)."""
    jobs = iter(jobs)
    pending: list = []
    running = {}  # pid -> dict(fd, batch, done, current, t0, buf)
    exhausted = False

    def next_batch():
        nonlocal exhausted
        batch = pending[:batch_size]
        del pending[:batch_size]
        while not exhausted and len(batch) < batch_size:
            try:
                batch.append(next(jobs))
            except StopIteration:
                exhausted = True
        return batch

    def drain(st):
        try:
            while True:
                chunk = os.read(st["fd"], 65536)
                if not chunk:
                    break
                st["buf"] += chunk
        except BlockingIOError:
            pass
        *lines, st["buf"] = st["buf"].split(b"\n")
        for line in lines:
            parts = line.decode().split()
            if parts[0] == "start":
                st["current"], st["t0"] = int(parts[1]), time.perf_counter()
            else:
                key, code = int(parts[1]), int(parts[2])
                st["done"].add(key)
                st["current"] = None
                on_done(key, _OUTCOME.get(code, "error"), time.perf_counter() - st["t0"], 0)

    while True:
        while len(running) < parallel:
            batch = next_batch()
            if not batch:
                break
            pid, fd = _spawn_batch(batch)
            running[pid] = {"fd": fd, "batch": batch, "done": set(), "current": None,
                            "t0": time.perf_counter(), "buf": b""}
        if not running:
            break
        pid, status, usage = os.wait4(-1, os.WNOHANG)
        now = time.perf_counter()
        for p, st in list(running.items()):
            drain(st)
            if p != pid and st["current"] is not None and now - st["t0"] > timeout:
                os.kill(p, signal.SIGKILL)
                os.wait4(p, 0)
                drain(st)
                _finish(p, st, "hang", 0, running, pending, on_done)
        if pid and pid in running:
            st = running[pid]
            drain(st)
            failed = _classify(status) if not (os.WIFEXITED(status) and os.WEXITSTATUS(status) == 0) else None
            _finish(pid, st, failed, usage.ru_maxrss * 1024, running, pending, on_done)
        elif not pid:
            time.sleep(0.002)


def _finish(pid, st, failed, rss, running, pending, on_done):
    del running[pid]
    os.close(st["fd"])
    run_cases.peak = max(getattr(run_cases, "peak", 0), rss)
    if failed is not None and st["current"] is not None:
        on_done(st["current"], failed, time.perf_counter() - st["t0"], rss)
        st["done"].add(st["current"])
    rest = [(k, p) for k, p in st["batch"] if k not in st["done"]]
    pending[:0] = rest


def warm_up():
    """Compile the kernels once in the parent, without reading a file (no parser threads before fork)."""
    from reorder.analysis import symbolic_factor
    from reorder.graph import from_matrix
    from reorder.orderings import order

    g = from_matrix(_plate())
    symbolic_factor(g, order(g, "rcm").perm)
    # import (but do not run) every reader, so a child only forks; SciPy's Matrix Market parser
    # starts its threads at the first read, which happens in the children only
    import scipy.io._fast_matrix_market  # noqa: F401
    import scipy.io._harwell_boeing.hb  # noqa: F401

    import reorder.io.hb  # noqa: F401
    import reorder.io.npz  # noqa: F401
    import reorder.io.readers  # noqa: F401


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    ap.add_argument("--cases", type=int, default=3000)
    ap.add_argument("--seed", type=int, default=1)
    ap.add_argument("--timeout", type=float, default=20.0)
    ap.add_argument("--parallel", type=int, default=2, help="children at a time")
    ap.add_argument("--self-test", action="store_true",
                    help="add one case that crashes and one that hangs; succeed only if both are caught")
    ap.add_argument("--no-json", action="store_true", help="do not write scripts/results/fuzz_intake.json")
    ap.add_argument("--keep", type=Path, default=None, help="copy failing cases to this folder")
    args = ap.parse_args(argv)
    rng = random.Random(args.seed)
    base = seeds()
    warm_up()
    counts: dict[str, int] = {}
    by_format: dict[str, dict[str, int]] = {}
    failures = []
    worst_rss, worst_secs = 0, 0.0
    t_all = time.perf_counter()
    with tempfile.TemporaryDirectory(prefix="reorder-fuzz-") as d:
        cases = {}

        def jobs():
            for i in range(args.cases):
                name, data = base[i % len(base)]
                case = mutate(name, data, rng)
                path = os.path.join(d, f"case{i}_{name}")
                with open(path, "wb") as fh:
                    fh.write(case)
                cases[i] = (name, path)
                yield i, path
            if args.self_test:
                for j, kind in ((args.cases, "crash"), (args.cases + 1, "hang")):
                    path = os.path.join(d, f"case{j}.selftest-{kind}")
                    Path(path).write_bytes(b"")
                    cases[j] = (f"selftest-{kind}", path)
                    yield j, path

        def done(i, outcome, secs, rss):
            nonlocal worst_rss, worst_secs
            name, path = cases.pop(i)
            counts[outcome] = counts.get(outcome, 0) + 1
            fam = name.rsplit(".", 1)[-1] if not name.endswith(".gz") else "gz"
            fam = name if name.startswith("selftest") else fam
            by_format.setdefault(fam, {}).setdefault(outcome, 0)
            by_format[fam][outcome] += 1
            worst_rss, worst_secs = max(worst_rss, rss), max(worst_secs, secs)
            if outcome not in ("accepted", "refused"):
                failures.append({"case": i, "seed_file": name, "outcome": outcome})
                if args.keep:
                    args.keep.mkdir(parents=True, exist_ok=True)
                    (args.keep / os.path.basename(path)).write_bytes(Path(path).read_bytes())
            os.unlink(path)

        run_cases(jobs(), args.timeout, args.parallel, done)
        worst_rss = max(worst_rss, getattr(run_cases, "peak", 0))
    total = time.perf_counter() - t_all
    crashes = sum(v for k, v in counts.items() if k.startswith("crash"))
    print(f"fuzz_intake: {args.cases} cases, seed {args.seed}, {total:.1f} s")
    print("  outcomes: " + ", ".join(f"{k} {v}" for k, v in sorted(counts.items())))
    for fam, c in sorted(by_format.items()):
        print(f"  {fam:<4} " + ", ".join(f"{k} {v}" for k, v in sorted(c.items())))
    print(f"  slowest case {worst_secs:.2f} s, largest child peak memory {worst_rss / 2**20:.0f} MiB")
    print(f"  crashes {crashes}, errors {counts.get('error', 0)}, hangs {counts.get('hang', 0)}")
    for f in failures[:20]:
        print(f"  FAIL case {f['case']} ({f['seed_file']}): {f['outcome']}")
    if not args.no_json:
        out = HERE / "results" / "fuzz_intake.json"
        out.parent.mkdir(exist_ok=True)
        out.write_text(json.dumps({"cases": args.cases, "seed": args.seed, "seconds": round(total, 1),
                                   "outcomes": counts, "by_format": by_format, "failures": failures,
                                   "slowest_case_s": round(worst_secs, 3),
                                   "max_child_rss_mib": round(worst_rss / 2**20, 1)}, indent=1) + "\n")
    bad = crashes + counts.get("error", 0) + counts.get("hang", 0) + counts.get("memory", 0)
    if args.self_test:
        caught = (by_format.get("selftest-crash", {}).get("crash (signal 11)") == 1
                  and by_format.get("selftest-hang", {}).get("hang") == 1)
        print(f"  self-test: the planted crash and hang were {'caught' if caught else 'MISSED'}")
        return 0 if caught and bad == 2 else 1
    return 1 if bad else 0


if __name__ == "__main__":
    sys.exit(main())
