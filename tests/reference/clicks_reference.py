"""Reference values for the furrow clicks module tests.

Writes tests/fixtures/clicks/reference.json from independent libraries:
- scikit-learn IsotonicRegression (weighted, decreasing) for pool-adjacent-violators;
- SciPy distributions (beta, triang, lognorm, norm) for quantiles and moments of
  the Beta, PERT (scaled Beta), triangular and lognormal samplers;
- statsmodels seasonal_decompose (multiplicative, period 12) for seasonal indices.

Run from the crate root:  python3 tests/reference/clicks_reference.py
Needs: pip install scipy statsmodels scikit-learn
"""

import json
import math
import os

import numpy as np
import scipy
import sklearn
import statsmodels
from scipy import stats
from sklearn.isotonic import IsotonicRegression
from statsmodels.tsa.seasonal import seasonal_decompose

OUT = os.path.join(os.path.dirname(__file__), "..", "fixtures", "clicks", "reference.json")
PROBS = [0.01, 0.1, 0.25, 0.5, 0.75, 0.9, 0.99]


def isotonic_cases():
    rng = np.random.default_rng(20240607)
    cases = []
    for n in (5, 12, 23):
        y = np.sort(rng.uniform(0.0, 0.3, n))[::-1] + rng.normal(0.0, 0.04, n)
        w = rng.uniform(1.0, 500.0, n)
        x = np.arange(1, n + 1, dtype=float)
        fit = IsotonicRegression(increasing=False).fit(x, y, sample_weight=w)
        cases.append({"values": y.tolist(), "weights": w.tolist(),
                      "fitted": fit.predict(x).tolist()})
    return cases


def beta_cases():
    out = []
    for a, b in [(3.0, 99.0), (2.0, 5.0), (0.7, 1.8), (41.0, 1961.0)]:
        d = stats.beta(a, b)
        out.append({"alpha": a, "beta": b, "mean": d.mean(), "variance": d.var(),
                    "probs": PROBS, "quantiles": [d.ppf(p) for p in PROBS]})
    return out


def pert_cases():
    out = []
    for lo, mode, hi, lam in [(0.0, 3.0, 10.0, 4.0), (2.0, 2.0, 8.0, 4.0), (1.0, 6.5, 7.0, 3.0)]:
        a = 1.0 + lam * (mode - lo) / (hi - lo)
        b = 1.0 + lam * (hi - mode) / (hi - lo)
        d = stats.beta(a, b, loc=lo, scale=hi - lo)
        out.append({"min": lo, "mode": mode, "max": hi, "lambda": lam, "mean": d.mean(),
                    "variance": d.var(), "probs": PROBS, "quantiles": [d.ppf(p) for p in PROBS]})
    return out


def triangular_cases():
    out = []
    for lo, mode, hi in [(0.0, 3.0, 10.0), (2.0, 2.0, 8.0), (-1.0, 4.0, 4.0)]:
        d = stats.triang((mode - lo) / (hi - lo), loc=lo, scale=hi - lo)
        out.append({"min": lo, "mode": mode, "max": hi, "mean": d.mean(), "variance": d.var(),
                    "probs": PROBS, "quantiles": [d.ppf(p) for p in PROBS]})
    return out


def lognormal_cases():
    out = []
    for mean, sd in [(50.0, 20.0), (1.0, 0.1), (0.97, 0.05), (120.0, 300.0)]:
        s2 = math.log(1.0 + (sd / mean) ** 2)
        mu = math.log(mean) - s2 / 2.0
        d = stats.lognorm(s=math.sqrt(s2), scale=math.exp(mu))
        out.append({"mean": mean, "sd": sd, "mu": mu, "sigma": math.sqrt(s2),
                    "scipy_mean": d.mean(), "scipy_variance": d.var(),
                    "probs": PROBS, "quantiles": [d.ppf(p) for p in PROBS]})
    return out


def seasonal_case():
    rng = np.random.default_rng(7)
    n, first_month = 36, 4  # starts in April
    t = np.arange(n)
    cal = (first_month - 1 + t) % 12
    shape = 1.0 + 0.3 * np.sin(2 * np.pi * cal / 12.0) + 0.1 * (cal == 11)
    y = (1000.0 + 15.0 * t) * shape * rng.lognormal(0.0, 0.03, n)
    res = seasonal_decompose(y, model="multiplicative", period=12)
    jan_first = [None] * 12
    for i in range(12):
        jan_first[cal[i]] = float(res.seasonal[i])
    return {"values": y.tolist(), "first_month": first_month, "indices_jan_first": jan_first}


def main():
    data = {
        "versions": {"numpy": np.__version__, "scipy": scipy.__version__,
                     "scikit-learn": sklearn.__version__, "statsmodels": statsmodels.__version__},
        "normal_quantiles": {"probs": PROBS, "quantiles": [stats.norm.ppf(p) for p in PROBS]},
        "isotonic": isotonic_cases(),
        "beta": beta_cases(),
        "pert": pert_cases(),
        "triangular": triangular_cases(),
        "lognormal": lognormal_cases(),
        "seasonal": seasonal_case(),
    }
    with open(OUT, "w") as f:
        json.dump(data, f, indent=1)
        f.write("\n")


if __name__ == "__main__":
    main()
