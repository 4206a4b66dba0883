"""Reference values of Spearman's rank correlation (with ties) and of
mid-ranks, from scipy.stats.spearmanr and scipy.stats.rankdata.

Writes tests/fixtures/drivers/spearman.json with the inputs, the results and
the scipy version. Run from the repository root:

    python3 tests/reference/drivers_spearman.py
"""
import json
import pathlib

import numpy as np
import scipy
from scipy import stats

rng = np.random.default_rng(20240607)
cases = []
# Continuous, tied (rounded) and binary inputs against one outcome.
x = rng.normal(size=60)
y = 0.6 * x + rng.normal(size=60)
cases.append({"name": "continuous", "x": x.tolist(), "y": y.tolist()})
xt = np.round(rng.normal(size=60) * 2.0) / 2.0
yt = np.round(xt + rng.normal(size=60), 1)
cases.append({"name": "ties", "x": xt.tolist(), "y": yt.tolist()})
xb = (rng.random(60) < 0.2).astype(float)
yb = -2.0 * xb + rng.normal(size=60)
cases.append({"name": "binary", "x": xb.tolist(), "y": yb.tolist()})

for c in cases:
    rho = stats.spearmanr(c["x"], c["y"]).statistic
    c["rho"] = float(rho)
    c["ranks_x"] = stats.rankdata(c["x"], method="average").tolist()

out = {
    "source": "scipy.stats.spearmanr and scipy.stats.rankdata(method='average')",
    "scipy_version": scipy.__version__,
    "numpy_version": np.__version__,
    "cases": cases,
}
path = pathlib.Path(__file__).resolve().parent.parent / "fixtures" / "drivers" / "spearman.json"
path.write_text(json.dumps(out, indent=1))
print(f"wrote {path}")
