"""Intake under hostile files: time and peak memory per file, and the per-row / per-entry memory
that the size guard (reorder/io/guard.py) plans with.

Part 1, hostile files (each up to about 100 MB): every file goes through ``reorder stats FILE`` in a
fresh process; wall time and peak memory (max RSS of the child, from wait4) are printed with the
exit code. Targets (issue 19): exit 0 or 2, peak <= 1 GB, time <= 10 s. The SciPy baseline from the
same run is ``scipy.io.mmread`` of the valid 100 MB file the hostile variants are cut from, in a
fresh process too.

Part 2, memory per row and per entry (``--memory``): for each method and for the symbolic analysis,
the peak RSS growth of read + graph + ordering + analysis on a diagonal matrix (n entries) and on
7-point and 27-point 3-D meshes of the same size, fitted as ``a * rows + b * entries``.

    python scripts/bench_intake.py            # part 1 (about a minute), writes results/bench_intake.json
    python scripts/bench_intake.py --memory   # part 2 as well (several minutes)
"""

from __future__ import annotations

import argparse
import gzip
import json
import os
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np
import scipy.sparse as sp

HERE = Path(__file__).resolve().parent
ROOT = HERE.parent
HDR = b"%%MatrixMarket matrix coordinate real general\n"


def _measure(cmd, timeout=120, stdin=None):
    """(exit code, seconds, peak RSS bytes) of a child process."""
    t0 = time.perf_counter()
    p = subprocess.Popen(cmd, stdout=subprocess.DEVNULL, stderr=subprocess.PIPE, stdin=stdin)
    try:
        _, status, usage = os.wait4(p.pid, 0)
    except ChildProcessError:  # pragma: no cover
        return None, time.perf_counter() - t0, 0
    secs = time.perf_counter() - t0
    err = p.stderr.read().decode("utf-8", "replace").strip().splitlines()
    p.stderr.close()
    code = os.waitstatus_to_exitcode(status)
    return code, secs, usage.ru_maxrss * 1024, (err[-1] if err else "")


def _valid_body(target_bytes: int) -> tuple[bytes, int]:
    """Entry lines of a 2-D Laplacian-like pattern totalling about ``target_bytes``."""
    k = int((target_bytes / 5 / 26) ** 0.5)
    n = k * k
    i = np.arange(n)
    rows = np.concatenate([i, i[:-1], i[k:]])
    cols = np.concatenate([i, i[:-1] + 1, i[k:] - k])
    vals = np.concatenate([np.full(n, 4.0), np.full(n - 1, -1.0), np.full(n - k, -1.0)])
    lines = np.char.add(np.char.add(np.char.add((rows + 1).astype(str), " "), np.char.add((cols + 1).astype(str), " ")),
                        vals.astype(str))
    body = ("\n".join(lines.tolist()) + "\n").encode()
    return f"{n} {n} {rows.size}\n".encode() + body, n


def hostile_files(d: Path) -> dict[str, Path]:
    files = {}
    body, n = _valid_body(100 << 20)
    valid = d / "valid100.mtx"
    valid.write_bytes(HDR + body)
    files["valid 100 MB .mtx (reference input)"] = valid
    nul = bytearray(HDR + body)
    nul[-2:-1] = b"\x00"  # a NUL after the last entry's last token
    (d / "nul_end.mtx").write_bytes(bytes(nul))
    files["100 MB .mtx, NUL after the last entry"] = d / "nul_end.mtx"
    del nul
    (d / "absurd.mtx").write_bytes(HDR + b"200000000 200000000 1\n1 1 1\n")
    files["header 2e8 x 2e8, 1 entry (60 bytes)"] = d / "absurd.mtx"
    (d / "absurd5.mtx").write_bytes(HDR + b"50000000 50000000 1\n1 1 1\n")
    files["header 5e7 x 5e7, 1 entry"] = d / "absurd5.mtx"
    with gzip.open(d / "comment.mtx.gz", "wb", compresslevel=9) as fh:
        fh.write(HDR + b"%")
        chunk = b"x" * (1 << 24)
        for _ in range(64):  # a 1 GiB comment line
            fh.write(chunk)
        fh.write(b"\n3 3 1\n1 1 1\n")
    files["1 GiB comment line in .mtx.gz"] = d / "comment.mtx.gz"
    with gzip.open(d / "blank.mtx.gz", "wb", compresslevel=9) as fh:
        fh.write(HDR + b"3 3 1\n1 1 1\n")
        chunk = b"\n" * (1 << 24)
        for _ in range(64):  # 1 GiB of blank lines
            fh.write(chunk)
    files["1 GiB of blank lines in .mtx.gz"] = d / "blank.mtx.gz"
    i64 = np.int64
    np.savez(d / "coo_huge.npz", format=b"coo", shape=np.array([2 * 10**9] * 2, i64), row=np.zeros(1, i64),
             col=np.zeros(1, i64), data=np.ones(1))
    files[".npz COO shape 2e9 x 2e9"] = d / "coo_huge.npz"
    np.savez(d / "csr_expand.npz", format=b"csr", shape=np.array([3, 3], i64),
             indptr=np.array([0, 1, 2, 3 * 10**8], i64), indices=np.arange(3, dtype=i64), data=np.ones(3))
    files[".npz CSR indptr expanding to 3e8"] = d / "csr_expand.npz"
    np.savez_compressed(d / "npz_bomb.npz", format=b"csr", shape=np.array([3, 3], i64),
                        indptr=np.array([0, 1, 2, 3], i64), indices=np.zeros(10**9 // 8, i64), data=np.ones(3))
    files[".npz with a 1 GB zero member (compressed 1 MB)"] = d / "npz_bomb.npz"
    os.symlink("/dev/zero", d / "zero.mtx")
    files["symlink to /dev/zero"] = d / "zero.mtx"
    os.mkfifo(d / "fifo.mtx")
    files["FIFO"] = d / "fifo.mtx"
    return files


def part1() -> dict:
    out = {}
    with tempfile.TemporaryDirectory(prefix="reorder-bench-intake-") as td:
        d = Path(td)
        # the files are made in a child, so that this process stays small (a child's peak memory
        # as reported by wait4 starts from its parent's size at fork)
        subprocess.run([sys.executable, __file__, "--make", str(d)], check=True)
        files = {label: d / name for label, name in json.loads((d / "files.json").read_text()).items()}
        code, secs, rss, _ = _measure([sys.executable, "-c", "import sys, scipy.io; scipy.io.mmread(sys.argv[1])",
                                       str(files["valid 100 MB .mtx (reference input)"])])
        base = {"seconds": round(secs, 2), "peak_mib": round(rss / 2**20)}
        print(f"SciPy baseline: scipy.io.mmread of the valid 100 MB file: {secs:.2f} s, {rss / 2**20:.0f} MiB")
        print(f"{'file':<48} {'rc':>3} {'time':>8} {'peak':>9} {'time/SciPy':>10}  message")
        for label, f in files.items():
            size = f.stat().st_size if f.is_file() and not f.is_symlink() else 0
            code, secs, rss, msg = _measure([sys.executable, "-m", "reorder.cli", "stats", str(f)], timeout=120)
            ok = code in (0, 2) and secs <= 10 and rss <= 1 << 30
            out[label] = {"file_bytes": size, "exit": code, "seconds": round(secs, 2), "peak_mib": round(rss / 2**20),
                          "time_vs_scipy_mmread": round(secs / base["seconds"], 2), "meets_target": ok,
                          "message": msg[:160]}
            print(f"{label:<48} {code:>3} {secs:>7.2f}s {rss / 2**20:>6.0f} MiB {secs / base['seconds']:>9.2f}x  "
                  f"{'' if ok else 'MISSED '}{msg[:70]}")
    return {"scipy_mmread_valid_100MB": base, "files": out}


def _mem_child(kind: str, n_side: int, method: str) -> int:
    code = f"""
import resource, sys
import numpy as np, scipy.sparse as sp
from reorder.graph import from_matrix
from reorder.analysis import symbolic_factor
from reorder.orderings import order
small = sp.eye(10, format='csr') + sp.eye(10, k=1, format='csr')
g0 = from_matrix(small + small.T); symbolic_factor(g0, order(g0, {method!r} if {method!r} != 'analysis' else 'natural').perm)
k = {n_side}
def lap(k, stencil):
    T = sp.diags([1.0, 1.0, 1.0], [-1, 0, 1], shape=(k, k))
    I = sp.eye(k)
    if stencil == 27:
        return sp.csr_matrix(sp.kron(sp.kron(T, T), T))
    return sp.csr_matrix(sp.kron(sp.kron(T, I), I) + sp.kron(sp.kron(I, T), I) + sp.kron(sp.kron(I, I), T))
if {kind!r} == 'diag':
    A = sp.eye(k ** 3, format='csr')
else:
    A = lap(k, 7 if {kind!r} == 'p7' else 27)
import gc; gc.collect()
before = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss
g = from_matrix(A)
m = {method!r}
p = order(g, m).perm if m != 'analysis' else np.arange(g.n)
symbolic_factor(g, p)
after = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss
print((after - before) * 1024, A.shape[0], A.nnz)
"""
    p = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, timeout=600)
    if p.returncode:
        return None
    return [int(x) for x in p.stdout.split()]


def part2(side: int) -> dict:
    sys.path.insert(0, str(ROOT))
    from reorder.orderings import available

    res = {}
    print(f"\nmemory per row / per entry (3-D meshes {side}^3, diagonal of the same size; rusage growth)")
    for m in list(available()) + ["analysis"]:
        rows = {}
        for kind in ("diag", "p7", "p27"):
            rows[kind] = _mem_child(kind, side, m)
        if any(v is None for v in rows.values()):
            print(f"  {m:<10} failed")
            continue
        X = np.array([[v[1], v[2]] for v in rows.values()], float)
        y = np.array([max(v[0], 0) for v in rows.values()], float)
        (a, b), *_ = np.linalg.lstsq(X, y, rcond=None)
        worst_row = max(v[0] / v[1] for v in rows.values())
        res[m] = {"bytes_per_row": round(a), "bytes_per_entry": round(b), "peak_bytes": {k: v[0] for k, v in rows.items()},
                  "max_bytes_per_row_all_charged_to_rows": round(worst_row)}
        print(f"  {m:<10} {a:>8.0f} B/row {b:>7.0f} B/entry   (peaks MiB: "
              + ", ".join(f"{k} {v[0] / 2**20:.0f}" for k, v in rows.items()) + ")")
    return res


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    ap.add_argument("--memory", action="store_true", help="also fit memory per row and per entry")
    ap.add_argument("--side", type=int, default=40, help="3-D mesh side for --memory")
    ap.add_argument("--make", type=Path, default=None, help=argparse.SUPPRESS)
    args = ap.parse_args(argv)
    if args.make is not None:
        files = hostile_files(args.make)
        (args.make / "files.json").write_text(json.dumps({k: v.name for k, v in files.items()}))
        return 0
    os.chdir(ROOT)
    doc = {"hostile": part1()}
    if args.memory:
        doc["memory_per_row_entry"] = part2(args.side)
    out = HERE / "results" / "bench_intake.json"
    prev = json.loads(out.read_text()) if out.exists() else {}
    prev.update(doc)
    out.write_text(json.dumps(prev, indent=1) + "\n")
    print(f"\nwrote {out}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
