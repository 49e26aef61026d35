#!/usr/bin/python3
"""logit_statsmodels.py: sl_logit and sl_ols checked against statsmodels.

Reference: statsmodels (Debian's python3-statsmodels, 0.13.5 here) on its
bundled datasets:
  - Spector and Mazzeo (1980), sm.datasets.spector: GRADE on GPA, TUCE, PSI;
  - Fair (1978) affairs, sm.datasets.fair: (affairs > 0) on the other eight
    columns (6366 rows: several blocks of sluice's streamed factorization);
  - American National Election Studies 1996, sm.datasets.anes96: vote on
    the other columns but popul (logpopul is its log);
  - Longley (1967), sm.datasets.longley, for least squares.
Logit: sm.Logit(y, X).fit() coefficients, bse (inverse Fisher information),
llf, and fit(cov_type='HC0') bse against coef, se, loglik and robust_se.
Prior weights: sm.GLM(y, X, family=Binomial(), freq_weights=w).fit().
Least squares: sm.OLS(y, X).fit() params, bse, rsquared, rsquared_adj and
fit(cov_type='HC3') bse against coef, se, r2, adj_r2 and robust_se.
Separation: statsmodels raises PerfectSeparationError where sluice must
return a fit with a warning naming separation.

sluice is reached through a small C driver (tests/oracle/logit_driver.c),
compiled here against $B/libsluice.a, that reads the table as CSV on stdin.
Agreement required: 1e-8 relative (for a coefficient nearer zero than its
standard error, 1e-8 of the standard error).  Run with env B=<build dir>
(default "build").  Prints "N passed, M failed"; exits non-zero on any
failure; prints "skipped: statsmodels not installed" and exits 0 without it.
"""
import os
import subprocess
import sys

try:
    import numpy as np
    import statsmodels.api as sm
    from statsmodels.tools.sm_exceptions import PerfectSeparationError
except ImportError:
    print("skipped: statsmodels not installed")
    sys.exit(0)

TOL = 1e-8
ROOT = os.path.dirname(os.path.dirname(os.path.dirname(os.path.abspath(__file__))))
B = os.environ.get("B", "build")
if not os.path.isabs(B):
    B = os.path.join(ROOT, B)
DRIVER = os.path.join(B, "logit_driver")

passed = 0
failed = 0


def check(ok, what):
    global passed, failed
    if ok:
        passed += 1
    else:
        failed += 1
        print("FAIL", what)


def build_driver():
    """Compile the driver; against a sanitizer build (make asan sets
    SLUICE_ASAN, or a plain link fails) with the same sanitizers."""
    libs = subprocess.run(["pkg-config", "--libs", "libgvc", "sqlite3", "plplot", "libsodium"],
                          capture_output=True, text=True).stdout.split()
    cmd = (["cc", "-std=c11", "-O2", "-Isrc/graph", "-Isrc/stats", "tests/oracle/logit_driver.c",
            os.path.join(B, "libsluice.a")] + libs +
           ["-lcsv", "-lgsl", "-lopenblas", "-lpthread", "-lm", "-o", DRIVER])
    san = ["-fsanitize=address,undefined", "-fno-omit-frame-pointer"]
    tries = [cmd[:1] + san + cmd[1:], cmd] if os.environ.get("SLUICE_ASAN") else \
        [cmd, cmd[:1] + san + cmd[1:]]
    for c in tries:
        r = subprocess.run(c, cwd=ROOT, capture_output=True, text=True)
        if r.returncode == 0:
            return
    print("cannot build the driver:", " ".join(tries[0]))
    print(r.stderr)
    sys.exit(1)


def run_driver(mode, y, X, w=None):
    """X without the intercept column (the driver adds it)."""
    cols = [np.asarray(y, float)] + ([np.asarray(w, float)] if w is not None else []) + \
        [np.asarray(X[:, j], float) for j in range(X.shape[1])]
    table = "\n".join(",".join(repr(float(c[i])) for c in cols) for i in range(len(y))) + "\n"
    args = [DRIVER, mode] + (["weights"] if w is not None else [])
    r = subprocess.run(args, input=table, capture_output=True, text=True, timeout=120)
    if r.returncode != 0:
        print("driver failed:", r.stdout, r.stderr)
        return None
    out = {}
    for line in r.stdout.splitlines():
        key, _, rest = line.partition(" ")
        if key == "warn":
            out[key] = rest
        else:
            vals = [float(v) for v in rest.split()]
            out[key] = vals if key in ("coef", "se", "robust_se") else vals[0]
    return out


def close(a, b, scale=None):
    floor = abs(b) if scale is None else max(abs(b), scale)
    return abs(a - b) <= TOL * floor if floor > 0 else a == b


def compare_vec(name, got, ref, se=None):
    worst = 0.0
    ok = len(got) == len(ref)
    for j in range(min(len(got), len(ref))):
        s = None if se is None else se[j]
        ok = ok and close(got[j], ref[j], s)
        floor = abs(ref[j]) if s is None else max(abs(ref[j]), s)
        if floor > 0:
            worst = max(worst, abs(got[j] - ref[j]) / floor)
    check(ok, f"{name}: sluice {got} statsmodels {list(ref)}")
    return worst


def logit_case(name, y, X):
    Xc = sm.add_constant(X, has_constant="add")
    ref = sm.Logit(y, Xc).fit(disp=0, method="newton", tol=1e-12, maxiter=200)
    hc0 = sm.Logit(y, Xc).fit(disp=0, method="newton", tol=1e-12, maxiter=200, cov_type="HC0")
    got = run_driver("logit", y, X)
    check(got is not None, f"{name}: driver ran")
    if got is None:
        return
    w = [compare_vec(f"{name} coef", got["coef"], ref.params, ref.bse),
         compare_vec(f"{name} se", got["se"], ref.bse),
         compare_vec(f"{name} HC0 se", got["robust_se"], hc0.bse)]
    check(close(got["loglik"], ref.llf), f"{name} loglik: {got['loglik']} vs {ref.llf}")
    check(got["converged"] == 1 and got["warn"] == "", f"{name}: converged without warnings")
    print(f"{name}: logit n={len(y)} p={Xc.shape[1]}, {int(got['iterations'])} iterations; "
          f"largest relative difference coef {w[0]:.2g}, se {w[1]:.2g}, HC0 {w[2]:.2g}, "
          f"loglik {abs(got['loglik'] - ref.llf) / abs(ref.llf):.2g}")


def weighted_case(name, y, X, w):
    Xc = sm.add_constant(X, has_constant="add")
    ref = sm.GLM(y, Xc, family=sm.families.Binomial(), freq_weights=w).fit(tol=1e-13, maxiter=200)
    got = run_driver("logit", y, X, w)
    check(got is not None, f"{name}: driver ran")
    if got is None:
        return
    a = compare_vec(f"{name} weighted coef", got["coef"], ref.params, ref.bse)
    b = compare_vec(f"{name} weighted se", got["se"], ref.bse)
    check(close(got["loglik"], ref.llf), f"{name} weighted loglik: {got['loglik']} vs {ref.llf}")
    print(f"{name}: weighted logit (GLM freq_weights): coef {a:.2g}, se {b:.2g}")


def ols_case(name, y, X, tol_hc3=TOL):
    Xc = sm.add_constant(X, has_constant="add")
    ref = sm.OLS(y, Xc).fit()
    h3 = sm.OLS(y, Xc).fit(cov_type="HC3")
    got = run_driver("ols", y, X)
    check(got is not None, f"{name}: driver ran")
    if got is None:
        return
    a = compare_vec(f"{name} OLS coef", got["coef"], ref.params, ref.bse)
    b = compare_vec(f"{name} OLS se", got["se"], ref.bse)
    ok, c = True, 0.0
    for g, r in zip(got["robust_se"], h3.bse):
        ok = ok and abs(g - r) <= tol_hc3 * abs(r)
        c = max(c, abs(g - r) / abs(r))
    check(ok, f"{name} OLS HC3 se: sluice {got['robust_se']} statsmodels {list(h3.bse)}")
    check(close(got["r2"], ref.rsquared), f"{name} r2: {got['r2']} vs {ref.rsquared}")
    check(close(got["adj_r2"], ref.rsquared_adj), f"{name} adj r2")
    check(close(got["sigma"], float(np.sqrt(ref.scale))), f"{name} sigma")
    check(close(got["loglik"], ref.llf), f"{name} Gaussian loglik")
    print(f"{name}: OLS n={len(y)} p={Xc.shape[1]}; largest relative difference coef {a:.2g}, "
          f"se {b:.2g}, HC3 {c:.2g}")


def separation_case():
    x = np.arange(1.0, 11.0)
    y = (x > 5).astype(float)
    raised = False
    try:
        sm.Logit(y, sm.add_constant(x)).fit(disp=0)
    except PerfectSeparationError:
        raised = True
    check(raised, "statsmodels reports perfect separation")
    got = run_driver("logit", y, x.reshape(-1, 1))
    check(got is not None and "complete separation" in got["warn"],
          f"sluice warns of separation: {got and got['warn']}")


def main():
    if not os.path.exists(os.path.join(B, "libsluice.a")):
        print(f"{B}/libsluice.a not built")
        sys.exit(1)
    build_driver()
    sp = sm.datasets.spector.load_pandas().data
    ys, Xs = sp["GRADE"].values, sp[["GPA", "TUCE", "PSI"]].values
    logit_case("spector", ys, Xs)
    fair = sm.datasets.fair.load_pandas().data
    yf = (fair["affairs"].values > 0).astype(float)
    Xf = fair.drop(columns=["affairs"]).values
    logit_case("fair", yf, Xf)
    an = sm.datasets.anes96.load_pandas().data
    ya = an["vote"].values
    Xa = an[["logpopul", "TVnews", "selfLR", "ClinLR", "DoleLR", "PID", "age", "educ",
              "income"]].values
    logit_case("anes96", ya, Xa)
    wf = (np.arange(len(yf)) % 3 + 1).astype(float)
    weighted_case("fair", yf, Xf, wf)
    separation_case()
    ols_case("spector", ys, Xs)
    ols_case("fair", fair["affairs"].values, Xf)
    lo = sm.datasets.longley.load_pandas().data.values
    # statsmodels' own Longley HC3 is good to about 6e-9 (against the exact
    # rational value; see tests/c/test_regress.c), so 2e-8 there
    ols_case("longley", lo[:, 0], lo[:, 1:], tol_hc3=2e-8)
    print(f"{passed} passed, {failed} failed")
    sys.exit(1 if failed else 0)


if __name__ == "__main__":
    main()
