#!/usr/bin/env python3
"""estimate{method = "frontdoor"} of sluice against the same computation
written with statsmodels and numpy (Debian python3-statsmodels 0.13.5,
python3-numpy) on simulated data with a hidden confounder of the treatment
and the outcome.

The front-door formula (Pearl 1995; Causality 2009, eq. 3.42):
    E[Y | do(x)] = sum_m P(m | x) sum_x' P(x') E[Y | x', m]
with the working models sluice documents: each mediator on the treatment
and the earlier mediators (OLS, or Logit for a 0/1 mediator), the outcome
on the treatment and the mediators (OLS or Logit, optionally with x:m);
a continuous mediator's values under x are its fitted mean at x plus each
row's residual; a 0/1 mediator is summed over with its fitted probability.

- one linear mediator: the product of coefficients a b and its delta-method
  (Sobel 1982) SE sqrt(a^2 se_b^2 + b^2 se_a^2), from statsmodels OLS;
- two linear mediators in order: sum_j b_j d_j, the SE from a numerical
  gradient (statsmodels.tools.numdiff.approx_fprime) and the OLS
  covariances taken block-diagonal;
- logistic mediators or outcome, interactions: the formula above with
  statsmodels fits, enumerated in numpy.
Run by tests/run.sh; env B = build dir.
"""
import os
import subprocess
import sys
import tempfile

try:
    import numpy as np
    import statsmodels.api as sm
    from statsmodels.tools.numdiff import approx_fprime
except ImportError:
    print("skipped: statsmodels not installed")
    sys.exit(0)

B = os.environ.get("B", "build")
rng = np.random.default_rng(20261211)
n = 4000
u = rng.normal(size=n)                                     # hidden
x = (rng.random(n) < 1 / (1 + np.exp(-0.8 * u))).astype(float)
m1 = 0.2 + 0.9 * x + rng.normal(size=n)
m2 = -0.1 + 0.4 * x + 0.5 * m1 + rng.normal(size=n)
mb = (rng.random(n) < 1 / (1 + np.exp(-(-0.3 + 1.1 * x)))).astype(float)
y = 1 + 0.7 * m1 + 0.6 * m2 + 0.8 * mb + 0.3 * x * m1 + u + rng.normal(size=n)
yb = (rng.random(n) < 1 / (1 + np.exp(-(-0.5 + 0.6 * m1 + 0.7 * mb - 0.8 * u)))).astype(float)

tmp = tempfile.mkdtemp()
csv = os.path.join(tmp, "wards.csv")
with open(csv, "w") as f:
    f.write("x,m1,m2,mb,y,yb\n")
    for i in range(n):
        f.write("%d,%.17g,%.17g,%d,%.17g,%d\n" % (x[i], m1[i], m2[i], mb[i], y[i], yb[i]))

# (outcome, mediators, interactions)
cases = [
    ("y", ["m1"], False),
    ("y", ["m1", "m2"], False),
    ("y", ["mb"], False),
    ("yb", ["mb"], False),
    ("yb", ["m1"], False),
    ("y", ["m1", "mb"], False),
    ("yb", ["m1", "mb"], False),
    ("y", ["m1"], True),
]
script = os.path.join(tmp, "run.lua")
with open(script, "w") as f:
    f.write("local d = read_csv(%r)\n" % csv)
    f.write("local function q(v) return v and string.format('%.17g', v) or '-' end\n")
    for o, via, inter in cases:
        f.write('do local r = estimate{data = d, treatment = "x", outcome = %r, method = "frontdoor", '
                'via = {%s}, interactions = %s}\n'
                % (o, ", ".join('"%s"' % v for v in via), "true" if inter else "false"))
        f.write("print(q(r.estimate), q(r.se_delta), q(r.mu1), q(r.mu0)) end\n")
res = subprocess.run([os.path.join(B, "sluice"), script], capture_output=True, text=True)
if res.returncode != 0:
    print("sluice failed:", res.stderr)
    sys.exit(1)
got = [line.split() for line in res.stdout.strip().splitlines()]

cols = {"x": x, "m1": m1, "m2": m2, "mb": mb, "y": y, "yb": yb}
one = np.ones(n)
expit = lambda e: 1 / (1 + np.exp(-e))
binary = lambda v: set(np.unique(v)) <= {0.0, 1.0}


def fit(v, X):
    if binary(v):
        return sm.Logit(v, X).fit(disp=0, tol=1e-12, maxiter=100)
    return sm.OLS(v, X).fit()


def expected(o, via, inter):
    k = len(via)
    med = []
    for j, name in enumerate(via):
        X = np.column_stack([one, x] + [cols[v] for v in via[:j]])
        med.append(fit(cols[name], X))
    Xy = np.column_stack([one, x] + [cols[v] for v in via] + ([x * cols[v] for v in via] if inter else []))
    out = fit(cols[o], Xy)
    pbar = x.mean()
    resid = [cols[name] - med[j].predict(np.column_stack([one, x] + [cols[v] for v in via[:j]]))
             if not binary(cols[name]) else None for j, name in enumerate(via)]

    def ey(xv, m):            # E[Y | x', m] for arrays m (one per mediator)
        b = out.params
        eta = b[0] + b[1] * xv + sum(b[2 + j] * m[j] for j in range(k))
        if inter:
            eta = eta + sum(b[2 + k + j] * xv * m[j] for j in range(k))
        return expit(eta) if binary(cols[o]) else eta

    def walk(j, xv, m):       # the sum over mediators from j on, per row
        if j == k:
            return pbar * ey(1.0, m) + (1 - pbar) * ey(0.0, m)
        a = med[j].params
        eta = a[0] + a[1] * xv + sum(a[2 + l] * m[l] for l in range(j))
        if binary(cols[via[j]]):
            p = expit(eta)
            return p * walk(j + 1, xv, m + [np.ones(n)]) + (1 - p) * walk(j + 1, xv, m + [np.zeros(n)])
        return walk(j + 1, xv, m + [eta + resid[j]])

    mu1, mu0 = np.mean(walk(0, 1.0, [])), np.mean(walk(0, 0.0, []))
    se = None
    linear = not inter and not binary(cols[o]) and not any(binary(cols[v]) for v in via)
    if linear:
        sizes = [len(r.params) for r in med] + [len(out.params)]
        theta = np.concatenate([r.params for r in med] + [out.params])

        def effect(th):       # sum_j b_j d_j from the stacked coefficients
            parts = np.split(th, np.cumsum(sizes)[:-1])
            d = []
            for j in range(k):
                a = parts[j]
                d.append(a[1] + sum(a[2 + l] * d[l] for l in range(j)))
            return sum(parts[k][2 + j] * d[j] for j in range(k))

        grad = approx_fprime(theta, effect, centered=True)
        cov = np.zeros((len(theta), len(theta)))
        at = 0
        for r in med + [out]:
            p = len(r.params)
            cov[at:at + p, at:at + p] = r.cov_params()
            at += p
        se = float(np.sqrt(grad @ cov @ grad))
        assert abs(effect(theta) - (mu1 - mu0)) < 1e-10 * abs(mu1 - mu0)
        if k == 1:            # Sobel's product of coefficients, by hand
            a, sa = med[0].params[1], med[0].bse[1]
            b, sb = out.params[2], out.bse[2]
            assert abs(a * b - (mu1 - mu0)) < 1e-10 * abs(a * b)
            assert abs(np.sqrt(a * a * sb * sb + b * b * sa * sa) - se) < 1e-7 * se
    return mu1 - mu0, se, mu1, mu0, linear


passed = failed = 0
for case, g in zip(cases, got):
    est, se, mu1, mu0, linear = expected(*case)
    tol = 1e-9 if linear else 1e-7           # Logit: converged to 1e-10 and 1e-12
    checks = [("estimate", g[0], est, tol), ("mu1", g[2], mu1, tol), ("mu0", g[3], mu0, tol)]
    checks.append(("delta SE", g[1], se, 1e-6))  # numerical gradient: about 1e-9 of se
    for label, a, b, t in checks:
        ok = (a == "-") if b is None else abs(float(a) - b) <= t * max(abs(b), 1e-300)
        if ok:
            passed += 1
        else:
            failed += 1
            print("MISMATCH", case, label, "sluice", a, "reference", b)
if len(got) != len(cases):
    failed += 1
    print("sluice printed %d lines for %d cases" % (len(got), len(cases)))
print("%d passed, %d failed" % (passed, failed))
sys.exit(1 if failed else 0)
