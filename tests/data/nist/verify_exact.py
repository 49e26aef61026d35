#!/usr/bin/python3
"""verify_exact.py: check each NIST StRD file here against its own certified values.

The data files in this folder were written from memory of the NIST StRD
pages (see README.md).  This script solves each least-squares problem in
exact rational arithmetic (Python's fractions, no floating point), from the
data as written, and compares the exact estimates, standard deviations,
residual standard deviation and R^2 with the certified values written in
the same file.  A wrong digit in the data would move the exact solution
far from the certified values (Filip's design has condition number near
1e15), so agreement to the 15 certified digits is strong evidence that
data and certified values were both recalled correctly; it is not a
substitute for comparing with https://www.itl.nist.gov/div898/strd/.

    verify_exact.py [FILE.dat ...]        all *.dat here by default
    verify_exact.py --hc3 FILE.dat        also print the exact HC3 standard
                                          errors (as repr of the double)

Prints one line per file and exits 1 if any certified value differs from
the exact one by more than 5e-15 relative (the certified values carry 15
significant digits) or, for a certified 0, by more than 1e-300.
"""
import glob
import math
import os
import sys
from fractions import Fraction as F


def load(path):
    """design (('linear',) or ('poly', d)), certified [(b, sd)], rsd, r2, rows."""
    design, cert, rsd, r2, rows, indata = None, [], None, None, [], False
    with open(path) as fh:
        for line in fh:
            t = line.split('#')[0].split()
            if not t:
                continue
            if indata:
                rows.append([F(v) for v in t])
            elif t[0] == 'design':
                design = (t[1],) + tuple(int(v) for v in t[2:])
            elif t[0] == 'certified':
                cert.append((F(t[2]), F(t[3])))
            elif t[0] == 'residual_sd':
                rsd = F(t[1])
            elif t[0] == 'r_squared':
                r2 = F(t[1])
            elif t[0] == 'data':
                indata = True
    return design, cert, rsd, r2, rows


def design_matrix(design, rows):
    if design[0] == 'linear':
        return [[F(1)] + r[1:] for r in rows]
    return [[r[1] ** k for k in range(design[1] + 1)] for r in rows]


def solve(X, y):
    """Exact least squares: beta, (X'X)^-1, residual sum of squares."""
    n, p = len(X), len(X[0])
    A = [[sum(X[k][i] * X[k][j] for k in range(n)) for j in range(p)] for i in range(p)]
    b = [sum(X[k][i] * y[k] for k in range(n)) for i in range(p)]
    M = [A[i][:] + [F(int(i == j)) for j in range(p)] + [b[i]] for i in range(p)]
    for c in range(p):
        piv = next(r for r in range(c, p) if M[r][c] != 0)
        M[c], M[piv] = M[piv], M[c]
        inv = 1 / M[c][c]
        M[c] = [v * inv for v in M[c]]
        for r in range(p):
            if r != c and M[r][c] != 0:
                f = M[r][c]
                M[r] = [u - f * v for u, v in zip(M[r], M[c])]
    beta = [M[i][-1] for i in range(p)]
    ainv = [M[i][p:2 * p] for i in range(p)]
    res = [y[k] - sum(X[k][j] * beta[j] for j in range(p)) for k in range(n)]
    return beta, ainv, res


def sqrt_f(x):
    """The square root of a non-negative Fraction, to double precision."""
    return math.sqrt(x.numerator / x.denominator)   # int / int rounds correctly


def reldiff(exact, cert):
    if cert == 0:
        return abs(float(exact))
    return abs(float((F(exact) - cert) / cert))


def hc3(X, ainv, res):
    n, p = len(X), len(X[0])
    h = [sum(X[k][i] * ainv[i][j] * X[k][j] for i in range(p) for j in range(p))
         for k in range(n)]
    om = [res[k] ** 2 / (1 - h[k]) ** 2 for k in range(n)]
    meat = [[sum(om[k] * X[k][i] * X[k][j] for k in range(n)) for j in range(p)]
            for i in range(p)]
    am = [[sum(ainv[i][k] * meat[k][j] for k in range(p)) for j in range(p)] for i in range(p)]
    cov = [[sum(am[i][k] * ainv[k][j] for k in range(p)) for j in range(p)] for i in range(p)]
    return [sqrt_f(cov[j][j]) for j in range(p)]


def main(argv):
    want_hc3 = '--hc3' in argv
    files = [a for a in argv if not a.startswith('--')]
    if not files:
        files = sorted(glob.glob(os.path.join(os.path.dirname(os.path.abspath(__file__)), '*.dat')))
    bad = 0
    for path in files:
        design, cert, rsd, r2, rows = load(path)
        X, y = design_matrix(design, rows), [r[0] for r in rows]
        n, p = len(X), len(X[0])
        beta, ainv, res = solve(X, y)
        rss = sum(r * r for r in res)
        s2 = rss / (n - p)
        worst = 0.0
        for j, (b, sd) in enumerate(cert):
            worst = max(worst, reldiff(beta[j], b))
            se = F(sqrt_f(s2 * ainv[j][j]))
            worst = max(worst, reldiff(se, sd) if sd != 0 else abs(float(se)))
        worst = max(worst, reldiff(F(sqrt_f(s2)), rsd) if rsd != 0 else sqrt_f(s2))
        ybar = sum(y) / n
        tss = sum((v - ybar) ** 2 for v in y)
        worst = max(worst, reldiff(1 - rss / tss, r2))
        ok = worst <= 5e-15
        bad += not ok
        print(f"{os.path.basename(path)}: n={n} p={p} largest relative difference exact vs "
              f"certified {worst:.2g} {'ok' if ok else 'MISMATCH'}")
        if want_hc3:
            print("  exact HC3 se:", ", ".join(repr(v) for v in hc3(X, ainv, res)))
    return 1 if bad else 0


if __name__ == '__main__':
    sys.exit(main(sys.argv[1:]))
