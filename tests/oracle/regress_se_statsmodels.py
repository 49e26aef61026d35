#!/usr/bin/python3
"""regress_se_statsmodels.py: the standard errors, weights, intervals and
odds ratios of ols{} and logit{} against statsmodels.

Reference: statsmodels 0.13.5 (Debian python3-statsmodels) on its bundled
datasets:
  - Grunfeld (1958) investment data, sm.datasets.grunfeld: invest on value
    and capital, 220 rows, clustered by firm (11 clusters: also the warning
    below 30);
  - Fair (1978) affairs, sm.datasets.fair: 6366 rows (several blocks of
    sluice's streamed factorization); rate_marriage on the others (least
    squares), (affairs > 0) on them (logit); clusters: the 36 pairs of
    occupation and husband's occupation; weights: yrs_married (0.5 to 23);
  - Spector and Mazzeo (1980), sm.datasets.spector: GRADE on GPA, TUCE, PSI.
What each sluice number is checked against:
  - ols{} se = "classical", "HC0", "HC1", "HC3", "cluster": sm.OLS(y, X)
    .fit(cov_type=..., use_t=True): params, bse, pvalues, conf_int (t with
    n - p degrees of freedom; G - 1 for clusters, statsmodels' df_correction);
  - ols{} weights = "w": the point estimate and classical SEs of
    sm.GLM(y, X, family=Gaussian(), freq_weights=w) (frequency weights:
    sigma^2 = sum w e^2 / (sum w - p)); the robust and cluster SEs of
    sm.WLS(y, X, weights=w).fit(cov_type=...) (sampling weights: scores
    w_i e_i x_i);
  - logit{} classical, HC0 and cluster: sm.Logit(y, X).fit(cov_type=...):
    params, bse, pvalues, conf_int (normal), odds ratios exp(params) and
    exp(conf_int); with weights, sm.GLM(y, X, family=Binomial(),
    freq_weights=w) (classical) and var_weights=w with cov_type (HC0,
    cluster);
  - logit{} HC1 and HC3: statsmodels 0.13.5 returns its HC0 for
    cov_type="HC1"/"HC3" on Logit and GLM (checked below), so these are
    built here from statsmodels' GLM pieces, as the sandwich package of R
    defines them for a GLM (Zeileis 2006, J. Stat. Software 16(9), from
    memory): HC1 = HC0 n / (n - p); HC3 with each score divided by 1 - h_i,
    h_i from GLMResults.get_hat_matrix_diag() (the weighted working design);
  - the cluster factor G/(G-1) (n-1)/(n-p) of statsmodels'
    stats/sandwich_covariance.py cov_cluster (use_correction=True), which
    OLS, WLS, GLM and Logit share: checked here against the plain
    Liang-Zeger sum for Logit;
  - Kish's effective sample size (sum w)^2 / sum w^2 (Kish 1965), numpy.
Agreement required: 1e-6 relative (for a value nearer zero than its
standard error, 1e-6 of the standard error).  Run with env B=<build dir>.
Prints "N passed, M failed"; exits non-zero on any failure; "skipped:
statsmodels not installed" and exit 0 without it.
"""
import math
import warnings
import os
import sys
import tempfile

sys.path.insert(0, os.path.join(os.path.dirname(os.path.abspath(__file__)), "..", "lib"))
from oracle import sluice_path, run_queries  # noqa: E402

try:
    import numpy as np
    import statsmodels.api as sm
    from scipy import stats
except ImportError:
    print("skipped: statsmodels not installed")
    sys.exit(0)

TOL = 1e-6
warnings.filterwarnings("ignore", message="cov_type not fully supported with var_weights")
passed = 0
failed = 0


def check(ok, what):
    global passed, failed
    if ok:
        passed += 1
    else:
        failed += 1
        print("FAIL", what)


def close(a, b, scale=0.0):
    floor = max(abs(b), scale)
    if not (math.isfinite(a) and math.isfinite(b)):
        return a == b
    return abs(a - b) <= TOL * floor if floor > 0 else a == b


# ---- data: statsmodels' bundled datasets, written as CSV for sluice ----

tmp = tempfile.mkdtemp()
grun = sm.datasets.grunfeld.load_pandas().data
grun_csv = os.path.join(tmp, "grunfeld.csv")
grun.to_csv(grun_csv, index=False)

fair = sm.datasets.fair.load_pandas().data.copy()
fair["any"] = (fair["affairs"] > 0).astype(float)
fair["pair"] = (fair["occupation"] * 10 + fair["occupation_husb"]).astype(int)
fair_csv = os.path.join(tmp, "fair.csv")
fair.to_csv(fair_csv, index=False, float_format="%.17g")

spec = sm.datasets.spector.load_pandas().data
spec_csv = os.path.join(tmp, "spector.csv")
spec.to_csv(spec_csv, index=False, float_format="%.17g")

FAIR_X = ["age", "yrs_married", "children", "religious", "educ"]
frames = {"grun": (grun_csv, grun), "fair": (fair_csv, fair), "spec": (spec_csv, spec)}

# (id, kind, frame, y, x, se, cluster, weights, level)
cases = [
    ("ols_grun_classical", "ols", "grun", "invest", ["value", "capital"], "classical", None, None, 0.95),
    ("ols_grun_hc0", "ols", "grun", "invest", ["value", "capital"], "HC0", None, None, 0.95),
    ("ols_grun_hc1", "ols", "grun", "invest", ["value", "capital"], "HC1", None, None, 0.95),
    ("ols_grun_hc3", "ols", "grun", "invest", ["value", "capital"], "HC3", None, None, 0.9),
    ("ols_grun_cluster", "ols", "grun", "invest", ["value", "capital"], "cluster", "firm", None, 0.95),
    ("ols_fair_classical", "ols", "fair", "rate_marriage", FAIR_X, "classical", None, None, 0.95),
    ("ols_fair_hc1", "ols", "fair", "rate_marriage", FAIR_X, "HC1", None, None, 0.95),
    ("ols_fair_hc3", "ols", "fair", "rate_marriage", FAIR_X, "HC3", None, None, 0.95),
    ("ols_fair_cluster", "ols", "fair", "rate_marriage", FAIR_X, "cluster", "pair", None, 0.95),
    ("wls_fair_classical", "ols", "fair", "rate_marriage", FAIR_X[:1] + FAIR_X[2:], "classical", None,
     "yrs_married", 0.95),
    ("wls_fair_hc0", "ols", "fair", "rate_marriage", FAIR_X[:1] + FAIR_X[2:], "HC0", None, "yrs_married", 0.95),
    ("wls_fair_hc1", "ols", "fair", "rate_marriage", FAIR_X[:1] + FAIR_X[2:], "HC1", None, "yrs_married", 0.95),
    ("wls_fair_hc3", "ols", "fair", "rate_marriage", FAIR_X[:1] + FAIR_X[2:], "HC3", None, "yrs_married", 0.95),
    ("wls_fair_cluster", "ols", "fair", "rate_marriage", FAIR_X[:1] + FAIR_X[2:], "cluster", "pair",
     "yrs_married", 0.95),
    ("logit_spec_classical", "logit", "spec", "GRADE", ["GPA", "TUCE", "PSI"], "classical", None, None, 0.95),
    ("logit_spec_hc0", "logit", "spec", "GRADE", ["GPA", "TUCE", "PSI"], "HC0", None, None, 0.9),
    ("logit_spec_hc1", "logit", "spec", "GRADE", ["GPA", "TUCE", "PSI"], "HC1", None, None, 0.95),
    ("logit_spec_hc3", "logit", "spec", "GRADE", ["GPA", "TUCE", "PSI"], "HC3", None, None, 0.95),
    ("logit_fair_classical", "logit", "fair", "any", ["rate_marriage"] + FAIR_X, "classical", None, None, 0.95),
    ("logit_fair_hc3", "logit", "fair", "any", ["rate_marriage"] + FAIR_X, "HC3", None, None, 0.95),
    ("logit_fair_cluster", "logit", "fair", "any", ["rate_marriage"] + FAIR_X, "cluster", "pair", None, 0.95),
    ("wlogit_fair_classical", "logit", "fair", "any", ["rate_marriage", "age", "children"], "classical",
     None, "yrs_married", 0.95),
    ("wlogit_fair_hc0", "logit", "fair", "any", ["rate_marriage", "age", "children"], "HC0", None,
     "yrs_married", 0.95),
    ("wlogit_fair_hc1", "logit", "fair", "any", ["rate_marriage", "age", "children"], "HC1", None,
     "yrs_married", 0.95),
    ("wlogit_fair_hc3", "logit", "fair", "any", ["rate_marriage", "age", "children"], "HC3", None,
     "yrs_married", 0.95),
    ("wlogit_fair_cluster", "logit", "fair", "any", ["rate_marriage", "age", "children"], "cluster", "pair",
     "yrs_married", 0.95),
]

FIELDS = ["coef", "se", "p", "lo", "hi", "odds_ratio", "or_lo", "or_hi"]


def lua_script():
    """One line per case: "ID key=value ..." (run_queries keeps one line per id)."""
    lines = ['local frames = {grun = read_csv(%r), fair = read_csv(%r), spec = read_csv(%r)}'
             % (grun_csv, fair_csv, spec_csv),
             'local function out(t, k, v) t[#t + 1] = string.format("%s=%.17g", k, v) end']
    for i, (cid, kind, fr, y, x, se, cl, w, level) in enumerate(cases):
        opts = ['data = frames.%s' % fr, 'y = %r' % y,
                'x = {%s}' % ", ".join('"%s"' % v for v in x), 'level = %r' % level]
        if cl:
            opts.append('cluster = "%s"' % cl)   # se = "cluster" implied
        else:
            opts.append('se = "%s"' % se)
        if w:
            opts.append('weights = "%s"' % w)
        terms = ["(intercept)"] + x
        body = ['local m = %s{%s}' % (kind, ", ".join(opts)), 'local t = {"method=" .. m.se_method}']
        for f in FIELDS:
            if kind == "ols" and f.startswith("o"):
                continue
            for j, term in enumerate(terms):
                body.append('out(t, "%s.%d", m.%s["%s"])' % (f, j, f, term))
        body.append('out(t, "ess", m.ess or 0)')
        body.append('out(t, "df", m.df or -1)')
        body.append('print(%d .. " " .. table.concat(t, " "))' % i)
        lines.append("do " + "; ".join(body) + " end")
    return lines


def parse(rest):
    got = {}
    for item in rest.split():
        k, _, v = item.partition("=")
        got[k] = v if k == "method" else float(v)
    return got


# ---- the reference of each case ----

def glm_hc(res, X, kind, w=None):
    """HC1 or HC3 of a binomial GLM from statsmodels' pieces: scores
    w_i (y_i - mu_i) x_i (score_obs), the inverse Hessian (cov_params of the
    nonrobust fit) and the hat values of the weighted working design."""
    s = res.model.score_obs(res.params)
    bread = res.cov_params()
    n, p = X.shape
    if w is not None:
        n = int(np.sum(w > 0))
    if kind == "HC1":
        meat = s.T @ s * n / (n - p)
    else:
        h = res.get_hat_matrix_diag()
        sh = s / (1 - h)[:, None]
        meat = sh.T @ sh
    return np.sqrt(np.diag(bread @ meat @ bread))


def reference(case):
    cid, kind, fr, y, x, se, cl, w, level = case
    d = frames[fr][1]
    X = sm.add_constant(d[x].to_numpy(float), has_constant="add")
    yv = d[y].to_numpy(float)
    wv = d[w].to_numpy(float) if w else None
    n, p = X.shape
    kw = {}
    if se == "cluster":
        groups = np.unique(d[cl].astype(str).to_numpy(), return_inverse=True)[1]
        kw = {"cov_type": "cluster", "cov_kwds": {"groups": groups}}
    elif se != "classical":
        kw = {"cov_type": se}
    ref = {}
    if kind == "ols":
        if w is None:
            r = sm.OLS(yv, X).fit(use_t=True, **kw)
            bse, df = r.bse, r.df_resid
        elif se == "classical":
            r = sm.GLM(yv, X, family=sm.families.Gaussian(), freq_weights=wv).fit()
            bse, df = r.bse, np.sum(wv) - p
        else:
            r = sm.WLS(yv, X, weights=wv).fit(use_t=True, **kw)
            bse, df = r.bse, r.df_resid
        if se == "cluster":
            df = r.df_resid_inference   # G - 1 (statsmodels' df_correction)
            ref["df_check"] = len(np.unique(groups)) - 1
        params = r.params
        q = stats.t.ppf(0.5 + level / 2, df)
        pv = 2 * stats.t.sf(np.abs(params / bse), df)
        ref["df"] = df
    else:
        if se in ("HC1", "HC3"):
            fam = sm.families.Binomial()
            r = (sm.GLM(yv, X, family=fam, var_weights=wv) if w else sm.GLM(yv, X, family=fam)).fit(tol=1e-12)
            bse = glm_hc(r, X, se, wv)
        elif w is None:
            r = sm.Logit(yv, X).fit(disp=0, method="newton", tol=1e-12, maxiter=200, **kw)
            bse = r.bse
        elif se == "classical":
            r = sm.GLM(yv, X, family=sm.families.Binomial(), freq_weights=wv).fit(tol=1e-12)
            bse = r.bse
        else:
            r = sm.GLM(yv, X, family=sm.families.Binomial(), var_weights=wv).fit(tol=1e-12, **kw)
            bse = r.bse
        params = r.params
        q = stats.norm.ppf(0.5 + level / 2)
        pv = 2 * stats.norm.sf(np.abs(params / bse))
        ref["df"] = -1
    ref["coef"], ref["se"], ref["p"] = params, bse, pv
    ref["lo"], ref["hi"] = params - q * bse, params + q * bse
    # the interval's ends as statsmodels gives them where it can
    if kind == "ols" and not (w and se == "classical"):
        ci = r.conf_int(alpha=1 - level)
        check(np.allclose(ci[:, 0], ref["lo"], rtol=1e-12) and np.allclose(ci[:, 1], ref["hi"], rtol=1e-12),
              "%s: statsmodels' conf_int is coef -+ t q se" % cid)
    if kind == "logit":
        ref["odds_ratio"] = np.exp(params)
        ref["or_lo"], ref["or_hi"] = np.exp(ref["lo"]), np.exp(ref["hi"])
        if w is None and se in ("classical", "HC0", "cluster"):
            ci = r.conf_int(alpha=1 - level)
            check(np.allclose(ci[:, 0], ref["lo"], rtol=1e-9), "%s: statsmodels' conf_int" % cid)
    ref["ess"] = np.sum(wv) ** 2 / np.sum(wv ** 2) if w else 0.0
    ref["method"] = se
    return ref


def compare(case, got, ref):
    cid, kind = case[0], case[1]
    p = len(ref["coef"])
    for f in FIELDS:
        if kind == "ols" and f.startswith("o"):
            continue
        for j in range(p):
            key = "%s.%d" % (f, j)
            g = got.get(key)
            r = float(ref[f][j])
            scale = 0.0
            if f in ("coef", "lo", "hi"):
                scale = float(ref["se"][j])
            elif f in ("odds_ratio", "or_lo", "or_hi"):
                scale = float(ref["odds_ratio"][j] * ref["se"][j])
            elif f == "p":
                scale = 1e-12   # p-values underflow alike
            check(g is not None and close(g, r, scale),
                  "%s %s: sluice %r statsmodels %r" % (cid, key, g, r))
    check(close(got.get("ess", -9), float(ref["ess"])), "%s ess: %r vs %r" % (cid, got.get("ess"), ref["ess"]))
    check(close(got.get("df", -9), float(ref["df"])), "%s df: %r vs %r" % (cid, got.get("df"), ref["df"]))
    if "df_check" in ref:
        check(ref["df"] == ref["df_check"], "%s: statsmodels' cluster df is G - 1" % cid)
    check(got.get("method") == ref["method"], "%s se_method %r" % (cid, got.get("method")))


def statsmodels_facts():
    """What the comments above claim of statsmodels itself."""
    X = sm.add_constant(spec[["GPA", "TUCE", "PSI"]].to_numpy(float))
    yv = spec["GRADE"].to_numpy(float)
    hc0 = sm.Logit(yv, X).fit(disp=0, cov_type="HC0").bse
    for k in ("HC1", "HC3"):
        check(np.allclose(sm.Logit(yv, X).fit(disp=0, cov_type=k).bse, hc0, rtol=1e-12),
              "statsmodels 0.13 gives HC0 for Logit %s" % k)
    # the cluster factor of Logit: the Liang-Zeger sum times G/(G-1) (n-1)/(n-p)
    Xf = sm.add_constant(fair[["rate_marriage"] + FAIR_X].to_numpy(float))
    yf = fair["any"].to_numpy(float)
    g = np.unique(fair["pair"].to_numpy(), return_inverse=True)[1]
    r = sm.Logit(yf, Xf).fit(disp=0, cov_type="cluster", cov_kwds={"groups": g})
    s = r.model.score_obs(r.params)
    G, (n, p) = g.max() + 1, Xf.shape
    S = np.zeros((G, p))
    np.add.at(S, g, s)
    bread = np.linalg.inv(-r.model.hessian(r.params))
    lz = np.sqrt(np.diag(bread @ S.T @ S @ bread) * G / (G - 1) * (n - 1) / (n - p))
    check(np.allclose(lz, r.bse, rtol=1e-9), "statsmodels' Logit cluster factor is G/(G-1) (n-1)/(n-p)")


def main():
    statsmodels_facts()
    answers = run_queries(sluice_path(), "regress_se", lua_script(), 300)
    if answers is None:
        print("%d passed, %d failed" % (passed, failed + 1))
        sys.exit(1)
    for i, case in enumerate(cases):
        if i not in answers:
            check(False, "%s: no answer from sluice" % case[0])
            continue
        compare(case, parse(answers[i]), reference(case))
    print("%d passed, %d failed" % (passed, failed))
    sys.exit(1 if failed else 0)


if __name__ == "__main__":
    main()
