/*
** citest.c: one conditional-independence test on a frame or on a lazy
** table (see citest.h): the partial correlation with Fisher's z, the
** likelihood-ratio test of nested regressions, the stratified G-test,
** Spearman's correlation of residuals; and Holm's and Benjamini-Hochberg's
** adjustments.  The partial correlation and the linear LR test are written
** once, over the factor of the centred cross-products of the test's
** columns, which a frame computes in C and a lazy table in SQL.  The
** logistic fits of the LR test are those of regress.c; distributions are
** GSL's.
*/
#include <math.h>
#include <stdlib.h>
#include <string.h>
#include <gsl/gsl_cdf.h>
#include <gsl/gsl_linalg.h>
#include <gsl/gsl_rng.h>
#include <gsl/gsl_sort.h>
#include <gsl/gsl_statistics_double.h>
#include "citest.h"
#include "db_internal.h"
#include "db_regress.h"
#include "regress.h"

enum { CONT = 0, BIN, CAT, CONST };   /* kinds of a column over the complete rows */

/* One column of the test: a (slot 0), b (slot 1) or a given one. */
typedef struct var {
  const char *name;
  const sl_column *c;     /* a frame's column; NULL for a lazy table's (numeric) */
  int kind;
  size_t nused;           /* discrete: levels present */
  int32_t *map;           /* categorical: code -> used index, -1 unused */
} var;

/* The complete rows and what each column is over them. */
typedef struct prep {
  size_t nv, n;           /* columns (a, b, given...), complete rows */
  var *v;
  size_t *rows;           /* a frame's complete rows */
} prep;

static void prep_free(prep *P) {
  for (size_t i = 0; P->v && i < P->nv; i++) free(P->v[i].map);
  free(P->v); free(P->rows);
  memset(P, 0, sizeof *P);
}

static int missing(const sl_column *c, size_t r) {
  return c->type == SL_NUMERIC ? isnan(c->x[r]) : c->code[r] < 0;
}

/* The used level index of row r of a discrete column (0/1 for numeric). */
static int level(const var *v, size_t r) {
  if (v->c->type == SL_NUMERIC) return v->c->x[r] != 0;
  return v->map[v->c->code[r]];
}

/* The kind of a numeric column from its least and largest values and
** whether any value is other than 0 and 1 (both paths decide alike). */
static void numeric_kind(var *v, double lo, double hi, int binary) {
  v->kind = !(hi > lo) ? CONST : binary ? BIN : CONT;
  v->nused = binary ? 2 : 0;
}

/* Decide the kind of a column over the complete rows. */
static int classify(var *v, const size_t *rows, size_t n, sl_error *e) {
  const sl_column *c = v->c;
  if (c->type == SL_NUMERIC) {
    double lo = INFINITY, hi = -INFINITY;
    int binary = 1;
    for (size_t i = 0; i < n; i++) {
      double x = c->x[rows[i]];
      if (!isfinite(x))
        return sl_error_set(e, SL_EARG, 0, 0, "column '%s', row %zu: not a finite number (%g)",
                            c->name, rows[i] + 1, x);
      if (x < lo) lo = x;
      if (x > hi) hi = x;
      if (x != 0 && x != 1) binary = 0;
    }
    numeric_kind(v, lo, hi, binary);
    return SL_OK;
  }
  v->map = malloc((c->nlevels ? c->nlevels : 1) * sizeof *v->map);
  if (!v->map) return sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
  for (size_t l = 0; l < c->nlevels; l++) v->map[l] = -1;
  for (size_t i = 0; i < n; i++) v->map[c->code[rows[i]]] = 0;
  v->nused = 0;
  for (size_t l = 0; l < c->nlevels; l++) if (v->map[l] == 0) v->map[l] = (int32_t)v->nused++;
  v->kind = v->nused < 2 ? CONST : v->nused == 2 ? BIN : CAT;
  return SL_OK;
}

/* The error of a tested column constant over the complete rows. */
static int check_tested(const prep *P, sl_error *e) {
  for (size_t i = 0; i < 2; i++)
    if (P->v[i].kind == CONST)
      return sl_error_set(e, SL_EARG, 0, 0, "'%s' is constant over the %zu complete rows: "
                          "nothing to test", P->v[i].name, P->n);
  return SL_OK;
}

/* Gather the complete rows and classify the columns. */
static int prepare(const sl_frame *f, int a, int b, const int *given, size_t ng, prep *P,
                   sl_error *e) {
  memset(P, 0, sizeof *P);
  P->nv = ng + 2;
  P->v = calloc(P->nv, sizeof *P->v);
  P->rows = malloc((f->nrow ? f->nrow : 1) * sizeof *P->rows);
  if (!P->v || !P->rows) return sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
  for (size_t i = 0; i < P->nv; i++) {
    int j = i == 0 ? a : i == 1 ? b : given[i - 2];
    if (j < 0 || (size_t)j >= f->ncol) return sl_error_set(e, SL_EARG, 0, 0, "no column %d", j);
    P->v[i].c = &f->col[j];
    P->v[i].name = f->col[j].name;
  }
  for (size_t r = 0; r < f->nrow; r++) {
    int ok = 1;
    for (size_t i = 0; ok && i < P->nv; i++) ok = !missing(P->v[i].c, r);
    if (ok) P->rows[P->n++] = r;
  }
  if (P->n == 0)
    return sl_error_set(e, SL_EARG, 0, 0, "no row has a value in every column of the test");
  for (size_t i = 0; i < P->nv; i++) {
    int rc = classify(&P->v[i], P->rows, P->n, e);
    if (rc) return rc;
  }
  return check_tested(P, e);
}

/* Columns a var adds to a design (0 for a constant one). */
static size_t width(const var *v) {
  if (v->kind == CONST) return 0;
  if (!v->c || v->c->type == SL_NUMERIC) return 1;
  return v->nused - 1;
}

/* Columns the conditioning set adds to a design. */
static size_t given_width(const prep *P) {
  size_t k = 0;
  for (size_t i = 2; i < P->nv; i++) k += width(&P->v[i]);
  return k;
}

/* Fill the design's columns j.. with var v over the rows ix (column-wise:
** one tight loop per column); returns the columns written. */
static size_t put(const var *v, const size_t *ix, size_t n, double *X, size_t p, size_t j) {
  if (v->kind == CONST) return 0;
  if (v->c->type == SL_NUMERIC) {
    const double *x = v->c->x;
    for (size_t r = 0; r < n; r++) X[r * p + j] = x[ix[r]];
    return 1;
  }
  size_t w = v->nused - 1;
  for (size_t r = 0; r < n; r++) {
    int l = level(v, ix[r]);
    double *row = X + r * p + j;
    for (size_t k = 1; k <= w; k++) row[k - 1] = l == (int)k;
  }
  return w;
}

/* A design [1, given..., extra] over the rows ix (extra: a var index or
** -1); names of its columns for the error messages of the fit. */
typedef struct design { size_t n, p; double *X; const char **names; } design;

static void design_free(design *d) { free(d->X); free(d->names); memset(d, 0, sizeof *d); }

static int build(const prep *P, const size_t *ix, size_t n, int extra, design *d, sl_error *e) {
  size_t p = 1 + given_width(P);
  if (extra >= 0) p += width(&P->v[extra]);
  d->n = n; d->p = p;
  d->X = malloc(n * p * sizeof *d->X);
  d->names = malloc(p * sizeof *d->names);
  if (!d->X || !d->names) { design_free(d); return sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory"); }
  size_t k = 0;
  d->names[k++] = "(intercept)";
  for (size_t i = 2; i <= P->nv; i++) {
    size_t vi = i < P->nv ? i : (size_t)extra;
    if (i == P->nv && extra < 0) break;
    for (size_t w = width(&P->v[vi]); w > 0; w--) d->names[k++] = P->v[vi].name;
  }
  for (size_t r = 0; r < n; r++) d->X[r * p] = 1;
  size_t j = 1;
  for (size_t i = 2; i < P->nv; i++) j += put(&P->v[i], ix, n, d->X, p, j);
  if (extra >= 0) put(&P->v[extra], ix, n, d->X, p, j);
  return SL_OK;
}

/* The numeric value of var v at row r as a response (a 2-level text column
** gives its used level index, 0 or 1). */
static double value(const var *v, size_t r) {
  return v->c->type == SL_NUMERIC ? v->c->x[r] : (double)level(v, r);
}

static double zquant(double level) { return gsl_cdf_ugaussian_Pinv(1 - (1 - level) / 2); }

/* Enough complete rows: Fisher's z needs n - k - 3 > 0 (k conditioning
** columns), the LR test two rows beyond the larger model's p columns. */
static int enough_rows(int lr, size_t n, size_t k, size_t p, sl_error *e) {
  if (!lr && n < k + 4)
    return sl_error_set(e, SL_EARG, 0, 0, "too few rows: %zu complete rows for %zu conditioning "
                        "column%s (the test needs at least %zu)", n, k, k == 1 ? "" : "s", k + 4);
  if (lr && n < p + 2)
    return sl_error_set(e, SL_EARG, 0, 0, "too few rows: %zu complete rows for a model of %zu "
                        "columns (the test needs at least %zu)", n, p, p + 2);
  return SL_OK;
}

/* ---- the partial correlation and the linear LR test: both paths ----
**
** The columns of a test centred over its complete rows, in the order: the
** conditioning columns (q), the w columns of one tested column, the other
** tested column y last, have the cross-products S = L L' (L lower
** triangular, positive diagonal).  Row y of L holds the test: the sum of
** L_yk^2 over the w columns is what they add to the least-squares fit of y
** on the conditioning set (RSS0 - RSS1), and L_yy^2 is RSS1.  L_kk is the
** distance of column k to the span of the constant and the columns before
** it, which is what sl_ols's alias test measures.  A frame gets L from a
** QR of its centred columns, a lazy table by Cholesky of the sums of
** sl_db_sums. */
typedef struct factor {
  size_t m, w;            /* columns; those of the tested column before the last */
  double *L;              /* m x m row-major, lower triangle */
  double *raw;            /* per column: its sum of squares, uncentred */
  const char **names;     /* per column, for messages */
} factor;

static void factor_free(factor *F) { free(F->L); free(F->names); memset(F, 0, sizeof *F); }

static int factor_alloc(factor *F, size_t m, size_t w, sl_error *e) {
  F->m = m; F->w = w;
  F->L = calloc(m * m + m, sizeof *F->L);
  F->names = malloc(m * sizeof *F->names);
  if (!F->L || !F->names) { factor_free(F); return sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory"); }
  F->raw = F->L + m * m;
  return SL_OK;
}

/* Columns the test cannot use: one within SL_RANK_TOL of the span of the
** constant and the columns before it (sl_ols's rule), a tested column
** that the conditioning set fits exactly, and for the LR test a response
** that every other column together fits exactly. */
static int factor_check(const factor *F, int lr, sl_error *e) {
  size_t m = F->m, y = m - 1, q = m - F->w - 1;
  const double *L = F->L, *Ly = L + y * m;
  for (size_t k = 0; k < y; k++) {
    if (L[k * m + k] > SL_RANK_TOL * sqrt(F->raw[k])) continue;
    if (k < q)
      return sl_error_set(e, SL_EARG, 0, 0, "conditioning column '%s' is a linear combination "
                          "of the conditioning columns before it: drop it", F->names[k]);
    return sl_error_set(e, SL_EARG, 0, 0, "'%s' is a linear function of the conditioning set: "
                        "its residuals are all zero", F->names[k]);
  }
  double resid = 0;   /* y's residual sum of squares on the conditioning set */
  for (size_t k = q; k <= y; k++) resid += Ly[k] * Ly[k];
  if (!(sqrt(resid) > SL_RANK_TOL * sqrt(F->raw[y])))
    return sl_error_set(e, SL_EARG, 0, 0, "'%s' is a linear function of the conditioning set: "
                        "its residuals are all zero", F->names[y]);
  if (lr && !(Ly[y] > SL_RANK_TOL * sqrt(F->raw[y])))
    return sl_error_set(e, SL_EARG, 0, 0, "'%s' is fitted exactly by the other columns: no "
                        "residual variation to test", F->names[y]);
  return SL_OK;
}

/* The test from the factor of n rows: Fisher's z of the partial
** correlation of the last two columns (w = 1), or the likelihood-ratio
** test of the last column on the conditioning set with and without the w
** columns, LR = n log(RSS0 / RSS1), Gaussian likelihood. */
static void factor_test(const factor *F, int lr, size_t n, double level, sl_ci_result *r) {
  size_t m = F->m, y = m - 1, q = m - F->w - 1;
  const double *Ly = F->L + y * m;
  double added = 0, rss = Ly[y] * Ly[y];
  for (size_t k = q; k < y; k++) added += Ly[k] * Ly[k];
  double dn = (double)n, dk = (double)q;
  /* the partial correlation; for w > 1 the correlation that gives LR */
  double rho = F->w == 1 ? Ly[q] / sqrt(added + rss) : sqrt(added / (added + rss));
  if (rho > 1) rho = 1;
  if (rho < -1) rho = -1;
  r->effect = rho;
  r->lo = r->hi = NAN;
  double se = 1 / sqrt(dn - dk - 3), z = atanh(rho), zq = zquant(level);
  if (F->w == 1) {
    r->lo = tanh(z - zq * se);
    r->hi = tanh(z + zq * se);
  }
  if (lr) {
    r->test = SL_CI_LR_LINEAR;
    r->stat = rss > 0 ? dn * log1p(added / rss) : INFINITY;
    r->df = (double)F->w;
    r->p = gsl_cdf_chisq_Q(r->stat, r->df);
  } else {
    r->test = SL_CI_FISHER;
    r->stat = z / se;
    r->df = NAN;
    r->p = 2 * gsl_cdf_ugaussian_Q(fabs(r->stat));
  }
}

/* The factor of a frame's columns over the rows ix: the conditioning
** columns (text ones as dummies, constant ones left out), var first, then
** var last.  Each column is centred at its mean (corrected by a second
** pass); R of their Householder QR, rows signed to a positive diagonal, is
** L' (R'R = S), as accurate as a least-squares fit: the cross-products
** themselves are never formed. */
static int factor_frame(const prep *P, const size_t *ix, size_t n, int first, int last,
                        factor *F, sl_error *e) {
  size_t q = given_width(P), w = width(&P->v[first]), m = q + w + 1;
  int rc = factor_alloc(F, m, w, e);
  if (rc) return rc;
  gsl_matrix *X = gsl_matrix_alloc(n, m), *T = gsl_matrix_alloc(m, m);
  if (!X || !T) {
    if (X) gsl_matrix_free(X);
    if (T) gsl_matrix_free(T);
    factor_free(F);
    return sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
  }
  size_t j = 0, tda = X->tda;
  for (size_t i = 2; i < P->nv; i++) {
    size_t k = put(&P->v[i], ix, n, X->data, tda, j);
    while (k-- > 0) F->names[j++] = P->v[i].name;
  }
  put(&P->v[first], ix, n, X->data, tda, j);
  for (size_t k = 0; k < w; k++) F->names[j++] = P->v[first].name;
  for (size_t r = 0; r < n; r++) X->data[r * tda + j] = value(&P->v[last], ix[r]);
  F->names[j] = P->v[last].name;
  for (size_t k = 0; k < m; k++) {
    double s = 0, d = 0, ss = 0;
    for (size_t r = 0; r < n; r++) s += X->data[r * tda + k];
    double mean = s / (double)n;
    for (size_t r = 0; r < n; r++) d += X->data[r * tda + k] - mean;
    mean += d / (double)n;
    for (size_t r = 0; r < n; r++) {
      double *x = &X->data[r * tda + k];
      ss += *x * *x;
      *x -= mean;
    }
    F->raw[k] = ss;
  }
  gsl_linalg_QR_decomp_r(X, T);
  for (size_t k = 0; k < m; k++) {
    double sign = gsl_matrix_get(X, k, k) < 0 ? -1 : 1;
    for (size_t l = k; l < m; l++) F->L[l * m + k] = sign * gsl_matrix_get(X, k, l);
  }
  gsl_matrix_free(X);
  gsl_matrix_free(T);
  return SL_OK;
}

/* The partial correlation of a and b given the rest, on the rows ix. */
static int test_partial(const prep *P, const size_t *ix, size_t n, double level,
                        sl_ci_result *r, sl_error *e) {
  int rc = enough_rows(0, n, given_width(P), 0, e);
  if (rc) return rc;
  factor F = {0};
  rc = factor_frame(P, ix, n, 0, 1, &F, e);
  if (rc) return rc;
  rc = factor_check(&F, 0, e);
  if (!rc) factor_test(&F, 0, n, level, r);
  factor_free(&F);
  return rc;
}

/* ---- the tests that need the rows: a frame's only ---- */

/* Residuals of var v regressed on the design d (least squares). */
static int residuals(const prep *P, const size_t *ix, const design *d, int vi, double *res,
                     sl_error *e) {
  for (size_t r = 0; r < d->n; r++) res[r] = value(&P->v[vi], ix[r]);
  sl_fit fit;
  int rc = sl_ols(d->X, res, d->n, d->p, d->names, &fit, e);
  if (rc) return rc;
  double *fitted = malloc(d->n * sizeof *fitted);
  if (!fitted) { sl_fit_free(&fit); return sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory"); }
  sl_predict(&fit, d->X, d->n, 0, fitted);
  for (size_t r = 0; r < d->n; r++) res[r] -= fitted[r];
  free(fitted);
  sl_fit_free(&fit);
  return SL_OK;
}

/* Ranks 1..n with ties given their average rank. */
static int ranks(const double *x, size_t n, double *out) {
  size_t *p = malloc(n * sizeof *p);
  if (!p) return -1;
  gsl_sort_index(p, x, 1, n);
  for (size_t i = 0; i < n;) {
    size_t j = i;
    while (j + 1 < n && x[p[j + 1]] == x[p[i]]) j++;
    double avg = (double)(i + j) / 2 + 1;
    for (size_t k = i; k <= j; k++) out[p[k]] = avg;
    i = j + 1;
  }
  free(p);
  return 0;
}

/* Spearman's correlation of the residuals of a and of b on the given set. */
static int test_rank(const prep *P, const size_t *ix, size_t n, double level, sl_ci_result *r,
                     sl_error *e) {
  size_t k = given_width(P);
  int rc = enough_rows(0, n, k, 0, e);
  if (rc) return rc;
  design d = {0};
  rc = build(P, ix, n, -1, &d, e);
  if (rc) return rc;
  double *ra = malloc(2 * n * sizeof *ra);
  if (!ra) { design_free(&d); return sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory"); }
  double *rb = ra + n;
  rc = residuals(P, ix, &d, 0, ra, e);
  if (!rc) rc = residuals(P, ix, &d, 1, rb, e);
  design_free(&d);
  if (!rc && (ranks(ra, n, ra) || ranks(rb, n, rb)))
    rc = sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
  double rho = rc ? NAN : gsl_stats_correlation(ra, 1, rb, 1, n);
  free(ra);
  if (rc) return rc;
  if (!isfinite(rho))
    return sl_error_set(e, SL_EARG, 0, 0, "'%s' or '%s' is a linear function of the "
                        "conditioning set: its residuals are all zero", P->v[0].name,
                        P->v[1].name);
  if (rho > 1) rho = 1;
  if (rho < -1) rho = -1;
  double dn = (double)n, dk = (double)k;
  double se = sqrt(1.06 / (dn - dk - 3)), z = atanh(rho), q = zquant(level);
  r->test = SL_CI_SPEARMAN;
  r->effect = rho;
  r->lo = tanh(z - q * se);
  r->hi = tanh(z + q * se);
  r->df = dn - dk - 2;
  r->stat = fabs(rho) < 1 ? rho * sqrt(r->df / (1 - rho * rho)) : copysign(INFINITY, rho);
  r->p = 2 * gsl_cdf_tdist_Q(fabs(r->stat), r->df);
  return SL_OK;
}

/* The logistic fit of the response (var resp) on the design d: its
** log-likelihood and the last coefficient. */
static int fit_ll(const prep *P, const size_t *ix, const design *d, int resp, double *ll,
                  double *last, char *note, sl_error *e) {
  double *y = malloc(d->n * sizeof *y);
  if (!y) return sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
  for (size_t r = 0; r < d->n; r++) y[r] = value(&P->v[resp], ix[r]);
  sl_fit fit;
  char warn[256] = "";
  int rc = sl_logit(d->X, y, NULL, d->n, d->p, d->names, 0, 0, &fit, warn, sizeof warn, e);
  free(y);
  if (rc) return rc;
  *ll = fit.loglik;
  *last = fit.coef[d->p - 1];
  if (warn[0] && note && !note[0]) snprintf(note, SL_MSG_MAX, "logistic fit: %s", warn);
  sl_fit_free(&fit);
  return SL_OK;
}

/* Which column the LR test models: a binary one (logistic) first, else a
** continuous one; -1 when both are categorical with more than two levels. */
static int lr_response(const prep *P) {
  for (int i = 0; i < 2; i++) if (P->v[i].kind == BIN) return i;
  for (int i = 0; i < 2; i++) if (P->v[i].kind == CONT) return i;
  return -1;
}

/* The likelihood-ratio test of resp ~ given against resp ~ given + other:
** from the factor for a continuous response, by two logistic fits for a
** binary one. */
static int test_lr(const prep *P, const size_t *ix, size_t n, double level, sl_ci_result *r,
                   sl_error *e) {
  int resp = lr_response(P);
  if (resp < 0)
    return sl_error_set(e, SL_EARG, 0, 0, "'%s' and '%s' both have more than two levels and "
                        "the G-test does not apply (too many cells or too few rows): no "
                        "regression test for a pair of many-level columns", P->v[0].name,
                        P->v[1].name);
  int other = 1 - resp;
  size_t df = width(&P->v[other]), p1 = 1 + given_width(P) + df;
  int rc = enough_rows(1, n, 0, p1, e);
  if (rc) return rc;
  if (P->v[resp].kind != BIN) {
    factor F = {0};
    rc = factor_frame(P, ix, n, other, resp, &F, e);
    if (rc) return rc;
    rc = factor_check(&F, 1, e);
    if (!rc) { factor_test(&F, 1, n, level, r); r->response = resp; }
    factor_free(&F);
    return rc;
  }
  design d0 = {0}, d1 = {0};
  rc = build(P, ix, n, -1, &d0, e);
  if (!rc) rc = build(P, ix, n, other, &d1, e);
  double ll0, ll1, c0, c1;
  if (!rc) rc = fit_ll(P, ix, &d0, resp, &ll0, &c0, r->note, e);
  if (!rc) rc = fit_ll(P, ix, &d1, resp, &ll1, &c1, r->note, e);
  design_free(&d0); design_free(&d1);
  if (rc) return rc;
  double lr = 2 * (ll1 - ll0);
  if (lr < 0) lr = 0;                 /* rounding of equal fits */
  r->test = SL_CI_LR_LOGIT;
  r->response = resp;
  r->stat = lr;
  r->df = (double)df;
  r->p = gsl_cdf_chisq_Q(lr, r->df);
  double rp = sqrt(1 - exp(-lr / (double)n));
  r->effect = df == 1 ? copysign(rp, c1) : rp;
  r->lo = r->hi = NAN;
  return SL_OK;
}

/* Cells of the full table a x b x given (SIZE_MAX past the limit). */
static size_t cells(const prep *P) {
  size_t c = 1;
  for (size_t i = 0; i < P->nv; i++) {
    if (P->v[i].kind == CONT) return (size_t)-1;
    size_t l = P->v[i].kind == CONST ? 1 : P->v[i].nused;
    if (c > SL_CITEST_MAX_CELLS / l + 1) return (size_t)-1;
    c *= l;
  }
  return c;
}

/* The G-test of a x b summed over the strata of the given columns. */
static int test_g(const prep *P, const size_t *ix, size_t n, sl_ci_result *r, sl_error *e) {
  size_t nc = cells(P);
  if (nc == (size_t)-1 || nc > SL_CITEST_MAX_CELLS)
    return sl_error_set(e, SL_EARG, 0, 0, "the G-test needs discrete columns and at most %d "
                        "cells", SL_CITEST_MAX_CELLS);
  size_t la = P->v[0].nused, lb = P->v[1].nused, ns = nc / (la * lb);
  double *t = calloc(nc, sizeof *t);
  if (!t) return sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
  for (size_t k = 0; k < n; k++) {
    size_t s = 0;
    for (size_t i = 2; i < P->nv; i++) {
      const var *v = &P->v[i];
      if (v->kind == CONST) continue;
      s = s * v->nused + (size_t)level(v, ix[k]);
    }
    t[(s * la + (size_t)level(&P->v[0], ix[k])) * lb + (size_t)level(&P->v[1], ix[k])] += 1;
  }
  double g = 0, df = 0, ra[SL_CITEST_MAX_CELLS], cb[SL_CITEST_MAX_CELLS];
  for (size_t s = 0; s < ns; s++) {
    const double *ts = t + s * la * lb;
    double tot = 0;
    size_t rows = 0, cols = 0;
    for (size_t i = 0; i < la; i++) ra[i] = 0;
    for (size_t j = 0; j < lb; j++) cb[j] = 0;
    for (size_t i = 0; i < la; i++)
      for (size_t j = 0; j < lb; j++) { ra[i] += ts[i * lb + j]; cb[j] += ts[i * lb + j]; }
    for (size_t i = 0; i < la; i++) { tot += ra[i]; rows += ra[i] > 0; }
    for (size_t j = 0; j < lb; j++) cols += cb[j] > 0;
    if (rows < 2 || cols < 2) continue;      /* an empty or one-line stratum: no information */
    df += (double)((rows - 1) * (cols - 1));
    for (size_t i = 0; i < la; i++)
      for (size_t j = 0; j < lb; j++) {
        double o = ts[i * lb + j];
        if (o > 0) g += 2 * o * log(o * tot / (ra[i] * cb[j]));
      }
  }
  free(t);
  if (df == 0)
    return sl_error_set(e, SL_EARG, 0, 0, "no stratum of the conditioning set has two values "
                        "of both '%s' and '%s': nothing to test", P->v[0].name,
                        P->v[1].name);
  if (g < 0) g = 0;
  r->test = SL_CI_G;
  r->stat = g;
  r->df = df;
  r->p = gsl_cdf_chisq_Q(g, df);
  r->effect = sqrt(1 - exp(-g / (double)n));
  r->lo = r->hi = NAN;
  return SL_OK;
}

/* The test method asks for, given the kinds; an error when it cannot apply. */
static int choose(const prep *P, int method, sl_error *e) {
  const var *a = &P->v[0], *b = &P->v[1];
  int discrete = 1;
  for (size_t i = 0; i < P->nv; i++) discrete &= P->v[i].kind != CONT;
  size_t nc = discrete ? cells(P) : (size_t)-1;
  int many = a->kind == CAT || b->kind == CAT;
  switch (method) {
  case SL_CI_AUTO:
    if (discrete && nc <= SL_CITEST_MAX_CELLS && P->n >= SL_CITEST_PER_CELL * nc) return SL_CI_G;
    if (a->kind == CONT && b->kind == CONT) return SL_CI_FISHER;
    /* two many-level columns: a sparse G-test when the table is small, else
    ** test_lr names the pair */
    return lr_response(P) < 0 && discrete && nc <= SL_CITEST_MAX_CELLS ? SL_CI_G : SL_CI_LR_LINEAR;
  case SL_CI_PARTIAL: case SL_CI_RESIDUAL:
    if (many)
      return sl_error_set(e, SL_EARG, 0, 0, "'%s' has more than two levels: a correlation "
                          "needs numbers or two levels (use method = \"lr\" or \"gtest\")",
                          (a->kind == CAT ? a : b)->name), -1;
    return method == SL_CI_PARTIAL ? SL_CI_FISHER : SL_CI_SPEARMAN;
  case SL_CI_LR: return SL_CI_LR_LINEAR;
  case SL_CI_GTEST:
    if (!discrete)
      for (size_t i = 0; i < P->nv; i++)
        if (P->v[i].kind == CONT)
          return sl_error_set(e, SL_EARG, 0, 0, "the G-test needs discrete columns; '%s' is "
                              "continuous", P->v[i].name), -1;
    return SL_CI_G;
  }
  return sl_error_set(e, SL_EARG, 0, 0, "unknown method %d", method), -1;
}

/* Run the chosen test on the rows ix. */
static int run(const prep *P, const size_t *ix, size_t n, int test, double level,
               sl_ci_result *r, sl_error *e) {
  switch (test) {
  case SL_CI_FISHER: return test_partial(P, ix, n, level, r, e);
  case SL_CI_SPEARMAN: return test_rank(P, ix, n, level, r, e);
  case SL_CI_G: return test_g(P, ix, n, r, e);
  default: return test_lr(P, ix, n, level, r, e);
  }
}

/* SplitMix64: a well-mixed seed for replicate b (as bootstrap.c). */
static uint64_t replicate_seed(uint64_t seed, uint64_t b) {
  uint64_t z = seed + 0x9E3779B97F4A7C15ull * (b + 1);
  z = (z ^ (z >> 30)) * 0xBF58476D1CE4E5B9ull;
  z = (z ^ (z >> 27)) * 0x94D049BB133111EBull;
  return z ^ (z >> 31);
}

static int cmp_double(const void *x, const void *y) {
  double a = *(const double *)x, b = *(const double *)y;
  return (a > b) - (a < b);
}

/* The percentile interval of the effect over boot replicates. */
static int bootstrap(const prep *P, int test, double level, size_t boot, uint64_t seed,
                     sl_ci_result *r, sl_error *e) {
  size_t n = P->n;
  size_t *ix = malloc(n * sizeof *ix);
  double *est = malloc(boot * sizeof *est);
  gsl_rng *g = gsl_rng_alloc(gsl_rng_mt19937);
  if (!ix || !est || !g) {
    free(ix); free(est); if (g) gsl_rng_free(g);
    return sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
  }
  size_t done = 0;
  for (size_t b = 0; b < boot; b++) {
    gsl_rng_set(g, (unsigned long)replicate_seed(seed, b));
    for (size_t k = 0; k < n; k++) ix[k] = P->rows[gsl_rng_uniform_int(g, n)];
    sl_ci_result rb;
    sl_error eb;
    memset(&rb, 0, sizeof rb);
    if (run(P, ix, n, test, level, &rb, &eb) == SL_OK && isfinite(rb.effect))
      est[done++] = rb.effect;
  }
  qsort(est, done, sizeof *est, cmp_double);
  r->boot_done = done;
  double alpha = 1 - level;
  r->lo = done ? gsl_stats_quantile_from_sorted_data(est, 1, done, alpha / 2) : NAN;
  r->hi = done ? gsl_stats_quantile_from_sorted_data(est, 1, done, 1 - alpha / 2) : NAN;
  free(ix); free(est); gsl_rng_free(g);
  return SL_OK;
}

/* A note on conditioning columns constant over the complete rows. */
static void note_constant(const prep *P, sl_ci_result *r) {
  for (size_t i = 2; i < P->nv; i++) {
    if (P->v[i].kind != CONST) continue;
    size_t len = strlen(r->note);
    snprintf(r->note + len, sizeof r->note - len, "%s'%s' is constant over the complete rows "
             "(conditioning on it changes nothing)", len ? "; " : "", P->v[i].name);
  }
}

int sl_citest(const sl_frame *f, int a, int b, const int *given, size_t ng, int method,
              double level, size_t boot, uint64_t seed, sl_ci_result *r, sl_error *e) {
  memset(r, 0, sizeof *r);
  r->effect = r->lo = r->hi = r->stat = r->df = r->p = NAN;
  r->response = -1;
  if (!f) return sl_error_set(e, SL_EARG, 0, 0, "no frame");
  if (!(level > 0 && level < 1)) return sl_error_set(e, SL_EARG, 0, 0, "level must lie in (0, 1)");
  if (boot > SL_CITEST_MAX_BOOT)
    return sl_error_set(e, SL_ELIMIT, 0, 0, "at most %d bootstrap replicates", SL_CITEST_MAX_BOOT);
  if (a == b) return sl_error_set(e, SL_EARG, 0, 0, "a column is not tested against itself");
  for (size_t i = 0; i < ng; i++)
    if (given[i] == a || given[i] == b)
      return sl_error_set(e, SL_EARG, 0, 0, "'%s' is both tested and in the conditioning set",
                          f->col[given[i]].name);
  prep P;
  int rc = prepare(f, a, b, given, ng, &P, e);
  r->n = P.n;
  r->dropped = f->nrow - P.n;
  if (rc) { prep_free(&P); return rc; }
  int test = choose(&P, method, e);
  if (test < 0) { prep_free(&P); return e->code; }
  note_constant(&P, r);
  if (test == SL_CI_G && P.n < SL_CITEST_PER_CELL * cells(&P)) {
    size_t len = strlen(r->note);
    snprintf(r->note + len, sizeof r->note - len, "%sa sparse table: %zu rows for %zu cells "
             "(the chi-square reference may be poor)", len ? "; " : "", P.n, cells(&P));
  }
  rc = run(&P, P.rows, P.n, test, level, r, e);
  if (!rc && boot) rc = bootstrap(&P, r->test, level, boot, seed, r, e);
  prep_free(&P);
  return rc;
}

/* ---- a lazy table: the test inside the database ---- */

static const char *const method_names[] = {"auto", "partial", "lr", "gtest", "residual"};

#define FETCH_OR_PARTIAL "fetch the rows (t:fetch()) and test the frame, or give method = " \
                         "\"partial\", which runs in the database"

/* The first query: the rows of the table, those where every column is
** present, and per column over them the sum (for the mean), the least and
** the largest value and the count of values other than 0 and 1 (for the
** column's kind): v holds 2 + 4 nv numbers.  The complete rows are picked
** by WHERE and the table counted by a subquery: plain columns in the
** aggregates make the scan about three times as fast on SQLite as values
** masked row by row. */
static int db_first(const sl_db_table *t, const int *cols, size_t nv, double *v, sl_error *e) {
  sl_db_buf b = {0};
  sl_db_buf_add(&b, "SELECT (SELECT COUNT(*) FROM %s), COUNT(*)", sl_db_from(t));
  for (size_t i = 0; i < nv; i++) {
    const char *x = sl_db_expr(t, (size_t)cols[i]);
    sl_db_buf_add(&b, ", SUM(CAST(%s AS DOUBLE PRECISION)), MIN(%s), MAX(%s), "
                  "SUM(CASE WHEN %s <> 0 AND %s <> 1 THEN 1 ELSE 0 END)", x, x, x, x, x);
  }
  sl_db_buf_add(&b, " FROM %s WHERE ", sl_db_from(t));
  for (size_t i = 0; i < nv; i++)
    sl_db_buf_add(&b, "%s%s IS NOT NULL", i ? " AND " : "", sl_db_expr(t, (size_t)cols[i]));
  char *sql = sl_db_buf_done(&b, e);
  if (!sql) return e->code;
  int rc = sl_db_numbers(t, sql, NULL, 0, v, 2 + 4 * nv, e);
  free(sql);
  return rc;
}

int sl_citest_db_method(int method, sl_error *e) {
  if (method == SL_CI_RESIDUAL)
    return sl_error_set(e, SL_EARG, 0, 0, "method = \"residual\" ranks the residuals of every "
                        "row, which a test in the database does not do: " FETCH_OR_PARTIAL);
  if (method == SL_CI_GTEST)
    return sl_error_set(e, SL_EARG, 0, 0, "method = \"gtest\" counts the rows of every cell, "
                        "which a test in the database does not do: " FETCH_OR_PARTIAL);
  if (method < SL_CI_AUTO || method > SL_CI_RESIDUAL)
    return sl_error_set(e, SL_EARG, 0, 0, "unknown method %d", method);
  return SL_OK;
}

/* The test a frame of these columns would get, or an error when that one
** does not run in the database. */
static int db_choose(const prep *P, int method, sl_error *e) {
  int test = choose(P, method, e);
  if (test == SL_CI_G)
    return sl_error_set(e, SL_EARG, 0, 0, "method = \"auto\" chose the G-test (every column "
                        "discrete, %zu cells), which a test in the database does not do: "
                        FETCH_OR_PARTIAL, cells(P)), -1;
  if (test == SL_CI_LR_LINEAR && P->v[lr_response(P)].kind == BIN)
    return sl_error_set(e, SL_EARG, 0, 0, "method = \"%s\" chose the likelihood-ratio test with "
                        "'%s' (0/1) as a logistic response, which a test in the database does "
                        "not do: " FETCH_OR_PARTIAL, method_names[method],
                        P->v[lr_response(P)].name), -1;
  return test;
}

/* L L' = S (m x m, row-major, L lower) column by column.  It stops at the
** first column before the last whose pivot is not positive, leaving it 0
** for factor_check to name (GSL's factor only says that one failed); the
** last pivot may be 0 (the tested columns perfectly correlated). */
static void cholesky(const double *S, size_t m, double *L) {
  for (size_t j = 0; j < m; j++) {
    double d = S[j * m + j];
    for (size_t k = 0; k < j; k++) d -= L[j * m + k] * L[j * m + k];
    if (!(d > 0)) {
      if (j + 1 < m) return;
      d = 0;
    }
    L[j * m + j] = sqrt(d);
    for (size_t i = j + 1; i < m; i++) {
      double s = S[i * m + j];
      for (size_t k = 0; k < j; k++) s -= L[i * m + k] * L[j * m + k];
      L[i * m + j] = s / L[j * m + j];
    }
  }
}

/* A column so nearly a linear function of those before it (sine below
** SL_DB_NEAR_SINGULAR, as the fits in the database refuse) that the
** factor of the cross-products would lose the digits the test needs.
** The last column's sine is that of its residual on the conditioning set. */
static int db_near_singular(const factor *F, const double *S, sl_error *e) {
  size_t m = F->m, y = m - 1, q = m - F->w - 1;
  const double *Ly = F->L + y * m;
  for (size_t k = 0; k <= y; k++) {
    double len = F->L[k * m + k];
    if (k == y) {
      len = 0;
      for (size_t l = q; l <= y; l++) len += Ly[l] * Ly[l];
      len = sqrt(len);
    }
    double sine = len / sqrt(S[k * m + k]);
    if (sine < SL_DB_NEAR_SINGULAR)
      return sl_error_set(e, SL_EARG, 0, 0, "'%s' is nearly a linear function of %s (sine "
                          "%.1e, below %g): the cross-products in the database would lose too "
                          "many digits; fetch the rows (t:fetch()) and test the frame",
                          F->names[k], k < q ? "the conditioning columns before it"
                          : "the conditioning set", sine, SL_DB_NEAR_SINGULAR);
  }
  return SL_OK;
}

/* The factor of a lazy table's columns cols[0..nv-1]: the first m in the
** factor's order (one column for each tested one), the rest constant
** conditioning columns, summed too so that the complete rows are those of
** the first query.  The cross-products centred at the means c
** (sl_db_sums), corrected by the sums of the centred values (zero but for
** rounding), factored by Cholesky. */
static int factor_db(const sl_db_table *t, const int *cols, size_t nv, const double *c,
                     size_t n, size_t m, int lr, factor *F, sl_error *e) {
  double *cross = malloc(nv * nv * sizeof *cross), *sum = malloc(nv * sizeof *sum),
         *S = malloc(m * m * sizeof *S);
  int rc = cross && sum && S ? SL_OK : sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
  sl_db_sums_out out;
  if (!rc) rc = sl_db_sums(t, cols, nv, -1, c, sum, cross, &out, e);
  if (!rc && out.used != n)
    rc = sl_error_set(e, SL_EARG, 0, 0, "the table changed while the test ran (%zu complete "
                      "rows, then %llu)", n, (unsigned long long)out.used);
  if (!rc) rc = factor_alloc(F, m, 1, e);
  if (!rc) {
    double dn = (double)n;
    for (size_t k = 0; k < m; k++) {
      for (size_t l = 0; l < m; l++) S[k * m + l] = cross[k * nv + l] - sum[k] * sum[l] / dn;
      double mean = c[k] + sum[k] / dn;
      F->raw[k] = S[k * m + k] + dn * mean * mean;
      F->names[k] = sl_db_colname(t, (size_t)cols[k]);
    }
    cholesky(S, m, F->L);
    rc = factor_check(F, lr, e);
    if (!rc) rc = db_near_singular(F, S, e);
  }
  free(cross); free(sum); free(S);
  return rc;
}

int sl_citest_db(const sl_db_table *t, int a, int b, const int *given, size_t ng, int method,
                 double level, sl_ci_result *r, sl_error *e) {
  memset(r, 0, sizeof *r);
  r->effect = r->lo = r->hi = r->stat = r->df = r->p = NAN;
  r->response = -1;
  if (!t) return sl_error_set(e, SL_EARG, 0, 0, "no table");
  if (!(level > 0 && level < 1)) return sl_error_set(e, SL_EARG, 0, 0, "level must lie in (0, 1)");
  if (ng + 2 > SL_DB_MAX_SUMS)
    return sl_error_set(e, SL_ELIMIT, 0, 0, "%zu conditioning columns; a test in the database "
                        "takes at most %d", ng, SL_DB_MAX_SUMS - 2);
  if (a == b) return sl_error_set(e, SL_EARG, 0, 0, "a column is not tested against itself");
  int rc = sl_citest_db_method(method, e);
  if (rc) return rc;
  int cols[SL_DB_MAX_SUMS];
  size_t nv = ng + 2;
  for (size_t i = 0; i < nv; i++) {
    int j = i == 0 ? a : i == 1 ? b : given[i - 2];
    if (j < 0 || (size_t)j >= sl_db_ncol(t)) return sl_error_set(e, SL_EARG, 0, 0, "no column %d", j);
    if (i >= 2 && (j == a || j == b))
      return sl_error_set(e, SL_EARG, 0, 0, "'%s' is both tested and in the conditioning set",
                          sl_db_colname(t, (size_t)j));
    if (sl_db_coltype(t, (size_t)j) != SL_NUMERIC)
      return sl_error_set(e, SL_EARG, 0, 0, "'%s' has text values: a test in the database takes "
                          "numeric columns only (code the levels as 0/1 columns in db:query, or "
                          "fetch the rows (t:fetch()) and test the frame)",
                          sl_db_colname(t, (size_t)j));
    cols[i] = j;
  }
  double v[2 + 4 * SL_DB_MAX_SUMS], c[SL_DB_MAX_SUMS];
  if ((rc = db_first(t, cols, nv, v, e))) return rc;
  size_t n = (size_t)v[1];
  r->n = n;
  r->dropped = (size_t)(v[0] - v[1]);
  if (n == 0) return sl_error_set(e, SL_EARG, 0, 0, "no row has a value in every column of the test");
  var vars[SL_DB_MAX_SUMS];
  memset(vars, 0, sizeof vars);
  prep P = {nv, n, vars, NULL};
  for (size_t i = 0; i < nv; i++) {
    const double *s = v + 2 + 4 * i;
    vars[i].name = sl_db_colname(t, (size_t)cols[i]);
    if (!isfinite(s[0]) || !isfinite(s[1]) || !isfinite(s[2]))
      return sl_error_set(e, SL_EARG, 0, 0, "column '%s' holds a value that is not a finite "
                          "number (infinite or NaN)", vars[i].name);
    numeric_kind(&vars[i], s[1], s[2], s[3] == 0);
    c[i] = s[0] / (double)n;
  }
  if ((rc = check_tested(&P, e))) return rc;
  int test = db_choose(&P, method, e);
  if (test < 0) return e->code;
  int lr = test == SL_CI_LR_LINEAR, last = lr ? lr_response(&P) : 1, first = 1 - last;
  if ((rc = enough_rows(lr, n, given_width(&P), 2 + given_width(&P), e))) return rc;
  /* the factor's order: the varying conditioning columns, first, last;
  ** then the constant ones, summed only to keep the same complete rows */
  int order[SL_DB_MAX_SUMS];
  double centre[SL_DB_MAX_SUMS];
  size_t m = 0;
  for (size_t i = 2; i < nv; i++)
    if (vars[i].kind != CONST) { order[m] = cols[i]; centre[m++] = c[i]; }
  order[m] = cols[first]; centre[m++] = c[first];
  order[m] = cols[last]; centre[m++] = c[last];
  size_t k = m;
  for (size_t i = 2; i < nv; i++)
    if (vars[i].kind == CONST) { order[k] = cols[i]; centre[k++] = c[i]; }
  note_constant(&P, r);
  factor F = {0};
  rc = factor_db(t, order, nv, centre, n, m, lr, &F, e);
  if (!rc) {
    factor_test(&F, lr, n, level, r);
    if (lr) r->response = last;
  }
  factor_free(&F);
  return rc;
}

const char *sl_citest_name(int test) {
  switch (test) {
  case SL_CI_FISHER: return "partial r";
  case SL_CI_LR_LINEAR: return "LR linear";
  case SL_CI_LR_LOGIT: return "LR logistic";
  case SL_CI_G: return "G-test";
  case SL_CI_SPEARMAN: return "rank residual";
  }
  return "none";
}

/* Order of the finite p-values, ascending (ties by position: stable). */
static size_t order(const double *p, size_t m, size_t *ix) {
  size_t k = 0;
  for (size_t i = 0; i < m; i++) if (!isnan(p[i])) ix[k++] = i;
  for (size_t i = 1; i < k; i++) {      /* insertion sort: stable, m is small */
    size_t v = ix[i], j = i;
    while (j > 0 && p[ix[j - 1]] > p[v]) { ix[j] = ix[j - 1]; j--; }
    ix[j] = v;
  }
  return k;
}

int sl_citest_adjust(const double *p, size_t m, int method, double *out, sl_error *e) {
  if (method != SL_ADJ_NONE && method != SL_ADJ_HOLM && method != SL_ADJ_BH)
    return sl_error_set(e, SL_EARG, 0, 0, "unknown adjustment %d", method);
  size_t *ix = malloc((m ? m : 1) * sizeof *ix);
  double *q = malloc((m ? m : 1) * sizeof *q);
  if (!ix || !q) { free(ix); free(q); return sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory"); }
  size_t k = order(p, m, ix);
  if (method == SL_ADJ_HOLM) {          /* step down: max over j <= i of (k - j) p_(j) */
    double run = 0;
    for (size_t i = 0; i < k; i++) {
      double v = (double)(k - i) * p[ix[i]];
      if (v > run) run = v;
      q[i] = run < 1 ? run : 1;
    }
  } else if (method == SL_ADJ_BH) {     /* step up: min over j >= i of k / j p_(j) */
    double run = 1;
    for (size_t i = k; i-- > 0;) {
      double v = (double)k / (double)(i + 1) * p[ix[i]];
      if (v < run) run = v;
      q[i] = run;
    }
  } else {
    for (size_t i = 0; i < k; i++) q[i] = p[ix[i]];
  }
  for (size_t i = 0; i < m; i++) out[i] = isnan(p[i]) ? NAN : p[i];   /* before out is written */
  for (size_t i = 0; i < k; i++) out[ix[i]] = q[i];
  free(ix); free(q);
  return SL_OK;
}
