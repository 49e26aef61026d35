"""np_estimate.py: the plain-numpy baseline of the estimator benchmarks: the
same computation as sluice's estimate{} with B bootstrap replicates, written
with numpy alone for the arithmetic (Debian python3-numpy; the CSV read with
python3-pandas, the fastest reader a numpy user has at hand).

    np_estimate.py CSV METHOD B SEED

METHOD is "standardize" or "aipw".  bench/run.sh times the whole process
(start-up, the read, the point estimate and the replicates), as it times
sluice's.

  standardize  least squares (np.linalg.lstsq) of y on 1, t, W, t*W
               (W = w1..w6); the mean prediction under t = 1 minus under t = 0.
  aipw         the propensity by Newton-Raphson (IRLS) for the logistic
               model of t on 1, W (np.linalg.solve per step, from zero, to a
               change in deviance below 1e-10 relative), the same
               least-squares outcome model; the mean of
               m1 - m0 + t (y - m1) / e - (1 - t) (y - m0) / (1 - e).

Each replicate resamples the rows with numpy's generator and refits.
Prints one line: estimate= se= (the bootstrap SD) boot= version=; or
missing=1 when numpy or pandas cannot be imported.
"""
import sys


def main():
    path, method, B, seed = sys.argv[1], sys.argv[2], int(sys.argv[3]), int(sys.argv[4])
    try:
        import numpy as np
        import pandas as pd
    except ImportError:
        print("missing=1")
        return 0
    d = pd.read_csv(path, float_precision="round_trip")
    W = d[["w1", "w2", "w3", "w4", "w5", "w6"]].to_numpy(dtype="float64")
    t = d["t"].to_numpy(dtype="float64")
    y = d["y"].to_numpy(dtype="float64")
    n = len(y)

    def logistic(X, t):
        b = np.zeros(X.shape[1])
        dev = np.inf
        for _ in range(50):
            e = 1 / (1 + np.exp(-(X @ b)))
            v = e * (1 - e)
            b = b + np.linalg.solve(X.T @ (X * v[:, None]), X.T @ (t - e))
            e = 1 / (1 + np.exp(-(X @ b)))
            new = -2 * np.sum(t * np.log(e) + (1 - t) * np.log(1 - e))
            if abs(new - dev) < 1e-10 * (abs(new) + 0.1):
                break
            dev = new
        return e

    def point(W, t, y):
        one = np.ones(len(y))
        X = np.column_stack([one, t, W, t[:, None] * W])
        beta = np.linalg.lstsq(X, y, rcond=None)[0]
        m1 = np.column_stack([one, one, W, W]) @ beta
        m0 = np.column_stack([one, np.zeros(len(y)), W, np.zeros_like(W)]) @ beta
        if method == "standardize":
            return m1.mean() - m0.mean()
        e = logistic(np.column_stack([one, W]), t)
        return np.mean(m1 - m0 + t * (y - m1) / e - (1 - t) * (y - m0) / (1 - e))

    est = point(W, t, y)
    rng = np.random.default_rng(seed)
    reps = np.empty(B)
    for b in range(B):
        ix = rng.integers(0, n, n)
        reps[b] = point(W[ix], t[ix], y[ix])
    print("estimate=%.17g se=%.17g boot=%d version=%s"
          % (est, reps.std(ddof=1) if B > 1 else float("nan"), B, np.__version__))
    return 0


if __name__ == "__main__":
    sys.exit(main())
