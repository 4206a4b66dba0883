#!/usr/bin/env python3
"""Reference forecasts for the baseline's Holt / Holt-Winters recursions.

Runs statsmodels' ExponentialSmoothing with fixed smoothing parameters and
initialization_method='known', the initial states set by the baseline's
Init::Simple formulas (written out again below from the issue's text:
Holt: l0 = y_1, b0 = y_2 - y_1; Holt-Winters: l0 = mean of the first
season, b0 = (mean of the second season - mean of the first) / m,
s = y_i - l0 or y_i / l0 for the first season), on the monthly El Nino
sea-surface-temperature dataset that statsmodels ships
(statsmodels.datasets.elnino, NOAA ERSST V3B, Nino 1+2), flattened to one
monthly series.

statsmodels 0.15.0 takes the seasonal index of step h = m (and 2m, ...)
from one season too early (upstream issue 9538, fixed by PR 10230). So the
script also runs the FPP3 component-form recursion written out in plain
Python and records, per case, the steps where the two disagree; the Rust
test compares statsmodels everywhere else and the plain recursion at those
steps, and checks that they are only multiples of m.

Writes tests/fixtures/baseline/statsmodels_holt_winters.json.
Usage: python3 tests/reference/baseline_statsmodels.py
"""

import json
import os

import numpy as np
import statsmodels
import statsmodels.api as sm
from statsmodels.tsa.holtwinters import ExponentialSmoothing

M = 12
H = 24
HERE = os.path.dirname(os.path.abspath(__file__))
OUT = os.path.join(HERE, "..", "fixtures", "baseline", "statsmodels_holt_winters.json")


def elnino_monthly():
    data = sm.datasets.elnino.load_pandas().data
    months = ["JAN", "FEB", "MAR", "APR", "MAY", "JUN", "JUL", "AUG", "SEP", "OCT", "NOV", "DEC"]
    return [float(v) for v in data[months].to_numpy().ravel()]


def simple_init(y, seasonal):
    if seasonal is None:
        return y[0], y[1] - y[0], []
    l0 = sum(y[:M]) / M
    b0 = (sum(y[M : 2 * M]) / M - l0) / M
    if seasonal == "add":
        s = [v - l0 for v in y[:M]]
    else:
        s = [v / l0 for v in y[:M]]
    return l0, b0, s


def plain_recursion(y, seasonal, a, b, g, phi, l0, b0, s0, h):
    """FPP3 (3rd ed.) section 8.3 component form, written out independently."""
    lvl, trd, s = l0, b0, list(s0)
    fitted = []
    for t, v in enumerate(y):
        base = lvl + phi * trd
        j = t % M
        if seasonal is None:
            pred = base
            new_l = a * v + (1 - a) * base
        elif seasonal == "add":
            pred = base + s[j]
            new_l = a * (v - s[j]) + (1 - a) * base
            s[j] = g * (v - base) + (1 - g) * s[j]
        else:
            pred = base * s[j]
            new_l = a * v / s[j] + (1 - a) * base
            s[j] = g * v / base + (1 - g) * s[j]
        trd = b * (new_l - lvl) + (1 - b) * phi * trd
        lvl = new_l
        fitted.append(pred)
    out = []
    phi_h = 0.0
    for k in range(1, h + 1):
        phi_h += phi**k
        j = (len(y) + k - 1) % M
        trended = lvl + phi_h * trd
        if seasonal is None:
            out.append(trended)
        elif seasonal == "add":
            out.append(trended + s[j])
        else:
            out.append(trended * s[j])
    return fitted, out


def run_case(name, y, seasonal, damped, a, b, g, phi):
    l0, b0, s0 = simple_init(y, seasonal)
    kw = dict(trend="add", damped_trend=damped, initialization_method="known",
              initial_level=l0, initial_trend=b0)
    if seasonal is not None:
        kw.update(seasonal=seasonal, seasonal_periods=M, initial_seasonal=np.array(s0))
    model = ExponentialSmoothing(np.array(y), **kw)
    fit_kw = dict(smoothing_level=a, smoothing_trend=b, optimized=False)
    if seasonal is not None:
        fit_kw["smoothing_seasonal"] = g
    if damped:
        fit_kw["damping_trend"] = phi
    res = model.fit(**fit_kw)
    sm_fc = [float(v) for v in res.forecast(H)]
    sm_fitted = [float(v) for v in res.fittedvalues]
    use_phi = phi if damped else 1.0
    plain_fitted, plain_fc = plain_recursion(y, seasonal, a, b, g if seasonal else 0.0, use_phi, l0, b0, s0, H)
    differs = [k + 1 for k in range(H) if abs(sm_fc[k] - plain_fc[k]) > 1e-9 * abs(plain_fc[k])]
    fitted_gap = max(abs(u - v) / abs(v) for u, v in zip(sm_fitted, plain_fitted))
    method = {None: "holt", "add": "holt-winters-additive", "mul": "holt-winters-multiplicative"}[seasonal]
    return {
        "name": name, "method": method, "damped": damped, "months": len(y),
        "alpha": a, "beta": b, "gamma": g if seasonal else None, "phi": phi if damped else None,
        "l0": l0, "b0": b0, "s0": s0,
        "statsmodels_forecast": sm_fc, "statsmodels_fitted": sm_fitted,
        "plain_recursion_forecast": plain_fc,
        "statsmodels_differs_at_steps": differs,
        "fitted_max_relative_gap_statsmodels_vs_plain": fitted_gap,
    }


def main():
    series = elnino_monthly()
    cases = []
    for months in (36, 60):
        y = series[:months]
        for seasonal in (None, "add", "mul"):
            for damped in (False, True):
                tag = {None: "holt", "add": "hw_add", "mul": "hw_mul"}[seasonal]
                name = f"elnino{months}_{tag}{'_damped' if damped else ''}"
                cases.append(run_case(name, y, seasonal, damped, 0.4, 0.15, 0.3, 0.9))
    out = {
        "source": "statsmodels.tsa.holtwinters.ExponentialSmoothing, initialization_method='known', "
                  "optimized=False; data: statsmodels.datasets.elnino (NOAA ERSST V3B Nino 1+2), "
                  "months JAN..DEC of each year flattened, first 36 and 60 months",
        "statsmodels_version": statsmodels.__version__,
        "numpy_version": np.__version__,
        "period": M,
        "horizon": H,
        "series": series[:60],
        "cases": cases,
    }
    with open(OUT, "w") as f:
        json.dump(out, f, indent=1)
        f.write("\n")
    for c in cases:
        print(c["name"], "differs at", c["statsmodels_differs_at_steps"],
              "fitted gap", c["fitted_max_relative_gap_statsmodels_vs_plain"])


if __name__ == "__main__":
    main()
