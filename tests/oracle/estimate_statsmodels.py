#!/usr/bin/env python3
"""Standardization, IPW and AIPW estimates of sluice against the same
computation written with statsmodels and numpy (Debian python3-statsmodels,
python3-numpy) on simulated data.  The formulas follow Hernan and Robins,
Causal Inference: What If (2020), ch. 12-13 (standardization, Hajek-weighted
IPW) and the AIPW estimator of Robins, Rotnitzky and Zhao (1994) with its
influence-function standard error.  Run by `make check`; env B = build dir.
"""
import os
import subprocess
import sys
import tempfile

try:
    import numpy as np
    import statsmodels.api as sm
except ImportError:
    print("skipped: statsmodels not installed")
    sys.exit(0)

B = os.environ.get("B", "build")
rng = np.random.default_rng(20261202)
n = 3000
w1 = rng.normal(size=n)
w2 = (rng.random(n) < 0.4).astype(float)
ps_true = 1 / (1 + np.exp(-(0.3 * w1 - 0.6 * w2 + 0.1)))
t = (rng.random(n) < ps_true).astype(float)
y = 1 + 2 * t + w1 + 0.5 * w2 + 0.7 * t * w1 + rng.normal(size=n)
yb = (rng.random(n) < 1 / (1 + np.exp(-(-0.5 + t + 0.5 * w1 - 0.4 * w2)))).astype(float)
dose = 0.5 * w1 + rng.normal(size=n)              # a continuous treatment
yd = 0.8 * dose + w1 + rng.normal(size=n)

tmp = tempfile.mkdtemp()
csv = os.path.join(tmp, "plots.csv")
with open(csv, "w") as f:
    f.write("t,y,yb,w1,w2,dose,yd\n")
    for i in range(n):
        f.write("%d,%.17g,%d,%.17g,%d,%.17g,%.17g\n" % (t[i], y[i], yb[i], w1[i], w2[i], dose[i], yd[i]))

cases = [
    ("standardize", "ATE", "y", "t", "difference"),
    ("standardize", "ATT", "y", "t", "difference"),
    ("standardize", "ATC", "y", "t", "difference"),
    ("standardize", "ATE", "yb", "t", "difference"),
    ("standardize", "ATE", "yb", "t", "ratio"),
    ("standardize", "ATE", "yb", "t", "odds ratio"),
    ("standardize", "ATE", "yd", "dose", "difference"),
    ("ipw", "ATE", "y", "t", "difference"),
    ("ipw", "ATT", "y", "t", "difference"),
    ("ipw", "ATE", "yb", "t", "ratio"),
    ("aipw", "ATE", "y", "t", "difference"),
    ("aipw", "ATT", "y", "t", "difference"),
    ("aipw", "ATE", "yb", "t", "difference"),
]
script = os.path.join(tmp, "run.lua")
with open(script, "w") as f:
    f.write('local d = read_csv(%r)\n' % csv)
    for m, est, out, trt, scale in cases:
        f.write('do local r = estimate{data = d, treatment = %r, outcome = %r, set = {"w1", "w2"}, '
                'method = %r, estimand = %r, scale = %r}\n' % (trt, out, m, est, scale))
        f.write('print(string.format("%.15g %s", r.estimate, r.se and string.format("%.15g", r.se) or "-")) end\n')
res = subprocess.run([os.path.join(B, "sluice"), script], capture_output=True, text=True)
if res.returncode != 0:
    print("sluice failed:", res.stderr)
    sys.exit(1)
got = [line.split() for line in res.stdout.strip().splitlines()]

C = np.column_stack([w1, w2])


def fit_outcome(yv, tv, binary):
    X = np.column_stack([np.ones(n), tv, C, tv[:, None] * C])
    model = sm.GLM(yv, X, family=sm.families.Binomial()) if binary else sm.OLS(yv, X)
    return model.fit(tol=1e-12) if binary else model.fit()


def design(tv):
    return np.column_stack([np.ones(n), tv, C, tv[:, None] * C])


def contrast(scale, m1, m0):
    if scale == "ratio":
        return m1 / m0
    if scale == "odds ratio":
        return (m1 / (1 - m1)) / (m0 / (1 - m0))
    return m1 - m0


ps = sm.Logit(t, np.column_stack([np.ones(n), C])).fit(disp=0, tol=1e-12).predict()


def expected(m, est, out, trt, scale):
    yv = {"y": y, "yb": yb, "yd": yd}[out]
    binary = out == "yb"
    if m == "standardize":
        tv = t if trt == "t" else dose
        fit = fit_outcome(yv, tv, binary)
        if trt == "dose":
            return contrast(scale, fit.predict(design(dose + 1)).mean(), fit.predict(design(dose)).mean()), None
        m1, m0 = fit.predict(design(np.ones(n))), fit.predict(design(np.zeros(n)))
        sel = {"ATE": np.ones(n, bool), "ATT": t == 1, "ATC": t == 0}[est]
        return contrast(scale, m1[sel].mean(), m0[sel].mean()), None
    if m == "ipw":
        w = np.where(t == 1, 1 / ps, 1 / (1 - ps)) if est == "ATE" else np.where(t == 1, 1, ps / (1 - ps))
        m1 = np.sum(w * t * yv) / np.sum(w * t)
        m0 = np.sum(w * (1 - t) * yv) / np.sum(w * (1 - t))
        return contrast(scale, m1, m0), None
    fit = fit_outcome(yv, t, binary)
    m1, m0 = fit.predict(design(np.ones(n))), fit.predict(design(np.zeros(n)))
    if est == "ATE":
        psi = m1 - m0 + t * (yv - m1) / ps - (1 - t) * (yv - m0) / (1 - ps)
        tau = psi.mean()
        inf = psi - tau
    else:
        p = t.mean()
        psi = t * (yv - m0) - (1 - t) * ps / (1 - ps) * (yv - m0)
        tau = psi.sum() / t.sum()
        inf = (psi - t * tau) / p
    # the sandwich's 1/n (HC0), as in Stefanski and Boos 2002
    return tau, inf.std(ddof=0) / np.sqrt(n)


passed = failed = 0
for case, g in zip(cases, got):
    want, want_se = expected(*case)
    ok = abs(float(g[0]) - want) <= 1e-7 * max(1, abs(want))
    if want_se is not None:
        ok = ok and abs(float(g[1]) - want_se) <= 1e-6 * want_se
    if ok:
        passed += 1
    else:
        failed += 1
        print("MISMATCH", case, "sluice", g, "reference", want, want_se)
print("%d passed, %d failed" % (passed, failed))
sys.exit(1 if failed else 0)
