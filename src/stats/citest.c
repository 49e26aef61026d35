/*
** citest.c: one conditional-independence test on a frame (see citest.h):
** the partial correlation with Fisher's z, the likelihood-ratio test of
** nested regressions, the stratified G-test, Spearman's correlation of
** residuals; and Holm's and Benjamini-Hochberg's adjustments.  The least
** squares and logistic fits are those of regress.c; distributions are GSL's.
*/
#include <math.h>
#include <stdlib.h>
#include <string.h>
#include <gsl/gsl_cdf.h>
#include <gsl/gsl_rng.h>
#include <gsl/gsl_sort.h>
#include <gsl/gsl_statistics_double.h>
#include "citest.h"
#include "regress.h"

enum { CONT = 0, BIN, CAT, CONST };   /* kinds of a column over the complete rows */

/* One column of the test: a (slot 0), b (slot 1) or a given one. */
typedef struct var {
  const sl_column *c;
  int kind;
  size_t nused;           /* discrete: levels present */
  int32_t *map;           /* categorical: code -> used index, -1 unused */
} var;

/* The complete rows and what each column is over them. */
typedef struct prep {
  size_t nv, n;           /* columns (a, b, given...), complete rows */
  var *v;
  size_t *rows;
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
    v->kind = !(hi > lo) ? CONST : binary ? BIN : CONT;
    v->nused = binary ? 2 : 0;
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
  for (size_t i = 0; i < 2; i++)
    if (P->v[i].kind == CONST)
      return sl_error_set(e, SL_EARG, 0, 0, "'%s' is constant over the %zu complete rows: "
                          "nothing to test", P->v[i].c->name, P->n);
  return SL_OK;
}

/* Columns a var adds to a design (0 for a constant one). */
static size_t width(const var *v) {
  if (v->kind == CONST) return 0;
  if (v->c->type == SL_NUMERIC) return 1;
  return v->nused - 1;
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
  size_t p = 1;
  for (size_t i = 2; i < P->nv; i++) p += width(&P->v[i]);
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
    for (size_t w = width(&P->v[vi]); w > 0; w--) d->names[k++] = P->v[vi].c->name;
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

/* Pearson's correlation of x and y (centred here: residuals of a fit with
** an intercept already have mean zero up to rounding). */
static double correlation(const double *x, const double *y, size_t n) {
  return gsl_stats_correlation(x, 1, y, 1, n);
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

static double zquant(double level) { return gsl_cdf_ugaussian_Pinv(1 - (1 - level) / 2); }

/* Partial correlation or Spearman's correlation of the residuals. */
static int test_residual(const prep *P, const size_t *ix, size_t n, int spearman, double level,
                         sl_ci_result *r, sl_error *e) {
  design d = {0};
  int rc = build(P, ix, n, -1, &d, e);
  if (rc) return rc;
  size_t k = d.p - 1;
  if (n < k + 4) {
    design_free(&d);
    return sl_error_set(e, SL_EARG, 0, 0, "too few rows: %zu complete rows for %zu conditioning "
                        "column%s (the test needs at least %zu)", n, k, k == 1 ? "" : "s", k + 4);
  }
  double *ra = malloc(2 * n * sizeof *ra);
  if (!ra) { design_free(&d); return sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory"); }
  double *rb = ra + n;
  rc = residuals(P, ix, &d, 0, ra, e);
  if (!rc) rc = residuals(P, ix, &d, 1, rb, e);
  design_free(&d);
  if (!rc && spearman && (ranks(ra, n, ra) || ranks(rb, n, rb)))
    rc = sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
  double rho = rc ? NAN : correlation(ra, rb, n);
  free(ra);
  if (rc) return rc;
  if (!isfinite(rho))
    return sl_error_set(e, SL_EARG, 0, 0, "'%s' or '%s' is a linear function of the "
                        "conditioning set: its residuals are all zero", P->v[0].c->name,
                        P->v[1].c->name);
  if (rho > 1) rho = 1;
  if (rho < -1) rho = -1;
  double dn = (double)n, dk = (double)k;
  double se = spearman ? sqrt(1.06 / (dn - dk - 3)) : 1 / sqrt(dn - dk - 3);
  double z = atanh(rho), q = zquant(level);
  r->test = spearman ? SL_CI_SPEARMAN : SL_CI_FISHER;
  r->effect = rho;
  r->lo = tanh(z - q * se);
  r->hi = tanh(z + q * se);
  if (spearman) {
    r->df = dn - dk - 2;
    r->stat = fabs(rho) < 1 ? rho * sqrt(r->df / (1 - rho * rho)) : copysign(INFINITY, rho);
    r->p = 2 * gsl_cdf_tdist_Q(fabs(r->stat), r->df);
  } else {
    r->df = NAN;
    r->stat = z / se;
    r->p = 2 * gsl_cdf_ugaussian_Q(fabs(r->stat));
  }
  return SL_OK;
}

/* The fit of the response (var resp) on the design d: its log-likelihood
** (Gaussian for least squares) and the last coefficient. */
static int fit_ll(const prep *P, const size_t *ix, const design *d, int resp, int logistic,
                  double *ll, double *last, char *note, sl_error *e) {
  double *y = malloc(d->n * sizeof *y);
  if (!y) return sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
  for (size_t r = 0; r < d->n; r++) y[r] = value(&P->v[resp], ix[r]);
  sl_fit fit;
  char warn[256] = "";
  int rc = logistic ? sl_logit(d->X, y, NULL, d->n, d->p, d->names, 0, 0, &fit, warn,
                               sizeof warn, e)
                    : sl_ols(d->X, y, d->n, d->p, d->names, &fit, e);
  free(y);
  if (rc) return rc;
  if (logistic) *ll = fit.loglik;
  else {
    double dn = (double)d->n;
    *ll = fit.rss > 0 ? -dn / 2 * (log(2 * M_PI * fit.rss / dn) + 1) : INFINITY;
  }
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

/* The likelihood-ratio test of resp ~ given against resp ~ given + other. */
static int test_lr(const prep *P, const size_t *ix, size_t n, double level, sl_ci_result *r,
                   sl_error *e) {
  int resp = lr_response(P);
  if (resp < 0)
    return sl_error_set(e, SL_EARG, 0, 0, "'%s' and '%s' both have more than two levels and "
                        "the G-test does not apply (too many cells or too few rows): no "
                        "regression test for a pair of many-level columns", P->v[0].c->name,
                        P->v[1].c->name);
  int other = 1 - resp, logistic = P->v[resp].kind == BIN;
  design d0 = {0}, d1 = {0};
  int rc = build(P, ix, n, -1, &d0, e);
  if (!rc) rc = build(P, ix, n, other, &d1, e);
  if (rc) { design_free(&d0); design_free(&d1); return rc; }
  size_t p1 = d1.p, df = d1.p - d0.p;
  if (n < p1 + 2) {
    design_free(&d0); design_free(&d1);
    return sl_error_set(e, SL_EARG, 0, 0, "too few rows: %zu complete rows for a model of %zu "
                        "columns (the test needs at least %zu)", n, p1, p1 + 2);
  }
  double ll0, ll1, c0, c1;
  rc = fit_ll(P, ix, &d0, resp, logistic, &ll0, &c0, r->note, e);
  if (!rc) rc = fit_ll(P, ix, &d1, resp, logistic, &ll1, &c1, r->note, e);
  design_free(&d0); design_free(&d1);
  if (rc) return rc;
  if (!isfinite(ll1))
    return sl_error_set(e, SL_EARG, 0, 0, "'%s' is fitted exactly by the other columns: no "
                        "residual variation to test", P->v[resp].c->name);
  double lr = 2 * (ll1 - ll0);
  if (lr < 0) lr = 0;                 /* rounding of equal fits */
  r->test = logistic ? SL_CI_LR_LOGIT : SL_CI_LR_LINEAR;
  r->response = resp;
  r->stat = lr;
  r->df = (double)df;
  r->p = gsl_cdf_chisq_Q(lr, r->df);
  double rp = sqrt(1 - exp(-lr / (double)n));
  r->effect = df == 1 ? copysign(rp, c1) : rp;
  r->lo = r->hi = NAN;
  if (!logistic && df == 1) {         /* the partial correlation: Fisher's interval */
    double se = 1 / sqrt((double)n - (double)(p1 - 2) - 3), z = atanh(r->effect),
           q = zquant(level);
    r->lo = tanh(z - q * se);
    r->hi = tanh(z + q * se);
  }
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
                        "of both '%s' and '%s': nothing to test", P->v[0].c->name,
                        P->v[1].c->name);
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
                          (a->kind == CAT ? a : b)->c->name), -1;
    return method == SL_CI_PARTIAL ? SL_CI_FISHER : SL_CI_SPEARMAN;
  case SL_CI_LR: return SL_CI_LR_LINEAR;
  case SL_CI_GTEST:
    if (!discrete)
      for (size_t i = 0; i < P->nv; i++)
        if (P->v[i].kind == CONT)
          return sl_error_set(e, SL_EARG, 0, 0, "the G-test needs discrete columns; '%s' is "
                              "continuous", P->v[i].c->name), -1;
    return SL_CI_G;
  }
  return sl_error_set(e, SL_EARG, 0, 0, "unknown method %d", method), -1;
}

/* Run the chosen test on the rows ix. */
static int run(const prep *P, const size_t *ix, size_t n, int test, double level,
               sl_ci_result *r, sl_error *e) {
  switch (test) {
  case SL_CI_FISHER: return test_residual(P, ix, n, 0, level, r, e);
  case SL_CI_SPEARMAN: return test_residual(P, ix, n, 1, level, r, e);
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
             "(conditioning on it changes nothing)", len ? "; " : "", P->v[i].c->name);
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
