"""sm_estimate.py: the baseline of the estimator benchmarks, the same
computation as sluice's estimate{} written with statsmodels and numpy
(Debian python3-statsmodels, python3-numpy, python3-pandas).

    sm_estimate.py CSV METHOD B SEED

METHOD is "standardize" or "aipw".  Reads the file of bench_estimate.lua
(untimed), then, timed: the point estimate on all the rows and B bootstrap
replicates, each resampling the rows with numpy and refitting.

  standardize  sm.OLS of y on 1, t, W, t*W (W = w1..w6); predict every row
               under t = 1 and t = 0; average; the difference.
  aipw         sm.Logit of t on 1, W for the propensity e, the same OLS
               outcome model for m1, m0; the mean of
               m1 - m0 + t (y - m1) / e - (1 - t) (y - m0) / (1 - e).

Prints one line of key=value pairs: estimate (the point estimate), se (the
bootstrap SD), total_s (point estimate and B replicates), per_rep_s,
version; or "missing=1" when the packages cannot be imported.  With
SM_BOOT=k in the environment only k replicates run and total_s is scaled
to B (per_rep_s stays measured).
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
    except ImportError:
        print("missing=1")
        return 0
    d = pd.read_csv(path, float_precision="round_trip")
    W = d[["w1", "w2", "w3", "w4", "w5", "w6"]].to_numpy(dtype="float64")
    t = d["t"].to_numpy(dtype="float64")
    y = d["y"].to_numpy(dtype="float64")
    n = len(y)
    runs = min(B, int(os.environ.get("SM_BOOT", B)))

    def point(W, t, y):
        one = np.ones(len(y))
        X = np.column_stack([one, t, W, t[:, None] * W])
        fit = sm.OLS(y, X).fit()
        m1 = fit.predict(np.column_stack([one, one, W, W]))
        m0 = fit.predict(np.column_stack([one, np.zeros(len(y)), W, np.zeros_like(W)]))
        if method == "standardize":
            return m1.mean() - m0.mean()
        e = sm.Logit(t, np.column_stack([one, W])).fit(disp=0).predict()
        return np.mean(m1 - m0 + t * (y - m1) / e - (1 - t) * (y - m0) / (1 - e))

    t0 = time.perf_counter()
    est = point(W, t, y)
    rng = np.random.default_rng(seed)
    reps = np.empty(runs)
    t1 = time.perf_counter()
    for b in range(runs):
        ix = rng.integers(0, n, n)
        reps[b] = point(W[ix], t[ix], y[ix])
    t2 = time.perf_counter()
    per = (t2 - t1) / max(runs, 1)
    total = (t1 - t0) + per * B
    se = reps.std(ddof=1) if runs > 1 else float("nan")
    print("estimate=%.17g se=%.17g total_s=%.6f per_rep_s=%.6f boot=%d version=%s"
          % (est, se, total, per, runs, statsmodels.__version__))
    return 0


if __name__ == "__main__":
    sys.exit(main())
