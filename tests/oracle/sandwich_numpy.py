#!/usr/bin/env python3
"""Analytic standard errors of estimate{} against a stacked M-estimation
sandwich written here with statsmodels and numpy (Debian python3-statsmodels,
python3-numpy).

The reference stacks the working model's score equations with the two mean
equations, theta = (coefficients, mu1, mu0), and computes
V = A^-1 B A^-T / n with A = -(1/n) d(sum psi)/d(theta) by central finite
differences and B = (1/n) sum psi psi' (Stefanski and Boos 2002, The
calculus of M-estimation, The American Statistician 56, 29-38).  The model
fits come from statsmodels (OLS, GLM Binomial, Logit).  For IPW this is the
sandwich that accounts for the estimated propensities (Lunceford and
Davidian 2004, Statistics in Medicine 23, 2937-2960); with the propensity
part left out, "propensities as known".  The AIPW standard error is the
usual one from the estimating functions of the two means with the working
models held fixed (Tsiatis 2006, Semiparametric Theory and Missing Data,
ch. 13).  A ratio's or an odds ratio's SE is of its logarithm (delta
method).  Clusters: the rows' psi summed within clusters before B, times
G/(G-1) (Liang and Zeger 1986; the factor is common practice).  Sampling
weights: every row's equations times its weight (the fits by statsmodels'
WLS and GLM with var_weights), so B takes w^2.
Agreement asked: 1e-6 relative.  Run by `make check`; env B = build dir.
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
rng = np.random.default_rng(20261203)
n = 1500
w1 = rng.normal(size=n)
w2 = (rng.random(n) < 0.4).astype(float)
t = (rng.random(n) < 1 / (1 + np.exp(-(0.4 * w1 - 0.7 * w2 + 0.1)))).astype(float)
y = 1 + 2 * t + w1 + 0.5 * w2 + 0.7 * t * w1 + rng.normal(size=n) * (1 + 0.5 * np.abs(w1))
yb = (rng.random(n) < 1 / (1 + np.exp(-(-0.5 + t + 0.5 * w1 - 0.4 * w2)))).astype(float)
dose = 0.5 * w1 + rng.normal(size=n)
yd = 0.8 * dose + w1 + 0.3 * dose * w2 + rng.normal(size=n)
site = rng.integers(0, 40, size=n)               # 40 clusters
wt = rng.gamma(2.0, 0.5, size=n)                  # sampling weights

tmp = tempfile.mkdtemp()
csv = os.path.join(tmp, "fields.csv")
with open(csv, "w") as f:
    f.write("t,y,yb,w1,w2,dose,yd,site,wt\n")
    for i in range(n):
        f.write("%d,%.17g,%d,%.17g,%d,%.17g,%.17g,%d,%.17g\n"
                % (t[i], y[i], yb[i], w1[i], w2[i], dose[i], yd[i], site[i], wt[i]))

C = np.column_stack([w1, w2])
ONE = np.ones(n)


def design(tv):
    return np.column_stack([ONE, tv, C, tv[:, None] * C])


def expit(x):
    return 1 / (1 + np.exp(-x))


def gradient(scale, m1, m0):
    if scale == "ratio":
        return np.array([1 / m1, -1 / m0])
    if scale == "odds ratio":
        return np.array([1 / (m1 * (1 - m1)), -1 / (m0 * (1 - m0))])
    return np.array([1.0, -1.0])


def contrast(scale, m1, m0):
    if scale == "ratio":
        return m1 / m0
    if scale == "odds ratio":
        return (m1 / (1 - m1)) / (m0 / (1 - m0))
    return m1 - m0


def sandwich(psi, theta, cluster):
    """V of theta from psi(theta) -> n x k; A by central differences."""
    k = len(theta)
    A = np.zeros((k, k))
    for j in range(k):
        h = 1e-6 * max(1.0, abs(theta[j]))
        up, dn = theta.copy(), theta.copy()
        up[j] += h
        dn[j] -= h
        A[:, j] = -(psi(up).mean(axis=0) - psi(dn).mean(axis=0)) / (2 * h)
    P = psi(theta)
    if cluster is None:
        Bm = P.T @ P / n
    else:
        G = np.unique(cluster)
        S = np.array([P[cluster == g].sum(axis=0) for g in G])
        Bm = S.T @ S / n * len(G) / (len(G) - 1)
    Ai = np.linalg.inv(A)
    return Ai @ Bm @ Ai.T / n


def glm_logit(yv, X, w):
    return sm.GLM(yv, X, family=sm.families.Binomial(), var_weights=w).fit(tol=1e-13).params


def standardize(yv, binary, trt, est, scale, cluster, w):
    tv = t if trt == "t" else dose
    X = design(tv)
    if binary:
        beta = glm_logit(yv, X, w)
    else:
        beta = sm.WLS(yv, X, weights=w).fit().params
    g = expit if binary else (lambda e: e)
    if trt == "t":
        X1, X0 = design(ONE), design(0 * ONE)
        s = {"ATE": ONE, "ATT": t, "ATC": 1 - t}[est]
    else:
        X1, X0, s = design(dose + 1), design(dose), ONE
    m1 = (w * s * g(X1 @ beta)).sum() / (w * s).sum()
    m0 = (w * s * g(X0 @ beta)).sum() / (w * s).sum()
    p = X.shape[1]

    def psi(th):
        b, a1, a0 = th[:p], th[p], th[p + 1]
        return w[:, None] * np.column_stack([X * (yv - g(X @ b))[:, None],
                                             s * (g(X1 @ b) - a1), s * (g(X0 @ b) - a0)])
    V = sandwich(psi, np.concatenate([beta, [m1, m0]]), cluster)
    gr = gradient(scale, m1, m0)
    return contrast(scale, m1, m0), np.sqrt(gr @ V[p:, p:] @ gr)


def ipw_weights(e, est):
    """Each row's weight as a function of the fitted propensity e."""
    if est == "ATE":
        return np.where(t == 1, 1 / e, 1 / (1 - e))
    if est == "ATT":
        return np.where(t == 1, 1.0, e / (1 - e))
    return np.where(t == 1, (1 - e) / e, 1.0)


def ipw(yv, est, scale, known, cluster, sw):
    Xp = np.column_stack([ONE, C])
    gamma = glm_logit(t, Xp, sw)
    w = sw * ipw_weights(expit(Xp @ gamma), est)
    m1 = (w * t * yv).sum() / (w * t).sum()
    m0 = (w * (1 - t) * yv).sum() / (w * (1 - t)).sum()
    q = Xp.shape[1]

    def psi(th):
        gm, a1, a0 = th[:q], th[q], th[q + 1]
        e = expit(Xp @ gm)
        wv = ipw_weights(e, est)
        return sw[:, None] * np.column_stack([Xp * (t - e)[:, None], t * wv * (yv - a1),
                                              (1 - t) * wv * (yv - a0)])
    if known:
        def psi_mu(th):
            return psi(np.concatenate([gamma, th]))[:, q:]
        V = sandwich(psi_mu, np.array([m1, m0]), cluster)
    else:
        V = sandwich(psi, np.concatenate([gamma, [m1, m0]]), cluster)[q:, q:]
    gr = gradient(scale, m1, m0)
    return contrast(scale, m1, m0), np.sqrt(gr @ V @ gr)


def aipw(yv, binary, est, scale, cluster, w):
    Xp = np.column_stack([ONE, C])
    e = expit(Xp @ glm_logit(t, Xp, w))
    X = design(t)
    if binary:
        beta = glm_logit(yv, X, w)
        g = expit
    else:
        beta = sm.WLS(yv, X, weights=w).fit().params
        g = (lambda v: v)
    f1, f0 = g(design(ONE) @ beta), g(design(0 * ONE) @ beta)
    if est == "ATE":
        a = f1 + t * (yv - f1) / e
        b = f0 + (1 - t) * (yv - f0) / (1 - e)
        s = ONE
    elif est == "ATT":
        a = t * yv
        b = t * f0 + (1 - t) * e / (1 - e) * (yv - f0)
        s = t
    else:
        a = (1 - t) * f1 + t * (1 - e) / e * (yv - f1)
        b = (1 - t) * yv
        s = 1 - t
    m1, m0 = (w * a).sum() / (w * s).sum(), (w * b).sum() / (w * s).sum()

    def psi(th):
        return w[:, None] * np.column_stack([a - s * th[0], b - s * th[1]])
    V = sandwich(psi, np.array([m1, m0]), cluster)
    gr = gradient(scale, m1, m0)
    return contrast(scale, m1, m0), np.sqrt(gr @ V @ gr)


cases = []
for est in ("ATE", "ATT", "ATC"):
    cases += [("standardize", est, "y", "t", "difference", False),
              ("standardize", est, "yb", "t", "difference", False),
              ("ipw", est, "y", "t", "difference", False),
              ("ipw", est, "y", "t", "difference", True),
              ("ipw", est, "yb", "t", "odds ratio", False),
              ("aipw", est, "y", "t", "difference", False),
              ("aipw", est, "yb", "t", "ratio", False),
              ("aipw", est, "yb", "t", "odds ratio", False)]
cases += [("standardize", "ATE", "yb", "t", "ratio", False),
          ("standardize", "ATE", "yb", "t", "odds ratio", False),
          ("standardize", "ATT", "yb", "t", "ratio", False),
          ("standardize", "ATE", "yd", "dose", "difference", False),
          ("ipw", "ATE", "yb", "t", "ratio", False),
          ("ipw", "ATT", "y", "t", "difference", True)]
clustered = [("standardize", "ATE", "y", "t", "difference", False),
             ("standardize", "ATT", "yb", "t", "ratio", False),
             ("ipw", "ATE", "y", "t", "difference", False),
             ("ipw", "ATC", "yb", "t", "odds ratio", False),
             ("aipw", "ATE", "y", "t", "difference", False)]
weighted = [("standardize", "ATE", "y", "t", "difference", False),
            ("standardize", "ATT", "yb", "t", "odds ratio", False),
            ("standardize", "ATE", "yd", "dose", "difference", False),
            ("ipw", "ATE", "y", "t", "difference", False),
            ("ipw", "ATT", "yb", "t", "ratio", False),
            ("ipw", "ATC", "y", "t", "difference", True),
            ("aipw", "ATE", "yb", "t", "difference", False),
            ("aipw", "ATC", "y", "t", "difference", False)]
runs = ([(c, False, False) for c in cases] + [(c, True, False) for c in clustered]
        + [(c, False, True) for c in weighted] + [(weighted[3], True, True)])

script = os.path.join(tmp, "run.lua")
with open(script, "w") as f:
    f.write('local d = read_csv(%r)\n' % csv)
    for (m, est, out, trt, scale, known), cl, wd in runs:
        f.write('do local r = estimate{data = d, treatment = %r, outcome = %r, set = {"w1", "w2"}, '
                'method = %r, estimand = %r, scale = %r%s%s%s}\n'
                % (trt, out, m, est, scale, ', se = "ps known"' if known else "",
                   ', cluster = "site"' if cl else "", ', weights = "wt"' if wd else ""))
        f.write('print(string.format("%.15g %.15g %s %s", r.estimate, r.se, (r.se_method:gsub(" ", "_")), '
                'tostring(r.se_log_scale))) end\n')
res = subprocess.run([os.path.join(B, "sluice"), script], capture_output=True, text=True)
if res.returncode != 0:
    print("sluice failed:", res.stderr)
    sys.exit(1)
got = [line.split() for line in res.stdout.strip().splitlines()]

passed = failed = 0
for ((m, est, out, trt, scale, known), cl, wd), g in zip(runs, got):
    yv = {"y": y, "yb": yb, "yd": yd}[out]
    cluster = site if cl else None
    w = wt if wd else ONE
    if m == "standardize":
        want, want_se = standardize(yv, out == "yb", trt, est, scale, cluster, w)
    elif m == "ipw":
        want, want_se = ipw(yv, est, scale, known, cluster, w)
    else:
        want, want_se = aipw(yv, out == "yb", est, scale, cluster, w)
    ok = abs(float(g[0]) - want) <= 1e-7 * max(1, abs(want))
    ok = ok and abs(float(g[1]) - want_se) <= 1e-6 * want_se
    ok = ok and g[2] == ("ps_known" if known else "sandwich")
    ok = ok and g[3] == ("true" if scale != "difference" else "false")
    if ok:
        passed += 1
    else:
        failed += 1
        print("MISMATCH", m, est, out, trt, scale, "known" if known else "",
              "cluster" if cl else "", "weights" if wd else "", "sluice", g, "reference",
              want, want_se)
print("%d passed, %d failed" % (passed, failed))
sys.exit(1 if failed else 0)
