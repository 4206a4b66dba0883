#!/usr/bin/env python3
"""Reference optima for the allocation LP, computed with scipy's linprog (HiGHS).

Writes tests/fixtures/allocate/scipy_<name>.json, one file per random tiered
instance, with the problem data, the optimal expected net return of the full
Rockafellar & Uryasev (2000) CVaR-constrained LP, the minimum achievable CVaR,
and HiGHS's duals of the budget and CVaR rows. The scipy and numpy versions are
recorded in every file.

Returns are rounded to multiples of 1/16 with magnitudes below 2^19, so every
value is exactly representable as a 32-bit float and Rust reads exactly the
numbers scipy solved.

Run from the crate root:  python3 tests/reference/allocate_scipy.py
"""

import json
import os
import sys

import numpy as np
import scipy
from scipy.optimize import linprog

OUT = os.path.join(os.path.dirname(__file__), "..", "fixtures", "allocate")


def instance(seed, clusters, scenarios, tiers=3):
    """Clusters of tiers: diminishing, correlated (site and cluster factors),
    skewed (zero gain with some probability) net returns; lognormal costs."""
    rng = np.random.default_rng(seed)
    base = 1000.0 * np.exp(0.5 * rng.standard_normal(clusters))
    mult = 1.1 + 1.1 * rng.random(clusters)
    fail = 0.1 + 0.25 * rng.random(clusters)
    site = rng.standard_normal(scenarios)
    exe = rng.standard_normal((scenarios, clusters))
    works = rng.random((scenarios, clusters)) >= fail
    shock = np.exp(0.6 * (0.5 * site[:, None] + np.sqrt(0.75) * exe) - 0.18)
    n = clusters * tiers
    costs = np.zeros(n)
    returns = np.zeros((scenarios, n))
    for c in range(clusters):
        for t in range(tiers):
            cost = base[c] * 0.8 ** t
            mean_gain = cost * mult[c] * 0.8 ** t / (1.0 - fail[c])
            costs[c * tiers + t] = round(cost, 2)
            returns[:, c * tiers + t] = np.where(works[:, c], mean_gain * shock[:, c], 0.0) - cost
    returns = np.round(returns * 16.0) / 16.0
    assert np.all(np.abs(returns) < 2 ** 19)
    requires = [None if i % tiers == 0 else i - 1 for i in range(n)]
    return {
        "ids": [f"c{i // tiers + 1}/t{i % tiers + 1}" for i in range(n)],
        "costs": costs.tolist(),
        "min_fraction": [0.0] * n,
        "max_fraction": [1.0] * n,
        "requires": requires,
        "scenarios": scenarios,
        "returns": returns,
        "budget": round(0.4 * costs.sum(), 2),
        "tail_level": 0.9,
        "weights": None,
    }


def weights_of(p):
    s = p["scenarios"]
    return np.full(s, 1.0 / s) if p["weights"] is None else np.asarray(p["weights"])


def base_rows(p):
    """Budget row and tier-order rows over the x columns."""
    n = len(p["ids"])
    rows, rhs = [np.asarray(p["costs"])], [p["budget"]]
    for i, j in enumerate(p["requires"]):
        if j is not None:
            r = np.zeros(n)
            r[i], r[j] = 1.0, -1.0
            rows.append(r)
            rhs.append(0.0)
    return np.array(rows), np.array(rhs)


def solve(p, limit, minimise_cvar=False):
    """The full LP over columns [x (n), eta, z (S)]."""
    n, s = len(p["ids"]), p["scenarios"]
    R, w, q = p["returns"], weights_of(p), p["tail_level"]
    B, b = base_rows(p)
    nb = B.shape[0]
    A_base = np.hstack([B, np.zeros((nb, 1 + s))])
    scen = np.hstack([-R, -np.ones((s, 1)), -np.eye(s)])
    cvar_row = np.concatenate([np.zeros(n), [1.0], w / (1.0 - q)])
    if minimise_cvar:
        c = np.concatenate([np.zeros(n), [1.0], w / (1.0 - q)])
        A, rhs = np.vstack([A_base, scen]), np.concatenate([b, np.zeros(s)])
    else:
        c = np.concatenate([-(w @ R), np.zeros(1 + s)])
        A = np.vstack([A_base, cvar_row[None, :], scen])
        rhs = np.concatenate([b, [limit], np.zeros(s)])
    bounds = list(zip(p["min_fraction"], p["max_fraction"])) + [(None, None)] + [(0, None)] * s
    res = linprog(c, A_ub=A, b_ub=rhs, bounds=bounds, method="highs")
    return res, nb


def cvar(losses, w, q):
    order = np.argsort(losses, kind="stable")
    cum = np.cumsum(w[order])
    k = int(np.searchsorted(cum, q * cum[-1] - 1e-12 * cum[-1]))
    var = losses[order[k]]
    return var + np.sum(w * np.maximum(losses - var, 0.0)) / ((1.0 - q) * cum[-1])


def frontier_ends(p):
    """Smallest achievable CVaR and the unconstrained optimum's CVaR."""
    lo, _ = solve(p, None, minimise_cvar=True)
    free, _ = solve(p, 1e12)
    n = len(p["ids"])
    hi = cvar(-(p["returns"] @ free.x[:n]), weights_of(p), p["tail_level"])
    return lo.fun, hi


def record(name, p, share=None, limit=None):
    lo, hi = frontier_ends(p)
    if limit is None:
        limit = None if share is None else lo + share * (hi - lo)
    out = dict(p)
    out["returns"] = p["returns"].tolist()
    out["max_tail_loss"] = limit
    out["min_tail_loss"] = lo
    out["unconstrained_tail_loss"] = hi
    out["scipy_version"] = scipy.__version__
    out["numpy_version"] = np.__version__
    out["solver"] = "scipy.optimize.linprog(method='highs')"
    if limit is not None and limit < lo:
        out["expected"] = "infeasible"
    else:
        res, nb = solve(p, 1e12 if limit is None else limit)
        assert res.status == 0, res.message
        n = len(p["ids"])
        out["expected"] = "optimal"
        out["optimum"] = -res.fun
        out["x"] = res.x[:n].tolist()
        # linprog minimises -return; its marginals are d(-return)/d(rhs).
        out["budget_dual"] = -res.ineqlin.marginals[0]
        out["risk_dual"] = -res.ineqlin.marginals[nb] if limit is not None else 0.0
    with open(os.path.join(OUT, f"scipy_{name}.json"), "w") as f:
        json.dump(out, f, separators=(",", ":"))
    print(name, out["expected"], out.get("optimum"), "limit", limit, "range", lo, hi, file=sys.stderr)


def main():
    os.makedirs(OUT, exist_ok=True)
    record("small_free", instance(11, 2, 200), share=None)
    record("small_binding", instance(12, 2, 200), share=0.5)
    record("small_loose", instance(13, 3, 150), share=1.5)
    record("medium_binding", instance(21, 8, 700), share=0.4)
    # Budget and CVaR both binding: a near-unconstrained limit on a small budget.
    p = instance(22, 8, 600)
    p["budget"] = round(0.15 * sum(p["costs"]), 2)
    record("medium_budget_binding", p, share=0.95)
    # Must-fund minimums, caps and unequal scenario weights.
    p = instance(23, 6, 500)
    p["min_fraction"][0] = 0.5
    p["min_fraction"][7] = 0.25
    p["max_fraction"][3] = 0.6
    p["max_fraction"][10] = 0.3
    wr = np.random.default_rng(99).random(p["scenarios"]) + 0.5
    p["weights"] = (wr / wr.sum()).tolist()
    record("medium_bounds_weighted", p, share=0.3)
    # A must-fund minimum with a limit below the smallest achievable CVaR.
    p = instance(24, 3, 300)
    p["min_fraction"][0] = 1.0
    p["min_fraction"][3] = 1.0
    lo, _ = frontier_ends(p)
    record("infeasible", p, limit=lo - 0.25 * abs(lo) - 1.0)


if __name__ == "__main__":
    main()
