#!/usr/bin/env python3
"""Reference forecasts for tracking's baseline state update (issue 14).

Tracking updates the fitted exponential smoothing baseline with the months
observed since the forecast was made, keeping the fitted parameters and
initial states (no refit), and forecasts the rest from the updated states.
The reference: statsmodels' ExponentialSmoothing with the same fixed
smoothing parameters and initialization_method='known' (initial states from
the baseline's Init::Simple formulas, written out again below), fitted with
optimized=False first on the history, then on the history with the new
observations appended. With every parameter and initial state fixed, the
second fit is exactly "append the observations without refitting".

Data: the monthly El Nino sea-surface-temperature dataset that statsmodels
ships (statsmodels.datasets.elnino, NOAA ERSST V3B, Nino 1+2), flattened to
one monthly series: 48 months of history, then 4 observed months, then a
forecast of 8 months (below the season length: statsmodels 0.15.0 takes
the seasonal index of step h = m one season too early, upstream issue
9538, see baseline_statsmodels.py).

Writes tests/fixtures/track/statsmodels_state_update.json.
Usage: pip install statsmodels; python3 tests/reference/track_update_statsmodels.py
"""

import json
import os

import numpy as np
import statsmodels
import statsmodels.api as sm
from statsmodels.tsa.holtwinters import ExponentialSmoothing

M = 12
HISTORY = 48
OBSERVED = 4
H = 8
HERE = os.path.dirname(os.path.abspath(__file__))
OUT = os.path.join(HERE, "..", "fixtures", "track", "statsmodels_state_update.json")


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


def fit(y, seasonal, damped, a, b, g, phi, init):
    l0, b0, s0 = init
    kw = dict(trend="add", damped_trend=damped, initialization_method="known",
              initial_level=l0, initial_trend=b0)
    if seasonal is not None:
        kw.update(seasonal=seasonal, seasonal_periods=M, initial_seasonal=np.array(s0))
    fit_kw = dict(smoothing_level=a, smoothing_trend=b, optimized=False)
    if seasonal is not None:
        fit_kw["smoothing_seasonal"] = g
    if damped:
        fit_kw["damping_trend"] = phi
    return ExponentialSmoothing(np.array(y), **kw).fit(**fit_kw)


def run_case(series, seasonal, damped, a, b, g, phi):
    y = series[:HISTORY]
    new = series[HISTORY : HISTORY + OBSERVED]
    init = simple_init(y, seasonal)
    before = fit(y, seasonal, damped, a, b, g, phi, init)
    after = fit(y + new, seasonal, damped, a, b, g, phi, init)
    tag = {None: "holt", "add": "hw_add", "mul": "hw_mul"}[seasonal]
    method = {None: "holt", "add": "holt-winters-additive", "mul": "holt-winters-multiplicative"}[seasonal]
    return {
        "name": f"elnino{HISTORY}_{tag}{'_damped' if damped else ''}",
        "method": method, "damped": damped,
        "alpha": a, "beta": b, "gamma": g if seasonal else None, "phi": phi if damped else None,
        "observed": new,
        "forecast_before": [float(v) for v in before.forecast(OBSERVED + H)],
        "forecast_after_append": [float(v) for v in after.forecast(H)],
    }


def main():
    series = elnino_monthly()
    cases = [
        run_case(series, seasonal, damped, 0.4, 0.15, 0.3, 0.9)
        for seasonal in (None, "add", "mul")
        for damped in (False, True)
    ]
    out = {
        "source": "statsmodels.tsa.holtwinters.ExponentialSmoothing, initialization_method='known', "
                  "optimized=False, fitted on the history and on the history with the observed "
                  "months appended (same parameters and initial states: no refit); data: "
                  "statsmodels.datasets.elnino (NOAA ERSST V3B Nino 1+2), months JAN..DEC flattened",
        "statsmodels_version": statsmodels.__version__,
        "numpy_version": np.__version__,
        "period": M,
        "history_months": HISTORY,
        "observed_months": OBSERVED,
        "horizon_after": H,
        "history": series[:HISTORY],
        "cases": cases,
    }
    os.makedirs(os.path.dirname(OUT), exist_ok=True)
    with open(OUT, "w") as f:
        json.dump(out, f, indent=1)
        f.write("\n")
    for c in cases:
        print(c["name"], c["forecast_after_append"][:3])


if __name__ == "__main__":
    main()
