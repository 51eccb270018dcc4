"""Benchmark of the symbolic analysis (etree, column counts, bandwidth, profile) on 2-D 5-point grids.

Target (foundation issue): a 10^6-row grid in natural order (about 10^9 factor nonzeros) analysed in a
few seconds. Prints the time of ``reorder.analyse`` and of the whole ``reorder stats`` command on an
``.npz`` file, next to SciPy's reverse Cuthill–McKee on the same matrix measured in the same run (a
compiled near-linear graph pass, as a yardstick), and checks the count against the closed form
k^3 + k - 1 for the natural order (derived in tests/test_analysis.py).

Usage: python scripts/bench_analysis.py [--sizes 250,500,1000]
"""

from __future__ import annotations

import argparse
import json
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import scipy.sparse as sp
from scipy.sparse.csgraph import reverse_cuthill_mckee

from reorder.analysis import analyse
from reorder.gallery import grid2d
from reorder.graph import from_matrix


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--sizes", default="250,500,1000", help="grid sides k (n = k^2)")
    args = ap.parse_args()
    analyse(grid2d(4))  # compile / load kernels
    rows = []
    print(f"{'k':>6} {'n':>9} {'nnz(L)':>14} {'analyse s':>10} {'stats CLI s':>12} {'SciPy RCM s':>12} {'ratio':>7}")
    for k in map(int, args.sizes.split(",")):
        A = grid2d(k)
        g = from_matrix(A)
        t0 = time.perf_counter()
        s = analyse(A, graph=g)
        t_an = time.perf_counter() - t0
        assert s.nnz_factor == k**3 + k - 1
        t0 = time.perf_counter()
        reverse_cuthill_mckee(A, symmetric_mode=True)
        t_rcm = time.perf_counter() - t0
        with tempfile.TemporaryDirectory() as d:
            f = Path(d) / "grid.npz"
            sp.save_npz(f, A)
            t0 = time.perf_counter()
            subprocess.run([sys.executable, "-m", "reorder.cli", "stats", str(f), "--json"], check=True,
                           capture_output=True)
            t_cli = time.perf_counter() - t0
        rows.append(dict(k=k, n=k * k, nnz_factor=s.nnz_factor, analyse_seconds=t_an, stats_cli_seconds=t_cli,
                         scipy_rcm_seconds=t_rcm, ratio_analyse_to_rcm=t_an / t_rcm))
        print(f"{k:>6} {k*k:>9} {s.nnz_factor:>14} {t_an:>10.3f} {t_cli:>12.3f} {t_rcm:>12.3f} {t_an / t_rcm:>7.2f}")
    out = Path(__file__).parent / "results" / "bench_analysis.json"
    out.parent.mkdir(exist_ok=True)
    out.write_text(json.dumps(rows, indent=1))
    print(f"wrote {out}")


if __name__ == "__main__":
    main()
