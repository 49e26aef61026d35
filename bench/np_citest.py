"""np_citest.py: the baseline of the g:test benchmark (bench/run.sh section
15): the same partial correlations with numpy (Debian python3-numpy,
python3-scipy for the normal tail).

    np_citest.py DIR

Reads DIR/data.csv (untimed) and DIR/imps.txt (a b given... per line);
timed: for each implication, the least-squares residuals of a and b on
[1, given] (numpy.linalg.lstsq), their correlation, Fisher's z and its p.
Prints one line: total_s, r1 (the first r), r_sum, version; or "missing=1".
"""
import sys
import time


def main():
    d = sys.argv[1]
    try:
        import numpy as np
        from scipy.stats import norm
    except ImportError:
        print("missing=1")
        return
    with open(d + "/data.csv") as f:
        names = f.readline().strip().split(",")
    data = np.loadtxt(d + "/data.csv", delimiter=",", skiprows=1)
    col = {n: data[:, i] for i, n in enumerate(names)}
    imps = [line.split() for line in open(d + "/imps.txt")]
    ones = np.ones(data.shape[0])
    t0 = time.perf_counter()
    rs = []
    for w in imps:
        X = np.column_stack([ones] + [col[g] for g in w[2:]])
        res = []
        for v in w[:2]:
            beta = np.linalg.lstsq(X, col[v], rcond=None)[0]
            res.append(col[v] - X @ beta)
        r = np.corrcoef(res[0], res[1])[0, 1]
        z = np.arctanh(r) * np.sqrt(len(ones) - (len(w) - 2) - 3)
        2 * norm.sf(abs(z))
        rs.append(r)
    total = time.perf_counter() - t0
    print("total_s=%.6f r1=%.17g r_sum=%.17g version=%s" % (total, rs[0], sum(rs), np.__version__))


main()
