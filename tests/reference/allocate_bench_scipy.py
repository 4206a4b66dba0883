#!/usr/bin/env python3
"""Times scipy's linprog (HiGHS) on the benchmark instances of benches/allocate.rs.

Run `cargo bench --bench allocate` first: it writes every instance to
FURROW_BENCH_DIR (default: <temp dir>/furrow-allocate-bench) as <name>.json and
<name>.returns.f32. This script builds the same full CVaR-constrained LP of
Rockafellar & Uryasev (2000) with sparse matrices, solves it with
linprog(method="highs") several times, checks the optimum against the one
furrow found, and writes <name>.scipy.json with the median wall time and the
scipy version. The LP build time is excluded; only linprog is timed.

Usage: python3 tests/reference/allocate_bench_scipy.py [repeats]
"""

import json
import os
import sys
import tempfile
import time

import numpy as np
import scipy
import scipy.sparse as sp
from scipy.optimize import linprog

DIR = os.environ.get("FURROW_BENCH_DIR", os.path.join(tempfile.gettempdir(), "furrow-allocate-bench"))
CASES = ["t30_s10000", "t300_s5000", "t30_s100000"]


def load(name):
    with open(os.path.join(DIR, f"{name}.json")) as f:
        meta = json.load(f)
    n, s = len(meta["ids"]), meta["scenarios"]
    r = np.fromfile(os.path.join(DIR, f"{name}.returns.f32"), dtype="<f4").astype(np.float64)
    return meta, r.reshape(s, n)


def full_lp(meta, R):
    """Columns [x (n), eta, z (S)]; maximise mean return as minimise -mean."""
    s, n = R.shape
    q, limit = meta["tail_level"], meta["max_tail_loss"]
    rows = [sp.csr_matrix(np.concatenate([meta["costs"], np.zeros(1 + s)])[None, :])]
    rhs = [meta["budget"]]
    for i, j in enumerate(meta["requires"]):
        if j is not None:
            r = np.zeros(n + 1 + s)
            r[i], r[j] = 1.0, -1.0
            rows.append(sp.csr_matrix(r[None, :]))
            rhs.append(0.0)
    cvar = np.concatenate([np.zeros(n), [1.0], np.full(s, 1.0 / ((1.0 - q) * s))])
    rows.append(sp.csr_matrix(cvar[None, :]))
    rhs.append(limit)
    scen = sp.hstack([sp.csr_matrix(-R), sp.csr_matrix(-np.ones((s, 1))), -sp.identity(s, format="csr")])
    A = sp.vstack(rows + [scen], format="csr")
    b = np.concatenate([rhs, np.zeros(s)])
    c = np.concatenate([-R.mean(axis=0), np.zeros(1 + s)])
    bounds = list(zip(meta["min_fraction"], meta["max_fraction"])) + [(None, None)] + [(0, None)] * s
    return c, A, b, bounds


def main():
    repeats = int(sys.argv[1]) if len(sys.argv) > 1 else 3
    for name in CASES:
        meta, R = load(name)
        c, A, b, bounds = full_lp(meta, R)
        times, opt = [], None
        for _ in range(repeats):
            t0 = time.perf_counter()
            res = linprog(c, A_ub=A, b_ub=b, bounds=bounds, method="highs")
            times.append(time.perf_counter() - t0)
            assert res.status == 0, res.message
            opt = -res.fun
        rel = abs(opt - meta["furrow_optimum"]) / max(1.0, abs(opt))
        out = {
            "name": name, "median_seconds": float(np.median(times)), "times": times,
            "scipy_optimum": opt, "furrow_optimum": meta["furrow_optimum"], "relative_difference": rel,
            "scipy_version": scipy.__version__, "numpy_version": np.__version__,
            "solver": "scipy.optimize.linprog(method='highs'), full LP",
        }
        with open(os.path.join(DIR, f"{name}.scipy.json"), "w") as f:
            json.dump(out, f, indent=1)
        print(f"{name}: median {out['median_seconds']:.3f} s over {repeats}; optimum {opt:.6f} "
              f"(furrow {meta['furrow_optimum']:.6f}, rel diff {rel:.1e})")


if __name__ == "__main__":
    main()
