"""Studentised-range reference values from scipy (run with /usr/bin/python3:
Debian python3-scipy 1.10.1). scipy.stats.studentized_range integrates the
same double integral with its own adaptive quadrature; it is used as a
second, tighter reference than R's ptukey (whose fixed panels are accurate
only to about 1e-7, and much less for df <= 5). Writes ref_scipy.json."""
import json
import math

import scipy
from scipy import stats

rows = []
for k in (3, 4, 6, 10, 20):
    for df in (2.0, 5.0, 12.5, 27.0, 120.0, math.inf):
        for q in (0.5, 1.5, 3.0, 4.5, 7.0):
            rows.append({"q": q, "k": k, "df": None if math.isinf(df) else df,
                         "upper": stats.studentized_range.sf(q, k, df),
                         "lower": stats.studentized_range.cdf(q, k, df)})
qrows = []
for k in (2, 3, 5, 10):
    for df in (3.0, 10.0, 30.0, math.inf):
        for p in (0.9, 0.95, 0.99, 0.999):
            qrows.append({"p": p, "k": k, "df": None if math.isinf(df) else df,
                          "q": stats.studentized_range.ppf(p, k, df)})
with open("ref_scipy.json", "w") as f:
    json.dump({"meta": {"scipy": scipy.__version__,
                        "call": "scipy.stats.studentized_range.sf/cdf(q, k, df) and .ppf(p, k, df)"},
               "ptukey": rows, "qtukey": qrows}, f, indent=1)
