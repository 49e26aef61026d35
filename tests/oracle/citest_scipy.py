#!/usr/bin/python3
"""citest_scipy.py: the tests of g:test against scipy and statsmodels
(Debian python3-scipy 1.10.1, python3-statsmodels 0.13.5, python3-numpy).

On simulated data (continuous, binary, three-level text and three-level
numeric columns, with missing values dropped per implication):
- partial correlation: numpy least-squares residuals of a and b on
  [1, given] (text columns as dummies) and scipy.stats.pearsonr of the
  residuals; Fisher's z = atanh(r) sqrt(n - k - 3), p = 2 norm.sf(|z|),
  interval tanh(atanh(r) -+ 1.96.. / sqrt(n - k - 3)) (Fisher 1924);
- LR tests: statsmodels Logit / OLS fits of response ~ given and
  response ~ given + other, LR = 2 (llf1 - llf0), p = chi2.sf(LR, df), the
  effect sqrt(1 - exp(-LR / n)) signed by the last coefficient when df = 1;
- G-test: scipy.stats.chi2_contingency(table, correction=False,
  lambda_="log-likelihood") per stratum of given, summed, after removing
  the empty rows and columns of each stratum (their convention: df counts
  only non-empty rows and columns, and a stratum with fewer than two of
  either contributes nothing);
- method = "residual": scipy.stats.spearmanr of the residuals; p from t
  with n - k - 2 df (scipy's own p when k = 0);
- p adjusted: statsmodels.stats.multitest.multipletests(p, method="holm")
  and method="fdr_bh".
Tolerance 1e-8 relative (1e-6 for the logistic fits, whose iterations stop
at different points).  Prints "N passed, M failed"; env B = build dir.
"""
import math
import os
import sys
import tempfile

sys.path.insert(0, os.path.join(os.path.dirname(os.path.abspath(__file__)), "..", "lib"))
from oracle import lua_list, run_queries, sluice_path  # noqa: E402

try:
    import numpy as np
    import scipy.stats as st
    import statsmodels.api as sm
    from statsmodels.stats.multitest import multipletests
except ImportError:
    print("skipped: scipy or statsmodels not installed")
    sys.exit(0)

rng = np.random.default_rng(20260311)
n = 1500
site = rng.integers(0, 3, size=n)
d1 = rng.integers(0, 3, size=n)
x3 = rng.normal(size=n)
x4 = rng.normal(size=n) + 0.3 * site
x1 = 0.5 * x3 - 0.4 * x4 + 0.3 * site + rng.normal(size=n)
x2 = 0.6 * x3 + 0.2 * x1 + rng.normal(size=n)
b1 = (rng.random(n) < 1 / (1 + np.exp(-(0.4 * x2 - 0.3 * site)))).astype(float)
b2 = (rng.random(n) < 0.3 + 0.2 * b1).astype(float)
b2[d1 == 2] = 1.0                     # stratum d1 = 2 has one column of b2
x3[rng.random(n) < 0.05] = np.nan     # missing values, dropped per implication
names = ["north", "east", "south"]
cols = {"x1": x1, "x2": x2, "x3": x3, "x4": x4, "b1": b1, "b2": b2}

tmp = tempfile.mkdtemp()
csv = os.path.join(tmp, "trial.csv")
with open(csv, "w") as f:
    f.write("x1,x2,x3,x4,b1,b2,d1,site\n")   # d1 as text: a numeric column is continuous

    for i in range(n):
        vals = ["" if np.isnan(cols[k][i]) else "%.17g" % cols[k][i]
                for k in ["x1", "x2", "x3", "x4", "b1", "b2"]]
        f.write(",".join(vals) + ",d%d," % d1[i] + names[site[i]] + "\n")

# (a, b, given, method)
cases = [
    ("x1", "x2", [], "auto"),
    ("x1", "x2", ["x3"], "auto"),
    ("x1", "x2", ["x3", "x4"], "auto"),
    ("x1", "x2", ["x4", "site"], "auto"),
    ("b1", "x1", ["x2"], "auto"),         # logistic, response b1
    ("x1", "b1", ["x2", "site"], "auto"), # logistic, response b1
    ("b1", "site", ["x2"], "auto"),       # logistic, df 2
    ("x1", "site", ["x2"], "auto"),       # linear, df 2
    ("x1", "x2", ["x3"], "lr"),           # linear, df 1: the partial correlation
    ("b1", "b2", ["d1"], "auto"),         # G-test with an empty column in a stratum
    ("site", "d1", [], "auto"),           # G-test, 3 x 3
    ("b1", "site", ["d1"], "gtest"),
    ("x1", "x2", [], "residual"),
    ("x1", "x2", ["x3", "site"], "residual"),
]

LEVEL = 0.95
Q = st.norm.ppf(1 - (1 - LEVEL) / 2)


def column(name, rows):
    if name == "site":
        return site[rows].astype(float)
    if name == "d1":
        return d1[rows].astype(float)
    return cols[name][rows]


def design(given, rows):
    parts = [np.ones(len(rows))]
    for g in given:
        if g in ("site", "d1"):
            s = (site if g == "site" else d1)[rows]
            used = sorted(set(s))
            for lv in used[1:]:
                parts.append((s == lv).astype(float))
        else:
            parts.append(cols[g][rows])
    return np.column_stack(parts)


def complete(names_):
    ok = np.ones(n, dtype=bool)
    for c in names_:
        if c not in ("site", "d1"):
            ok &= ~np.isnan(cols[c])
    return np.nonzero(ok)[0]


def resid(y, X):
    beta, *_ = np.linalg.lstsq(X, y, rcond=None)
    return y - X @ beta


def reference(a, b, given, method):
    rows = complete([a, b] + given)
    m = len(rows)
    out = {"n": m, "dropped": n - m}
    X = design(given, rows)
    k = X.shape[1] - 1
    discrete = all(c in ("b1", "b2", "d1", "site") for c in [a, b] + given)
    if method == "gtest" or (method == "auto" and discrete):
        strata = {}
        for i in rows:
            key = tuple(int(column(g, np.array([i]))[0]) for g in given)
            strata.setdefault(key, []).append(i)
        g_sum, df = 0.0, 0
        for key, idx in strata.items():
            idx = np.array(idx)
            va, vb = column(a, idx).astype(int), column(b, idx).astype(int)
            t = np.zeros((va.max() + 1, vb.max() + 1))
            np.add.at(t, (va, vb), 1)
            t = t[t.sum(axis=1) > 0][:, t.sum(axis=0) > 0]
            if t.shape[0] < 2 or t.shape[1] < 2:
                continue
            stat, _, dof, _ = st.chi2_contingency(t, correction=False, lambda_="log-likelihood")
            g_sum += stat
            df += dof
        out.update(test="G-test", stat=g_sum, df=df, p=st.chi2.sf(g_sum, df),
                   effect=math.sqrt(1 - math.exp(-g_sum / m)))
        return out
    ya, yb = column(a, rows), column(b, rows)
    if method in ("auto", "residual") and a not in ("b1", "site") and b not in ("b1", "site"):
        ra, rb = resid(ya, X), resid(yb, X)
        if method == "residual":
            rho, p0 = st.spearmanr(ra, rb)
            df = m - k - 2
            t = rho * math.sqrt(df / (1 - rho * rho))
            p = 2 * st.t.sf(abs(t), df)
            if k == 0:
                assert abs(p - p0) <= 1e-12 * max(p0, 1e-300), (p, p0)
            se = math.sqrt(1.06 / (m - k - 3))
            out.update(test="rank residual", effect=rho, stat=t, df=df, p=p)
        else:
            r, _ = st.pearsonr(ra, rb)
            se = 1 / math.sqrt(m - k - 3)
            z = math.atanh(r) / se
            out.update(test="partial r", effect=r, stat=z, p=2 * st.norm.sf(abs(z)))
        zr = math.atanh(out["effect"])
        out["lo"], out["hi"] = math.tanh(zr - Q * se), math.tanh(zr + Q * se)
        return out
    # the LR test: a binary response first, else a continuous one
    resp, other = (a, b) if a == "b1" or (b != "b1" and a != "site") else (b, a)
    y = column(resp, rows)
    X1 = np.column_stack([X, design([other], rows)[:, 1:]])
    if resp == "b1":
        f0 = sm.Logit(y, X).fit(disp=0, tol=1e-12, maxiter=200)
        f1 = sm.Logit(y, X1).fit(disp=0, tol=1e-12, maxiter=200)
        test = "LR logistic"
    else:
        f0, f1 = sm.OLS(y, X).fit(), sm.OLS(y, X1).fit()
        test = "LR linear"
    lr = 2 * (f1.llf - f0.llf)
    df = X1.shape[1] - X.shape[1]
    eff = math.sqrt(1 - math.exp(-lr / m))
    if df == 1:
        eff = math.copysign(eff, f1.params[-1])
    out.update(test=test, stat=lr, df=df, p=st.chi2.sf(lr, df), effect=eff, response=resp)
    if test == "LR linear" and df == 1:
        se = 1 / math.sqrt(m - (X1.shape[1] - 2) - 3)
        out["lo"], out["hi"] = math.tanh(math.atanh(eff) - Q * se), math.tanh(math.atanh(eff) + Q * se)
    return out


def main():
    lines = ['local f = read_csv("%s")' % csv, 'local g = graph "x1; x2"',
             "local function num(v) return v == nil and 'nil' or string.format('%.17g', v) end"]
    for i, (a, b, given, method) in enumerate(cases):
        lines.append('local t = g:test(f, {method = "%s", implications = {{a = "%s", b = "%s", '
                     'given = %s}}})' % (method, a, b, lua_list(given)))
        lines.append("local r = t[1]")
        lines.append('print("%d " .. table.concat({r.test:gsub(" ", "_"), r.n, r.dropped, num(r.effect), num(r.lo), '
                     'num(r.hi), num(r.stat), num(r.df), num(r.p), tostring(r.response)}, " "))' % i)
    # one run of all cases together for the adjusted p-values
    imps = ",".join('{a = "%s", b = "%s", given = %s}' % (a, b, lua_list(g))
                    for a, b, g, m in cases if m == "auto")
    for adj in ("holm", "bh"):
        lines.append('local t = g:test(f, {adjust = "%s", implications = {%s}})' % (adj, imps))
        lines.append('for i, r in ipairs(t) do print((%d + i) .. " " .. num(r.p) .. " " .. '
                     'num(r.p_adj)) end' % (1000 if adj == "holm" else 2000))
    got = run_queries(sluice_path(), "citest", lines, 120)
    if got is None:
        print("0 passed, 1 failed")
        sys.exit(1)
    passed = failed = 0

    def check(ok, what):
        nonlocal passed, failed
        if ok:
            passed += 1
        else:
            failed += 1
            print("FAIL:", what)

    def close(x, ref, tol):
        if ref is None or (isinstance(ref, float) and math.isnan(ref)):
            return x == "nil"
        x = float(x)
        return abs(x - ref) <= tol * max(abs(ref), 1e-300) or abs(x - ref) <= 1e-300

    for i, (a, b, given, method) in enumerate(cases):
        ref = reference(a, b, given, method)
        f = got.get(i, "").split(" ")
        what = "%s _||_ %s | %s (%s)" % (a, b, ",".join(given), method)
        if len(f) < 10:
            check(False, what + ": no answer: " + got.get(i, ""))
            continue
        test, nn, dropped, eff, lo, hi, stat, df, p, response = f[:10]
        test = test.replace("_", " ")
        tol = 1e-6 if ref["test"] == "LR logistic" else 1e-8
        check(test == ref["test"], what + ": test %s, expected %s" % (test, ref["test"]))
        check(int(nn) == ref["n"] and int(dropped) == ref["dropped"],
              what + ": n %s dropped %s, expected %d %d" % (nn, dropped, ref["n"], ref["dropped"]))
        for name, x, r in (("effect", eff, ref["effect"]), ("lo", lo, ref.get("lo")),
                           ("hi", hi, ref.get("hi")), ("stat", stat, ref["stat"]),
                           ("df", df, ref.get("df")), ("p", p, ref["p"])):
            check(close(x, r, tol), "%s: %s %s, expected %r" % (what, name, x, r))
        if "response" in ref:
            check(response == ref["response"], what + ": response " + response)
    for base, method in ((1000, "holm"), (2000, "fdr_bh")):
        ps, adj = [], []
        i = 1
        while base + i in got:
            pv, pa = got[base + i].split(" ")
            ps.append(float(pv))
            adj.append(float(pa))
            i += 1
        ref = multipletests(ps, method=method)[1]
        check(len(ps) == sum(1 for c in cases if c[3] == "auto"), method + ": count")
        for i, (x, r) in enumerate(zip(adj, ref)):
            check(abs(x - r) <= 1e-12 * max(r, 1e-300), "%s p_adj %d: %r, expected %r" % (method, i, x, r))
    print("%d passed, %d failed" % (passed, failed))
    sys.exit(1 if failed else 0)


main()
