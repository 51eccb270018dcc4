"""From permutation to solution: OrderedFactor against SciPy in the same run.

Sections (ratios against SciPy measured beside them; everything goes into the JSON file):

* ``solve``: every bundled SPD 2-D/3-D mesh with n ≥ 10⁴, for each method of ``--methods``: one
  OrderedFactor (order, factor, solve of ``b = A x*``), its relative residual (target ≤ 1e-10), the
  difference to SciPy's ``spsolve`` solution, and SuperLU's nnz(L) against the symbolic Cholesky
  count (documented relation: SuperLU's L, unit diagonal included, holds at most the symbolic count,
  exactly it when no entry of L is exactly zero);
* ``sequence``: the same meshes, ``--count`` matrices (default 20) with one pattern and varying
  coefficients, ``A_k = S_k A S_k + c_k diag(A)`` (S_k diagonal with entries in [0.7, 1.4],
  c_k in [0, 0.5]: SPD, same pattern), each solved once: one ordering plus every refactorization and
  solve against ``spsolve(A_k, b_k)`` called on each (SciPy's default path: its own column ordering
  and partial pivoting, from scratch each time). Target: ≤ 0.5× on every 3-D mesh with n ≥ 10⁴.

The kernels are compiled and loaded before any clock (``reorder.warmup.warm``), as ``compare`` does:
a process that factors a sequence pays that once. Matrices are generated in memory (no file reading
in either path). The default method is ``auto``; ``nd-fast`` and ``mindegree`` are reported beside it.

Usage::

    python scripts/bench_factor.py                      # solve + sequence, methods auto,nd-fast,mindegree
    python scripts/bench_factor.py --methods nd-fast --count 20 --only heatsink

Writes ``scripts/results/bench_factor.json``.
"""

from __future__ import annotations

import argparse
import json
import platform
import time
import warnings
from pathlib import Path

import numpy as np
import scipy
import scipy.sparse as sp
from scipy.sparse.linalg import spsolve

import reorder
from reorder.bundled import manifest, suite_dir
from reorder.factor import OrderedFactor
from reorder.sequence import solve_sequence

KINDS = ("grid2d", "grid3d", "fem2d", "fem3d")


def meshes(only: str | None):
    for e in manifest():
        if e["kind"] in KINDS and e["n"] >= 10_000 and e["spd"] and (only is None or only in e["name"]):
            yield e


def sequence_of(A: sp.csr_matrix, count: int, seed: int) -> list[sp.csr_matrix]:
    rng = np.random.default_rng(seed)
    D = sp.diags(A.diagonal())
    out = []
    for _ in range(count):
        S = sp.diags(rng.uniform(0.7, 1.4, A.shape[0]))
        M = (S @ A @ S + rng.uniform(0.0, 0.5) * D).tocsr()
        M.sort_indices()
        out.append(M)
    return out


def solve_section(e, A, methods) -> list[dict]:
    n = A.shape[0]
    x_true = np.random.default_rng(1).standard_normal(n)
    b = A @ x_true
    t0 = time.perf_counter()
    xs = spsolve(A, b)
    t_spsolve = time.perf_counter() - t0
    rows = []
    for m in methods:
        with warnings.catch_warnings(record=True) as caught:
            warnings.simplefilter("always")
            F = OrderedFactor(A, m)
            x = F.solve(b)
        r = F.report()
        row = {"matrix": e["name"], "kind": e["kind"], "n": n, "method": m,
               "order_seconds": r["order_seconds"], "factor_seconds": r["factor_seconds"],
               "solve_seconds": r["solve_seconds"], "residual": max(r["residuals"]),
               "difference_to_spsolve": float(np.linalg.norm(x - xs) / np.linalg.norm(xs)),
               "error": float(np.linalg.norm(x - x_true) / np.linalg.norm(x_true)),
               "nnz_l": r["nnz_l"], "symbolic_nnz_l": r["predicted_nnz_l"],
               "nnz_l_over_symbolic": r["nnz_l"] / r["predicted_nnz_l"],
               "relation_holds": r["nnz_l"] <= r["predicted_nnz_l"],
               "predicted_factor_seconds": r["predicted_factor_seconds"], "pivoting": r["pivoting"],
               "warnings": [str(w.message) for w in caught], "spsolve_seconds": t_spsolve,
               "residual_target_met": max(r["residuals"]) <= 1e-10}
        rows.append(row)
        print(f"  solve {e['name']:<28} {m:<9} order {row['order_seconds']:6.3f} s factor {row['factor_seconds']:.3f} s "
              f"residual {row['residual']:.1e}  nnz(L) {row['nnz_l']:,} / symbolic {row['symbolic_nnz_l']:,} "
              f"= {row['nnz_l_over_symbolic']:.4f}  (spsolve {t_spsolve:.3f} s)", flush=True)
    return rows


def sequence_section(e, A, methods, count: int) -> list[dict]:
    mats = sequence_of(A, count, seed=2)
    rows = []
    st = None
    base_rows = None
    for m in methods:
        out = solve_sequence(mats, m, seed=0, baseline=st is None)
        if st is None:
            st = out["spsolve_total_seconds"]
            base_rows = out["rows"]
        row = {"matrix": e["name"], "kind": e["kind"], "n": A.shape[0], "method": m, "count": count,
               "order_seconds": out["order_seconds"],
               "factor_seconds_total": sum(r["factor_seconds"] for r in out["rows"]),
               "solve_seconds_total": sum(r["solve_seconds"] for r in out["rows"]),
               "total_seconds": out["total_seconds"], "spsolve_total_seconds": st,
               "ratio": out["total_seconds"] / st, "max_residual": out["max_residual"],
               "max_spsolve_residual": max(r["spsolve_residual"] for r in base_rows),
               "max_difference_to_spsolve": max(r["difference"] for r in base_rows) if m == methods[0] else None,
               "pivoting": out["pivoting"]}
        row["target_met"] = row["ratio"] <= 0.5 if e["kind"].endswith("3d") else None
        rows.append(row)
        print(f"  sequence {e['name']:<25} {m:<9} {count} x: order {row['order_seconds']:.3f} s + factor "
              f"{row['factor_seconds_total']:.3f} s + solve {row['solve_seconds_total']:.3f} s = "
              f"{row['total_seconds']:.3f} s vs spsolve {st:.3f} s -> {row['ratio']:.3f}x", flush=True)
    return rows


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--methods", default="auto,nd-fast,mindegree")
    ap.add_argument("--count", type=int, default=20)
    ap.add_argument("--only", default=None, help="only meshes whose name contains this text")
    ap.add_argument("--no-sequence", action="store_true")
    ap.add_argument("--out", default=str(Path(__file__).parent / "results" / "bench_factor.json"))
    args = ap.parse_args()
    methods = [m.strip() for m in args.methods.split(",") if m.strip()]
    from reorder.warmup import warm

    t0 = time.perf_counter()
    warm(methods)
    print(f"kernels loaded in {time.perf_counter() - t0:.1f} s (outside every clock)", flush=True)
    solve_rows, seq_rows = [], []
    for e in meshes(args.only):
        A = reorder.read_matrix(suite_dir() / e["file"]).tocsr()
        A.sort_indices()
        solve_rows += solve_section(e, A, methods)
        if not args.no_sequence:
            seq_rows += sequence_section(e, A, methods, args.count)
    summary = {}
    for m in methods:
        s3 = [r for r in seq_rows if r["method"] == m and r["kind"].endswith("3d")]
        s2 = [r for r in seq_rows if r["method"] == m and r["kind"].endswith("2d")]
        so = [r for r in solve_rows if r["method"] == m]
        summary[m] = {
            "max_residual": max((r["residual"] for r in so), default=None),
            "fill_relation_holds_everywhere": all(r["relation_holds"] for r in so),
            "nnz_l_over_symbolic_range": [min((r["nnz_l_over_symbolic"] for r in so), default=None),
                                          max((r["nnz_l_over_symbolic"] for r in so), default=None)],
            "sequence_ratio_3d": {r["matrix"]: round(r["ratio"], 3) for r in s3},
            "sequence_ratio_2d": {r["matrix"]: round(r["ratio"], 3) for r in s2},
            "sequence_target_3d_met": all(r["ratio"] <= 0.5 for r in s3) if s3 else None,
        }
    print(json.dumps(summary, indent=1))
    payload = {"machine": platform.machine(), "python": platform.python_version(), "scipy": scipy.__version__,
               "numpy": np.__version__, "when": time.strftime("%Y-%m-%d %H:%M:%S"), "methods": methods,
               "count": args.count, "solve": solve_rows, "sequence": seq_rows, "summary": summary}
    Path(args.out).parent.mkdir(parents=True, exist_ok=True)
    tmp = Path(args.out).with_suffix(".tmp")
    tmp.write_text(json.dumps(payload, indent=1) + "\n")
    tmp.replace(args.out)
    print(f"wrote {args.out}")


if __name__ == "__main__":
    main()
