#!/usr/bin/env python3
"""sensitivity{} of sluice against the same omitted-variable-bias numbers
computed independently with numpy (least squares by lstsq) and scipy (the
critical t): the t statistic, the partial R^2 of the treatment, the
robustness values RV_q and RV_{q,alpha}, the benchmark bounds and the
adjusted estimate, SE and t, with the formulas of Cinelli and Hazlett
(2020, JRSS-B 82:39, sections 4-6; written here from memory).  The partial
R^2 of a benchmark is computed from residual sums of squares of nested
fits (Frisch-Waugh), not from t statistics as sluice does.  Also the
E-value closed form (VanderWeele and Ding 2017).  Run by `make check`;
env B = build dir.
"""
import math
import os
import sys
import tempfile

sys.path.insert(0, os.path.join(os.path.dirname(__file__), "..", "lib"))
from oracle import lua_list, run_queries, sluice_path  # noqa: E402

try:
    import numpy as np
    from scipy import stats
except ImportError:
    print("skipped: numpy or scipy not installed")
    sys.exit(0)


def ols(y, cols):
    """Coefficients, classical SEs, RSS and df of y on an intercept and cols."""
    X = np.column_stack([np.ones(len(y))] + cols)
    beta, _, _, _ = np.linalg.lstsq(X, y, rcond=None)
    resid = y - X @ beta
    rss = float(resid @ resid)
    df = len(y) - X.shape[1]
    cov = rss / df * np.linalg.inv(X.T @ X)
    return beta, np.sqrt(np.diag(cov)), rss, df


def partial_r2(y, keep, extra):
    """Share of the residual variance of y given keep that extra explains."""
    rss_small = ols(y, keep)[2]
    rss_big = ols(y, keep + [extra])[2]
    return 1 - rss_big / rss_small


def rv(f, fc):
    """RV_{q,alpha} for f = q|t|/sqrt(df) and fc = t*/sqrt(df - 1) (fc 0: RV_q)."""
    if f <= fc:
        return 0.0
    if fc > 0 and f * fc >= 1:      # the least strength lies off the diagonal
        return (f * f - fc * fc) / (1 + f * f)
    g = f - fc
    return 0.5 * (math.sqrt(g ** 4 + 4 * g ** 2) - g ** 2)


def bound(r2dx, r2yx, k):
    """Bounds on (R^2 d~Z|X, R^2 y~Z|d,X) for Z k times as strong as X_j."""
    r2dz = k * r2dx / (1 - r2dx)
    r2zx = k * r2dx ** 2 / ((1 - k * r2dx) * (1 - r2dx))
    if r2dz >= 1 or not 0 <= r2zx < 1:
        return None                 # no confounder can be that strong
    r2yz = ((math.sqrt(k) + math.sqrt(r2zx)) / math.sqrt(1 - r2zx)) ** 2 * r2yx / (1 - r2yx)
    return r2dz, min(r2yz, 1.0)


def adjust(est, se, df, r2dz, r2yz):
    bias = se * math.sqrt(df * r2yz * r2dz / (1 - r2dz))
    adj = est - bias if est >= 0 else est + bias
    adj_se = se * math.sqrt((1 - r2yz) / (1 - r2dz)) * math.sqrt(df / (df - 1))
    # a confounder explaining all the outcome's residual variance: SE 0, t undefined
    return adj, adj_se, adj / adj_se if adj_se > 0 else math.nan


def close(a, b, what, failures, tol=1e-9):
    if math.isnan(a) and math.isnan(b):
        return
    if not (abs(a - b) <= tol * max(1.0, abs(b))):
        failures.append("%s: sluice %.17g, numpy %.17g" % (what, a, b))


def main():
    rng = np.random.default_rng(20261111)
    failures = []
    checked, impossible_total = [0], [0]
    tmp = tempfile.mkdtemp()
    cases = []
    for case in range(4):
        n = [300, 2000, 50, 10000][case]
        age = rng.normal(size=n)
        sev = rng.normal(size=n) + 0.3 * age
        ward = (rng.random(n) < 0.4).astype(float)
        d = 0.5 * age + 0.4 * sev + 0.2 * ward + rng.normal(size=n)
        if case == 3:
            d = (d > 0).astype(float)   # a 0/1 treatment
        y = [0.3, 0.05, 0.8, -0.1][case] * d + 0.6 * age + [0.4, 0.2, 0.9, 0.3][case] * sev + 0.3 * ward + rng.normal(size=n)
        csv = os.path.join(tmp, "c%d.csv" % case)
        with open(csv, "w") as f:
            f.write("d,y,age,severity,ward\n")
            for i in range(n):
                f.write("%.17g,%.17g,%.17g,%.17g,%.17g\n" % (d[i], y[i], age[i], sev[i], ward[i]))
        q = [1, 0.5, 1, 2][case]
        alpha = [0.05, 0.1, 0.05, 0.01][case]
        cases.append((csv, dict(d=d, y=y, age=age, severity=sev, ward=ward), q, alpha))

    lines = []
    for c, (csv, _, q, alpha) in enumerate(cases):
        lines.append('do local s = sensitivity{data = read_csv(%r), treatment = "d", outcome = "y", '
                     'set = %s, benchmark = %s, k = {1, 2, 3}, q = %r, alpha = %r}'
                     % (csv, lua_list(["age", "severity", "ward"]), lua_list(["severity", "ward"]),
                        q, alpha))
        lines.append('print("%d " .. string.format("%%.17g %%.17g %%.17g %%.17g %%.17g %%.17g %%.17g", '
                     's.estimate, s.se, s.t, s.df, s.partial_r2, s.rv, s.rv_alpha))' % (100 * c))
        lines.append('for i, b in ipairs(s.bounds) do print(tostring(%d + i) .. " " .. (b.impossible and "impossible" or string.format('
                     '"%%.17g %%.17g %%.17g %%.17g %%.17g %%.17g %%.17g", b.r2dz, b.r2yz, b.estimate, '
                     'b.se, b.t, b.lo, b.hi))) end end' % (100 * c))
    # E-values: the closed form at a spread of ratios
    ratios = [1.0001, 1.2, 2.5, 3.9, 17.0, 0.9, 0.31]
    for j, r in enumerate(ratios):
        lines.append('print("%d " .. string.format("%%.17g", evalue{rr = %r}.point))' % (900 + j, r))
    got = run_queries(sluice_path(), "sensitivity", lines, timeout=300)
    if got is None:
        sys.exit(1)

    for c, (_, v, q, alpha) in enumerate(cases):
        keys = ["age", "severity", "ward"]
        beta, se, _, df = ols(v["y"], [v["d"]] + [v[k] for k in keys])
        est, s = beta[1], se[1]
        t = est / s
        # the treatment's partial R^2 from nested fits, not from t
        r2 = partial_r2(v["y"], [v[k] for k in keys], v["d"])
        fq = q * abs(t) / math.sqrt(df)
        fc = stats.t.ppf(1 - alpha / 2, df - 1) / math.sqrt(df - 1)
        want = [est, s, t, df, r2, rv(fq, 0.0), rv(fq, fc)]
        have = [float(x) for x in got[100 * c].split()]
        for name, a, b in zip(["estimate", "se", "t", "df", "partial_r2", "rv", "rv_alpha"], have, want):
            close(a, b, "case %d %s" % (c, name), failures)
        tc = stats.t.ppf(1 - alpha / 2, df - 1)
        row = 1
        for bench in ["severity", "ward"]:
            others = [v[k] for k in keys if k != bench]
            r2dx = partial_r2(v["d"], others, v[bench])
            r2yx = partial_r2(v["y"], [v["d"]] + others, v[bench])
            for k in [1, 2, 3]:
                key = 100 * c + row
                row += 1
                b = bound(r2dx, r2yx, k)
                if b is None:
                    if got.get(key) != "impossible":
                        failures.append("case %d %dx %s: impossible, sluice %r" % (c, k, bench, got.get(key)))
                    impossible_total[0] += 1
                    continue
                r2dz, r2yz = b
                adj, adj_se, adj_t = adjust(est, s, df, r2dz, r2yz)
                want = [r2dz, r2yz, adj, adj_se, adj_t, adj - tc * adj_se, adj + tc * adj_se]
                if key not in got:
                    failures.append("case %d %s k=%d: no bound row" % (c, bench, k))
                    continue
                have = [float(x) for x in got[key].split()]
                checked[0] += 1
                for name, a, b in zip(["r2dz", "r2yz", "est", "se", "t", "lo", "hi"], have, want):
                    close(a, b, "case %d %dx %s %s" % (c, k, bench, name), failures)
    for j, r in enumerate(ratios):
        rr = r if r >= 1 else 1 / r
        close(float(got[900 + j]), rr + math.sqrt(rr * (rr - 1)), "E-value of %g" % r, failures, 1e-12)

    for f in failures:
        print("FAIL", f)
    if checked[0] < 15:
        failures.append("only %d bound rows were compared" % checked[0])
    print("sensitivity_numpy: %d cases, %d bound rows (%d impossible), %d failures"
          % (len(cases), checked[0], impossible_total[0], len(failures)))
    sys.exit(1 if failures else 0)


main()
