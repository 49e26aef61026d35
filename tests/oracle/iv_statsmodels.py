#!/usr/bin/env python3
"""estimate{method = "iv"} of sluice against statsmodels (Debian
python3-statsmodels 0.13.5, python3-numpy) on simulated data with a hidden
confounder and heteroskedastic errors.

- 2SLS coefficient and classical SE: statsmodels.sandbox.regression.gmm.IV2SLS
  (its bse uses s^2 = u'u / (n - p) with the 2SLS residuals u = y - X b).
- HC0 and HC1 SEs: the textbook sandwich (X^'X^)^-1 (sum u_i^2 x^_i x^_i')
  (X^'X^)^-1 (Wooldridge 2010, Econometric Analysis of Cross Section and
  Panel Data, 5.2.3; HC1 times n / (n - p), MacKinnon and White 1985),
  written here with numpy (IV2SLS in statsmodels 0.13.5 has no robust
  covariance: get_robustcov_results("HC0") fails for want of pinv_wexog).
- First-stage F of the excluded instruments: statsmodels OLS compare_f_test
  of x on (1, Z, W) against x on (1, W).
- The Wald estimator (binary instrument and treatment, no covariates): the
  hand formula (E[Y|Z=1] - E[Y|Z=0]) / (E[X|Z=1] - E[X|Z=0]).
Tolerance 1e-8 relative.  Run by tests/run.sh; env B = build dir.
"""
import os
import subprocess
import sys
import tempfile

try:
    import numpy as np
    import statsmodels.api as sm
    from statsmodels.sandbox.regression.gmm import IV2SLS
except ImportError:
    print("skipped: statsmodels not installed")
    sys.exit(0)

B = os.environ.get("B", "build")
rng = np.random.default_rng(20261210)
n = 3000
u = rng.normal(size=n)                                 # the hidden confounder
w = rng.normal(size=n)
site = rng.integers(0, 3, size=n)                      # a text covariate
z = rng.normal(size=n)
zb = (rng.random(n) < 0.45).astype(float)
x = 0.6 * z + 0.5 * zb + 0.4 * w + 0.3 * site + u + rng.normal(size=n)
xb = (rng.random(n) < 0.2 + 0.5 * zb + 0.1 * (u > 0)).astype(float)
noise = rng.normal(size=n) * (0.5 + np.abs(z))         # heteroskedastic
y = 1.0 + 1.5 * x + 0.8 * w - 0.4 * site - 1.2 * u + noise
yb = 0.5 + 2.0 * xb - u + rng.normal(size=n) * (1 + xb)
names = ["north", "east", "south"]

tmp = tempfile.mkdtemp()
csv = os.path.join(tmp, "clinics.csv")
with open(csv, "w") as f:
    f.write("x,xb,y,yb,w,site,z,zb\n")
    for i in range(n):
        f.write("%.17g,%d,%.17g,%.17g,%.17g,%s,%.17g,%d\n"
                % (x[i], xb[i], y[i], yb[i], w[i], names[site[i]], z[i], zb[i]))

# (treatment, outcome, instruments, covariates)
cases = [
    ("x", "y", ["z"], ["w"]),
    ("x", "y", ["z", "zb"], ["w", "site"]),
    ("x", "y", ["zb"], []),
    ("xb", "yb", ["zb"], []),
    ("xb", "yb", ["zb", "z"], ["w"]),
]
script = os.path.join(tmp, "run.lua")
with open(script, "w") as f:
    f.write("local d = read_csv(%r)\n" % csv)
    f.write("local function q(v) return v and string.format('%.17g', v) or '-' end\n")
    for t, o, zs, ws in cases:
        lua_list = lambda v: "{" + ", ".join('"%s"' % s for s in v) + "}"
        f.write('do local r = estimate{data = d, treatment = %r, outcome = %r, method = "iv", '
                'instrument = %s, set = %s}\n' % (t, o, lua_list(zs), lua_list(ws)))
        f.write("print(q(r.estimate), q(r.se_classical), q(r.se_hc0), q(r.se_hc1), q(r.first_f), "
                "q(r.first_p), q(r.first_coef[1]), q(r.wald)) end\n")
res = subprocess.run([os.path.join(B, "sluice"), script], capture_output=True, text=True)
if res.returncode != 0:
    print("sluice failed:", res.stderr)
    sys.exit(1)
got = [line.split() for line in res.stdout.strip().splitlines()]

cols = {"x": x, "xb": xb, "y": y, "yb": yb, "w": w, "z": z, "zb": zb}


def covariates(ws):
    out = []
    for v in ws:
        if v == "site":     # dummies for every level but the first seen
            first = site[0]
            out += [(site == lv).astype(float) for lv in range(3) if lv != first]
        else:
            out.append(cols[v])
    return out


def expected(t, o, zs, ws):
    one = np.ones(n)
    W = covariates(ws)
    X = np.column_stack([one, cols[t]] + W)
    Z = np.column_stack([one] + [cols[v] for v in zs] + W)
    fit = IV2SLS(cols[o], X, Z).fit()
    # the sandwich with X^ (Wooldridge 2010, 5.2.3)
    Xh = Z @ np.linalg.solve(Z.T @ Z, Z.T @ X)
    resid = cols[o] - X @ fit.params
    bread = np.linalg.inv(Xh.T @ Xh)
    meat = (Xh * resid[:, None] ** 2).T @ Xh
    hc0 = bread @ meat @ bread
    p = X.shape[1]
    first = sm.OLS(cols[t], Z).fit()
    restricted = sm.OLS(cols[t], np.column_stack([one] + W)).fit()
    F, pval, _ = first.compare_f_test(restricted)
    wald = None
    if len(zs) == 1 and not ws and t == "xb":
        zz = cols[zs[0]] == 1
        wald = (cols[o][zz].mean() - cols[o][~zz].mean()) / (cols[t][zz].mean() - cols[t][~zz].mean())
    return [fit.params[1], fit.bse[1], np.sqrt(hc0[1, 1]), np.sqrt(hc0[1, 1] * n / (n - p)),
            F, pval, first.params[1], wald]


labels = ["estimate", "classical SE", "HC0 SE", "HC1 SE", "first-stage F", "first-stage p",
          "first-stage coefficient", "Wald"]
passed = failed = 0
for case, g in zip(cases, got):
    want = expected(*case)
    for label, a, b in zip(labels, g, want):
        if b is None:
            ok = a == "-"
        elif label == "first-stage p" and b < 1e-300:
            ok = float(a) < 1e-290
        else:
            ok = abs(float(a) - b) <= 1e-8 * max(abs(b), 1e-300)
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
