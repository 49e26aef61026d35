"""sm_routes.py: the baseline of the front-door and IV benchmarks, the same
computation as sluice's estimate{method = "iv" | "frontdoor"} written with
statsmodels and numpy (Debian python3-statsmodels, python3-numpy,
python3-pandas).

    sm_routes.py CSV METHOD B SEED

METHOD is "iv" or "frontdoor".  Reads the file of bench_routes.lua
(untimed), then, timed: the point estimate on all the rows and B bootstrap
replicates, each resampling the rows with numpy and refitting.

  iv         statsmodels IV2SLS of y on (1, x, w) with instruments (1, z, w);
             the coefficient of x
  frontdoor  sm.OLS of m on (1, x) and of y on (1, x, m); the product of
             the coefficients of x and of m (the front-door estimate of
             linear working models)

Prints one line of key=value pairs: estimate, se (bootstrap SD), total_s,
per_rep_s, version; or "missing=1" when the packages cannot be imported.
With SM_BOOT=k in the environment only k replicates run and total_s is
scaled to B.
"""
import os
import sys
import time


def main():
    path, method, B, seed = sys.argv[1], sys.argv[2], int(sys.argv[3]), int(sys.argv[4])
    try:
        import numpy as np
        import pandas as pd
        import statsmodels
        import statsmodels.api as sm
        from statsmodels.sandbox.regression.gmm import IV2SLS
    except ImportError:
        print("missing=1")
        return 0
    d = pd.read_csv(path, float_precision="round_trip")
    w, z, x, m, y = (d[c].to_numpy(dtype="float64") for c in ["w", "z", "x", "m", "y"])
    n = len(y)
    runs = min(B, int(os.environ.get("SM_BOOT", B)))

    def point(ix):
        one = np.ones(len(ix))
        if method == "iv":
            X = np.column_stack([one, x[ix], w[ix]])
            Z = np.column_stack([one, z[ix], w[ix]])
            return IV2SLS(y[ix], X, Z).fit().params[1]
        a = sm.OLS(m[ix], np.column_stack([one, x[ix]])).fit().params[1]
        b = sm.OLS(y[ix], np.column_stack([one, x[ix], m[ix]])).fit().params[2]
        return a * b

    t0 = time.perf_counter()
    est = point(np.arange(n))
    rng = np.random.default_rng(seed)
    reps = np.empty(runs)
    t1 = time.perf_counter()
    for b in range(runs):
        reps[b] = point(rng.integers(0, n, n))
    t2 = time.perf_counter()
    per = (t2 - t1) / max(runs, 1)
    total = (t1 - t0) + per * B
    se = reps.std(ddof=1) if runs > 1 else float("nan")
    print("estimate=%.17g se=%.17g total_s=%.6f per_rep_s=%.6f boot=%d version=%s"
          % (est, se, total, per, runs, statsmodels.__version__))
    return 0


if __name__ == "__main__":
    sys.exit(main())
