"""Times statsmodels on a benchmark CSV written by engine.bench.ts (outside reference only).

Usage: python3 statsmodels_peer.py FILE.csv REPS
Prints one JSON line: fit_ms, full_ms (fit with cluster SEs + get_margeff), iterations.
CSV loading is not timed. Best of REPS runs is reported, as for our side.
"""
import json
import sys
import time

import numpy as np
import pandas as pd
import statsmodels
import statsmodels.api as sm

path, reps = sys.argv[1], int(sys.argv[2])
df = pd.read_csv(path)
y = df["y"].to_numpy(dtype=float)
groups = df["cluster"].to_numpy()
X = sm.add_constant(df[[c for c in df.columns if c.startswith("x")]].to_numpy(dtype=float))

fit_ms, full_ms, iters = [], [], None
for _ in range(reps):
    t = time.perf_counter()
    res = sm.Probit(y, X).fit(method="newton", disp=0)
    fit_ms.append((time.perf_counter() - t) * 1000)
    iters = int(res.mle_retvals["iterations"])
    t = time.perf_counter()
    res = sm.Probit(y, X).fit(method="newton", disp=0, cov_type="cluster", cov_kwds={"groups": groups})
    m = res.get_margeff()
    _ = (m.margeff, m.margeff_se)
    full_ms.append((time.perf_counter() - t) * 1000)
print(json.dumps({"fit_ms": min(fit_ms), "full_ms": min(full_ms), "iterations": iters,
                  "version": statsmodels.__version__, "coef": [float(v) for v in res.params]}))
