# Anderson-Darling reference values for stats/assume, produced with Debian's
# python3-statsmodels 0.13.5 (statsmodels.stats.diagnostic.normal_ad, which
# uses the D'Agostino & Stephens 1986 p-value formulas) and numpy 1.24.
# Also cross-checks the moments in ref.json with scipy 1.10.1
# (scipy.stats.skew/kurtosis, bias=False give the adjusted G1, G2).
# Run from this folder with /usr/bin/python3 ref_ad.py  (writes ref_ad.json)
import json
import numpy as np
import scipy
import statsmodels
from scipy import stats
from statsmodels.stats.diagnostic import normal_ad

rng = np.random.default_rng(31)
cases = []
makers = [
    lambda n: rng.normal(size=n),
    lambda n: rng.normal(size=n),
    lambda n: rng.standard_t(3, size=n),
    lambda n: rng.exponential(size=n),
    lambda n: rng.uniform(size=n),
    lambda n: rng.normal(size=n) ** 3,
    lambda n: rng.normal(size=n) + 0.02 * np.arange(n) % 1.7,
    lambda n: stats.norm.ppf((np.arange(1, n + 1) - 0.375) / (n + 0.25)) + 0.05 * rng.normal(size=n),
    lambda n: rng.normal(size=n),
]
for n, make in zip([8, 15, 40, 60, 120, 300, 25, 30, 50], makers):
    x = make(n)
    a2, p = normal_ad(x)
    cases.append({"n": n, "x": [float(v) for v in x], "A2": float(a2), "p": float(p)})

ref = json.load(open("ref.json"))
gap = 0.0
for m in ref["moments"]:
    g1 = stats.skew(m["x"], bias=False)
    g2 = stats.kurtosis(m["x"], bias=False)
    gap = max(gap, abs(g1 - m["G1"]) / abs(m["G1"]), abs(g2 - m["G2"]) / abs(m["G2"]))
out = {
    "generator": "statsmodels %s normal_ad; numpy %s; scipy %s" % (statsmodels.__version__, np.__version__, scipy.__version__),
    "anderson": cases,
    "moments_scipy_max_rel_gap": gap,
}
json.dump(out, open("ref_ad.json", "w"))
print("moments: largest relative gap R vs scipy", gap)
