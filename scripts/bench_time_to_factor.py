"""Time to factor: SciPy's own path against ours, measured in one run; cost model check; ordering speed.

SciPy's path is ``splu(A, permc_spec="MMD_AT_PLUS_A", diag_pivot_thresh=0, options={"SymmetricMode":
True})`` (its own minimum degree, then the factorization). Ours is ``reorder.order()`` on the matrix in
memory (``from_matrix`` included in the time), ``A[p][:, p]`` and the same ``splu`` with
``"NATURAL"``. Each time is the least of ``--repeat`` runs (the machine is shared and noisy).

Sections (each prints ratios against SciPy measured beside them and goes into the JSON file):

* ``cases``: every bundled 2-D/3-D mesh with n ≥ 5000 and generated 7-point 40³ and 48³ grids, for
  the default method and each method of ``--methods``: order + factor over SciPy's path; predicted
  factor seconds (:mod:`reorder.cost`) over measured SuperLU seconds;
* ``many``: one ordering with ``factorizations=K`` (default 100) plus K factorizations against K
  times SciPy's path (which orders each time). The K factorizations are extrapolated from the
  least of ``--repeat`` timed ones, and so is SciPy's: ``K · t``;
* ``speed`` (``--big``): ordering seconds on the 10⁶-row 5-point grid for ``nd-fast``, ``nd`` and
  one-rule minimum degree, with SciPy's RCM time beside them;
* ``degenerate`` (``--degenerate``): every method on a 10⁶-row diagonal matrix, a 10⁵-row dense row
  plus path and a 10⁵-row star (target: each in at most 10 s);
* ``first_use`` (``--first-use``): wall seconds of ``reorder order`` on a bundled 10⁴-row mesh in a
  fresh process with an empty kernel cache and an empty rate cache (a fresh installation: compiles
  the kernels and measures the machine), then of a second run (cached), beside a fresh process that
  imports SciPy and runs SciPy's path on the same file (target: first ≤ 10 s, later ≤ 1 s);
* ``cliffs`` (``--cliffs``): t / (n·log₂ n) for 2-D grids 200² … 1000² and 3-D grids 20³ … 60³ in
  steps of about 1.25× in n (the least of ``--cliff-repeat`` runs per size), and the largest jump
  between neighbours.

Usage::

    python scripts/bench_time_to_factor.py                       # cases + many
    python scripts/bench_time_to_factor.py --big --cliffs         # everything (tens of minutes)
    python scripts/bench_time_to_factor.py --methods mindegree,nd-fast --no-many
    python scripts/bench_time_to_factor.py --no-cases --no-many --first-use --repeat 2

Writes ``scripts/results/bench_time_to_factor.json``.
"""

from __future__ import annotations

import argparse
import json
import math
import time
from pathlib import Path

import numpy as np
import scipy.sparse as sp
from scipy.sparse.csgraph import reverse_cuthill_mckee
from scipy.sparse.linalg import splu

import reorder
from reorder import gallery
from reorder.analysis import symbolic_factor
from reorder.cost import factor_counts, machine_rates, predict_seconds  # noqa: F401
from reorder.graph import from_matrix

TARGET_KINDS = ("grid2d", "grid3d", "fem2d", "fem3d")


def grid(dims) -> sp.csc_matrix:
    """5-point (2-D) / 7-point (3-D) Laplacian, Dirichlet boundary (reorder.gallery)."""
    return sp.csc_matrix(gallery.grid(*dims))


def scipy_path(A):
    return splu(A, permc_spec="MMD_AT_PLUS_A", diag_pivot_thresh=0, options={"SymmetricMode": True})


def natural(B):
    return splu(B, permc_spec="NATURAL", diag_pivot_thresh=0, options={"SymmetricMode": True})


def least(f, repeat):
    best, out = math.inf, None
    for _ in range(max(1, repeat)):
        t0 = time.perf_counter()
        out = f()
        best = min(best, time.perf_counter() - t0)
    return best, out


def cases(min_n, grids):
    from reorder.bundled import manifest, suite_dir
    from reorder.io import read_matrix

    out = []
    d = suite_dir()
    for e in manifest():
        if e.get("kind") in TARGET_KINDS and e.get("n", 0) >= min_n:
            out.append((e["name"], e["kind"], lambda f=d / e["file"]: sp.csc_matrix(read_matrix(f))))
    for k in grids:
        out.append((f"grid3d_7pt_{k}^3", "grid3d", lambda k=k: grid((k, k, k))))
    return out


def ours(A, method, repeat, **options):
    """(ordering seconds, permute seconds, SuperLU seconds, Ordering, graph)."""
    def run():
        g = from_matrix(A)
        return (reorder.order(g, **options) if method is None else reorder.order(g, method, **options)), g

    t_order, (o, g) = least(run, 1 if repeat <= 1 else min(repeat, 2))
    t_perm, B = least(lambda: sp.csc_matrix(A[o.perm][:, o.perm]), 1)
    t_fact, _ = least(lambda: natural(B), repeat)
    return t_order, t_perm, t_fact, o, g


def warm_up(methods):
    A = grid((12, 12))
    g = from_matrix(A)
    for m in methods:
        reorder.order(g) if m == "default" else reorder.order(g, m)
    machine_rates()


def run_cases(args, methods, rates):
    rows = []
    for name, kind, load in cases(args.min_n, args.grids):
        A = load()
        n = A.shape[0]
        t_scipy, _ = least(lambda: scipy_path(A), args.repeat)
        row = {"name": name, "kind": kind, "n": n, "scipy_seconds": t_scipy, "methods": {}}
        line = f"{name:28s} n={n:7d} scipy {t_scipy:7.3f}s |"
        for m in methods:
            t_o, t_p, t_f, o, g = ours(A, None if m == "default" else m, args.repeat)
            sym = symbolic_factor(g, o.perm)
            pred = predict_seconds(factor_counts(sym), rates)
            total = t_o + t_p + t_f
            row["methods"][m] = {"method": o.method, "order_seconds": t_o, "permute_seconds": t_p,
                                 "factor_seconds": t_f, "total_over_scipy": total / t_scipy,
                                 "predicted_factor_seconds": pred, "predicted_over_measured": pred / t_f,
                                 "nnz_factor": int(sym.nnz_factor), "factor_ops": int(sym.factor_ops),
                                 "chosen": o.info.get("chosen")}
            line += f" {m} {total / t_scipy:5.2f}x (o {t_o:.3f} f {t_f:.3f} pred {pred / t_f:4.2f})"
        print(line, flush=True)
        rows.append(row)
    return rows


def run_many(args, rates):
    K = args.factorizations
    rows = []
    for name, kind, load in cases(max(args.min_n, 10_000), args.grids):
        A = load()
        n = A.shape[0]
        t_scipy, _ = least(lambda: scipy_path(A), args.repeat)
        t_o, t_p, t_f, o, g = ours(A, None, args.repeat, factorizations=K)
        sym = symbolic_factor(g, o.perm)
        total = t_o + t_p + K * t_f
        ratio = total / (K * t_scipy)
        rows.append({"name": name, "kind": kind, "n": n, "factorizations": K, "scipy_seconds_each": t_scipy,
                     "order_seconds": t_o, "factor_seconds_each": t_f, "ratio": ratio, "chosen": o.info.get("chosen"),
                     "nnz_factor": int(sym.nnz_factor), "factor_ops": int(sym.factor_ops),
                     "extrapolated": True})
        print(f"many {name:28s} n={n:7d} {K}x scipy {K * t_scipy:8.2f}s ours {total:8.2f}s ratio {ratio:5.2f} "
              f"(order {t_o:.2f}s, {o.info.get('chosen')})", flush=True)
    gm = float(np.exp(np.mean(np.log([r["ratio"] for r in rows])))) if rows else None
    print(f"many: geometric mean {gm:.3f}, worst {max(r['ratio'] for r in rows):.3f}" if rows else "", flush=True)
    return {"rows": rows, "geometric_mean": gm}


def run_speed(args):
    A = grid((1000, 1000))
    g = from_matrix(sp.csr_matrix(A))
    t_rcm, _ = least(lambda: reverse_cuthill_mckee(sp.csr_matrix(A), symmetric_mode=True), 2)
    out = {"n": A.shape[0], "scipy_rcm_seconds": t_rcm}
    for label, method, opts in (("mindegree-one-rule", "mindegree", {"score": "degree"}), ("nd-fast", "nd-fast", {}),
                                ("nd", "nd", {})):
        t0 = time.perf_counter()
        o = reorder.order(from_matrix(sp.csr_matrix(A)), method, **opts)
        t = time.perf_counter() - t0
        nnz = symbolic_factor(g, o.perm).nnz_factor
        out[label] = {"seconds": t, "nnz_factor": int(nnz), "over_rcm": t / t_rcm}
        print(f"10^6 grid {label:20s} {t:6.2f}s (SciPy RCM {t_rcm:.3f}s) nnz(L) {nnz:.3e}", flush=True)
    return out


def degenerate_matrix(kind, n):
    """Diagonal, star (arrow matrix) or a dense row plus a path (tridiagonal + full first row)."""
    if kind == "diagonal":
        return sp.identity(n, format="csr")
    r = np.zeros(n - 1, dtype=np.int64)
    S = sp.csr_matrix((np.ones(n - 1), (r, np.arange(1, n))), shape=(n, n))
    band = [1.0, 1.0, 1.0] if kind == "dense-row-path" else [0.0, 1.0, 0.0]
    return sp.csr_matrix(S + S.T + sp.diags(band, [-1, 0, 1], shape=(n, n)))


def run_degenerate(args):
    out = []
    for kind, n in (("diagonal", 10**6), ("dense-row-path", 10**5), ("star", 10**5)):
        A = degenerate_matrix(kind, n)
        for m in reorder.available():
            t0 = time.perf_counter()
            try:
                o = reorder.order(from_matrix(A), m)
                ok = sorted(o.perm.tolist()) == list(range(n))
                err = None
            except Exception as exc:  # report, do not stop the benchmark
                ok, err = False, f"{type(exc).__name__}: {exc}"
            t = time.perf_counter() - t0
            out.append({"matrix": kind, "n": n, "method": m, "seconds": t, "valid": ok, "error": err})
            print(f"degenerate {kind:15s} n={n:8d} {m:10s} {t:7.2f}s {'ok' if ok else err}", flush=True)
    return out


_SCIPY_PROCESS = """
import sys
import scipy.io, scipy.sparse as sp
from scipy.sparse.linalg import splu
A = sp.csc_matrix(scipy.io.mmread(sys.argv[1]))
splu(A, permc_spec="MMD_AT_PLUS_A", diag_pivot_thresh=0, options={"SymmetricMode": True})
"""


def run_first_use(args):
    """Fresh-process wall times: first ``reorder order`` (empty caches), the second, SciPy's path."""
    import os
    import subprocess
    import sys
    import tempfile

    from reorder.bundled import suite_dir

    path = suite_dir() / args.first_use_matrix

    def wall(cmd, env):
        t0 = time.perf_counter()
        subprocess.run(cmd, env=env, check=True, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
        return time.perf_counter() - t0

    out = {"matrix": path.name}
    with tempfile.TemporaryDirectory() as d:
        env = dict(os.environ, NUMBA_CACHE_DIR=os.path.join(d, "numba"), REORDER_CACHE_DIR=os.path.join(d, "rates"))
        cmd = [sys.executable, "-m", "reorder.cli", "order", str(path), "-o", os.path.join(d, "perm.txt")]
        out["first_seconds"] = wall(cmd, env)
        out["later_seconds"] = min(wall(cmd, env) for _ in range(max(1, args.repeat)))
    out["scipy_process_seconds"] = min(wall([sys.executable, "-c", _SCIPY_PROCESS, str(path)], dict(os.environ))
                                       for _ in range(max(1, args.repeat)))
    print(f"first use {path.name}: first run {out['first_seconds']:.2f}s (target 10 s), later "
          f"{out['later_seconds']:.2f}s (target 1 s); a fresh process running SciPy's path "
          f"{out['scipy_process_seconds']:.2f}s (later / SciPy {out['later_seconds'] / out['scipy_process_seconds']:.2f}x)",
          flush=True)
    return out


def run_cliffs(args):
    out = {}
    lo2, hi2 = (int(x) for x in args.cliff_2d.split(","))
    lo3, hi3 = (int(x) for x in args.cliff_3d.split(","))
    for label, dims in (("2d", [(k, k) for k in _steps(lo2, hi2, 2)] if hi2 else []),
                        ("3d", [(k, k, k) for k in _steps(lo3, hi3, 3)] if hi3 else [])):
        rows = []
        for d in dims:
            A = grid(d)
            n = A.shape[0]
            g = from_matrix(A)
            t, c = math.inf, math.inf
            for _ in range(max(1, args.cliff_repeat)):  # the least of the runs, as everywhere here
                t0, c0 = time.perf_counter(), time.process_time()
                reorder.order(g, args.cliff_method)
                t, c = min(t, time.perf_counter() - t0), min(c, time.process_time() - c0)
            # wall time is what a user waits; CPU time (all threads) hardly moves with other users'
            # load on a shared machine, so its steps show the method's own cliffs
            rows.append({"dims": list(d), "n": n, "seconds": t, "cpu_seconds": c,
                         "us_per_nlogn": 1e6 * t / (n * math.log2(n)), "cpu_us_per_nlogn": 1e6 * c / (n * math.log2(n))})
            print(f"cliff {args.cliff_method} {'x'.join(map(str, d)):>12s} n={n:8d} {t:7.2f}s "
                  f"{rows[-1]['us_per_nlogn']:.3f} us/(n log2 n), CPU {c:7.2f}s {rows[-1]['cpu_us_per_nlogn']:.3f}",
                  flush=True)
        # a cliff either way: the larger of the two ratios between neighbouring sizes
        out[label] = {"rows": rows}
        for key, name in (("us_per_nlogn", "max_jump"), ("cpu_us_per_nlogn", "max_jump_cpu")):
            jumps = [max(b[key] / a[key], a[key] / b[key]) for a, b in zip(rows, rows[1:])]
            out[label][name] = max(jumps) if jumps else None
            if jumps:
                print(f"cliff {label}: largest step {max(jumps):.2f}x ({'wall' if name == 'max_jump' else 'CPU'})",
                      flush=True)
    return out


def _steps(lo, hi, dim):
    """Sides from lo to hi with n growing about 1.25x per step."""
    out, k = [], float(lo)
    while round(k) < hi:
        out.append(int(round(k)))
        k *= 1.25 ** (1 / dim)
    out.append(hi)
    return out


def main():
    ap = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    ap.add_argument("--methods", default="mindegree,nd-fast,nd,auto")
    ap.add_argument("--min-n", type=int, default=5000)
    ap.add_argument("--grids", default="40,48", help="sides of generated 7-point grids ('' for none)")
    ap.add_argument("--repeat", type=int, default=3)
    ap.add_argument("--factorizations", type=int, default=100)
    ap.add_argument("--no-cases", action="store_true")
    ap.add_argument("--no-many", action="store_true")
    ap.add_argument("--big", action="store_true", help="ordering speed on the 10^6-row grid")
    ap.add_argument("--cliffs", action="store_true")
    ap.add_argument("--degenerate", action="store_true", help="every method on diagonal / dense-row / star matrices")
    ap.add_argument("--first-use", action="store_true", help="fresh-process first and later run of reorder order")
    ap.add_argument("--first-use-matrix", default="heatplate_bolts_p1.mtx.gz")
    ap.add_argument("--cliff-method", default="nd")
    ap.add_argument("--cliff-repeat", type=int, default=1,
                    help="runs per size, the least kept (one run's noise is about 10%%, the limit's margin less)")
    ap.add_argument("--cliff-2d", default="200,1000", help="smallest,largest side of the 2-D grids (largest 0: none)")
    ap.add_argument("--cliff-3d", default="20,60", help="smallest,largest side of the 3-D grids (largest 0: none)")
    ap.add_argument("--out", default=str(Path(__file__).parent / "results" / "bench_time_to_factor.json"))
    args = ap.parse_args()
    args.grids = [int(x) for x in args.grids.split(",") if x.strip()]
    methods = ["default"] + [m for m in args.methods.split(",") if m]
    warm_up(methods)
    # this run's rates, measured now: the cached ones may come from a quieter or busier hour
    from reorder import cost

    rates = cost.calibrate()
    cost._RATES = rates  # auto prices its candidates with them too (the cache file is left alone)
    print(f"rates ({rates.source}): {rates}", flush=True)
    result = {"rates": {k: (float(v) if not isinstance(v, str) else v) for k, v in rates.__dict__.items()},
              "repeat": args.repeat}
    if not args.no_cases:
        result["cases"] = run_cases(args, methods, rates)
        preds = [m["predicted_over_measured"] for r in result["cases"] for m in r["methods"].values()]
        inside = sum(1 / 3 <= p <= 3 for p in preds)
        result["prediction_within_3x"] = [inside, len(preds)]
        print(f"cost model: {inside}/{len(preds)} predictions within 3x of measured SuperLU seconds "
              f"(range {min(preds):.2f}-{max(preds):.2f})", flush=True)
    if not args.no_many:
        result["many"] = run_many(args, rates)
    if args.big:
        result["speed"] = run_speed(args)
    if args.degenerate:
        result["degenerate"] = run_degenerate(args)
    if args.first_use:
        result["first_use"] = run_first_use(args)
    if args.cliffs:
        result["cliffs"] = run_cliffs(args)
    out = Path(args.out)
    out.parent.mkdir(parents=True, exist_ok=True)
    tmp = out.with_suffix(".tmp")
    tmp.write_text(json.dumps(result, indent=1))
    tmp.replace(out)
    print(f"wrote {out}")


if __name__ == "__main__":
    main()
