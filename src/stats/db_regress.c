/*
** db_regress.c: ols and logit of a lazy table, from aggregate queries (see
** db_regress.h).  Every query is built from the table's quoted column
** expressions and placeholders; the centres and coefficients are bound.
** The centred coordinates z = (1, x - c) are numbered 0..p-1 and named
** sl_x1..sl_x{p-1} in SQL; the response is sl_y.
*/
#include <float.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <gsl/gsl_errno.h>
#include <gsl/gsl_linalg.h>
#include "db_internal.h"
#include "db_regress.h"

#define SL_DB_HALVINGS 30               /* step-halvings before giving up (as sl_logit) */
#define SL_DB_EXTREME (10 * DBL_EPSILON) /* a probability "numerically 0 or 1" (as sl_logit) */
#define SL_DB_EXP_CAP 700               /* |eta| beyond this is taken as 700 in EXP(-|eta|):
                                           PostgreSQL's exp() refuses to underflow */

/* One fit: the table, the columns (y first) and their centres. */
typedef struct dfit {
  const sl_db_table *t;
  size_t p;                            /* terms: the intercept and nx columns */
  int cols[SL_DB_FIT_MAX_X + 1];       /* y, then x */
  double c[SL_DB_FIT_MAX_X + 1];       /* the means of the used rows, y's first */
  uint64_t n, dropped;
  const char *const *names;            /* p term names */
} dfit;

/* ---- checks and the first query ---- */

/* The columns numeric and distinct, the kind of SE one we compute. */
static int setup(dfit *d, const sl_db_table *t, int y, const int *x, size_t nx,
                 sl_vcov_kind se, const char *const *names, sl_error *e) {
  memset(d, 0, sizeof *d);
  d->t = t;
  d->names = names;
  d->p = nx + 1;
  if (nx > SL_DB_FIT_MAX_X)
    return sl_error_set(e, SL_ELIMIT, 0, 0, "%zu regressors; a fit in the database takes at "
                        "most %d", nx, SL_DB_FIT_MAX_X);
  if (se == SL_VCOV_HC3)
    return sl_error_set(e, SL_EARG, 0, 0, "se = \"HC3\" needs each row's leverage, which a "
                        "fit in the database does not compute; use \"HC1\" or \"HC0\", or "
                        "fetch the rows (t:fetch()) and fit in memory");
  if (se == SL_VCOV_CLUSTER)
    return sl_error_set(e, SL_EARG, 0, 0, "cluster-robust SEs are not computed in the "
                        "database yet; fetch the rows (t:fetch()) and fit in memory");
  if (se > SL_VCOV_CLUSTER) return sl_error_set(e, SL_EARG, 0, 0, "unknown kind of standard error");
  for (size_t k = 0; k <= nx; k++) {
    int j = k == 0 ? y : x[k - 1];
    if (j < 0 || (size_t)j >= sl_db_ncol(t))
      return sl_error_set(e, SL_EARG, 0, 0, "column %d is out of range", j + 1);
    if (sl_db_coltype(t, (size_t)j) != SL_NUMERIC)
      return sl_error_set(e, SL_EARG, 0, 0, "'%s' has text values; a fit in the database takes "
                          "numeric columns only (code the levels as 0/1 columns in db:query, "
                          "or fetch the rows)", sl_db_colname(t, (size_t)j));
    if (k > 0 && j == y)
      return sl_error_set(e, SL_EARG, 0, 0, "'%s' is both the response and a regressor",
                          sl_db_colname(t, (size_t)j));
    d->cols[k] = j;
  }
  return SL_OK;
}

/* " WHERE a IS NOT NULL AND b IS NOT NULL ...": the complete rows. */
static void add_where(sl_db_buf *b, const dfit *d) {
  for (size_t k = 0; k < d->p; k++)
    sl_db_buf_add(b, "%s%s IS NOT NULL", k ? " AND " : " WHERE ", sl_db_expr(d->t, (size_t)d->cols[k]));
}

/* Bind x as the next parameter and append its placeholder. */
static void add_param(sl_db_buf *b, const dfit *d, sl_db_param *par, size_t *np, double x) {
  char ph[16];
  par[*np] = (sl_db_param){0, x, 0, NULL};
  sl_db_buf_add(b, "%s", sl_db_placeholder(sl_db_of(d->t), (int)++*np, ph));
}

/* The means of the used columns over the complete rows, the rows used and
** dropped, and (logit) that y is 0 or 1: one query. */
static int means(dfit *d, int logistic, sl_error *e) {
  size_t p = d->p;
  sl_db_buf b = {0};
  sl_db_buf_add(&b, "SELECT COUNT(*), COUNT(sl_k)");
  for (size_t k = 0; k < p; k++) sl_db_buf_add(&b, ", SUM(sl_k * sl_c%zu)", k);
  sl_db_buf_add(&b, ", SUM(CASE WHEN sl_k = 1 AND sl_c0 <> 0 AND sl_c0 <> 1 THEN 1 ELSE 0 END)"
                " FROM (SELECT CASE WHEN ");
  for (size_t k = 0; k < p; k++)
    sl_db_buf_add(&b, "%s IS NOT NULL AND ", sl_db_expr(d->t, (size_t)d->cols[k]));
  sl_db_buf_add(&b, "1 = 1 THEN CAST(1 AS DOUBLE PRECISION) END AS sl_k");
  for (size_t k = 0; k < p; k++)
    sl_db_buf_add(&b, ", %s AS sl_c%zu", sl_db_expr(d->t, (size_t)d->cols[k]), k);
  sl_db_buf_add(&b, " FROM %s) AS sl_rows", sl_db_from(d->t));
  char *sql = sl_db_buf_done(&b, e);
  if (!sql) return e->code;
  double v[SL_DB_FIT_MAX_X + 4];
  int status = sl_db_numbers(d->t, sql, NULL, 0, v, p + 3, e);
  free(sql);
  if (status != SL_OK) return status;
  d->n = (uint64_t)v[1];
  d->dropped = (uint64_t)v[0] - d->n;
  if (d->n == 0)
    return sl_error_set(e, SL_EARG, 0, 0, "no rows are left after dropping those with missing "
                        "values (%llu dropped)", (unsigned long long)d->dropped);
  if (d->n < p)
    return sl_error_set(e, SL_EARG, 0, 0, "%llu complete rows for %zu terms",
                        (unsigned long long)d->n, p);
  for (size_t k = 0; k < p; k++) {
    d->c[k] = v[2 + k] / (double)d->n;
    if (!isfinite(d->c[k]))
      return sl_error_set(e, SL_EARG, 0, 0, "column '%s' holds a value that is not a finite "
                          "number (infinite or NaN)", sl_db_colname(d->t, (size_t)d->cols[k]));
  }
  if (logistic && v[2 + p] > 0)
    return sl_error_set(e, SL_EARG, 0, 0, "logit needs a 0/1 response; '%s' takes other values "
                        "in %.0f rows", sl_db_colname(d->t, (size_t)d->cols[0]), v[2 + p]);
  return SL_OK;
}

/* ---- SQL of the per-row layers ---- */

/* "SELECT y [- c0] AS sl_y, x1 - c1 AS sl_x1, ... FROM ... WHERE complete",
** the centres bound. */
static void add_centred(sl_db_buf *b, const dfit *d, int centre_y, sl_db_param *par, size_t *np) {
  sl_db_buf_add(b, "SELECT %s", sl_db_expr(d->t, (size_t)d->cols[0]));
  if (centre_y) { sl_db_buf_add(b, " - "); add_param(b, d, par, np, d->c[0]); }
  sl_db_buf_add(b, " AS sl_y");
  for (size_t k = 1; k < d->p; k++) {
    sl_db_buf_add(b, ", %s - ", sl_db_expr(d->t, (size_t)d->cols[k]));
    add_param(b, d, par, np, d->c[k]);
    sl_db_buf_add(b, " AS sl_x%zu", k);
  }
  sl_db_buf_add(b, " FROM %s", sl_db_from(d->t));
  add_where(b, d);
}

/* "sl_y, sl_x1, ..." : the columns a layer passes on. */
static void add_pass_on(sl_db_buf *b, const dfit *d) {
  sl_db_buf_add(b, "sl_y");
  for (size_t k = 1; k < d->p; k++) sl_db_buf_add(b, ", sl_x%zu", k);
}

/* "theta0 + theta1 * sl_x1 + ...", the coefficients bound. */
static void add_linear(sl_db_buf *b, const dfit *d, const double *theta, sl_db_param *par,
                       size_t *np) {
  add_param(b, d, par, np, theta[0]);
  for (size_t k = 1; k < d->p; k++) {
    sl_db_buf_add(b, " + ");
    add_param(b, d, par, np, theta[k]);
    sl_db_buf_add(b, " * sl_x%zu", k);
  }
}

/* ", SUM(w z_k z_l)" for k <= l (z_0 = 1). */
static void add_cross(sl_db_buf *b, const dfit *d, const char *w) {
  for (size_t k = 0; k < d->p; k++)
    for (size_t l = k; l < d->p; l++) {
      sl_db_buf_add(b, ", SUM(%s", w);
      if (k > 0) sl_db_buf_add(b, " * sl_x%zu", k);
      if (l > 0) sl_db_buf_add(b, " * sl_x%zu", l);
      sl_db_buf_add(b, ")");
    }
}

/* The symmetric p x p matrix of add_cross's sums from v; returns v past them. */
static const double *take_cross(const dfit *d, const double *v, double *M) {
  size_t p = d->p;
  for (size_t k = 0; k < p; k++)
    for (size_t l = k; l < p; l++) M[k * p + l] = M[l * p + k] = *v++;
  return v;
}

/* Run sql (built in b) into v[0..nv-1]; the first value must be the rows
** of the fit (the table changing between queries is an error). */
static int run(const dfit *d, sl_db_buf *b, const sl_db_param *par, size_t np, double *v,
               size_t nv, sl_error *e) {
  char *sql = sl_db_buf_done(b, e);
  if (!sql) return e->code;
  int status = sl_db_numbers(d->t, sql, par, np, v, nv, e);
  free(sql);
  if (status == SL_OK && v[0] != (double)d->n)
    status = sl_error_set(e, SL_EARG, 0, 0, "the table changed while the model was fitted "
                          "(%llu complete rows, then %.0f)", (unsigned long long)d->n, v[0]);
  return status;
}

/* ---- the p x p algebra ---- */

/* A = L L' in place through GSL (L in the lower triangle, p x p
** row-major); returns the first column whose pivot is not positive, or p.
** On a failure the leading blocks are factored, one size at a time (p is
** small), to find that column; A is then left with the block before it
** factored. */
static size_t cholesky(double *A, size_t p) {
  gsl_matrix_view M = gsl_matrix_view_array(A, p, p);
  double *copy = malloc(p * p * sizeof *copy);
  if (copy) memcpy(copy, A, p * p * sizeof *copy);
  gsl_error_handler_t *old = gsl_set_error_handler_off();
  size_t bad = p;
  if (gsl_linalg_cholesky_decomp1(&M.matrix)) {
    bad = 0;
    for (size_t k = 1; copy && k <= p; k++) {   /* the largest block that factors */
      memcpy(A, copy, p * p * sizeof *copy);
      gsl_matrix_view B = gsl_matrix_view_array_with_tda(A, k, k, p);
      if (gsl_linalg_cholesky_decomp1(&B.matrix)) break;
      bad = k;
    }
    if (copy) {
      memcpy(A, copy, p * p * sizeof *copy);
      gsl_matrix_view B = gsl_matrix_view_array_with_tda(A, bad ? bad : 1, bad ? bad : 1, p);
      if (bad) gsl_linalg_cholesky_decomp1(&B.matrix);
    }
  }
  gsl_set_error_handler(old);
  free(copy);
  return bad;
}

/* x = (L L')^-1 b in place. */
static void chol_solve(const double *L, size_t p, double *x) {
  gsl_matrix_const_view M = gsl_matrix_const_view_array(L, p, p);
  gsl_vector_view v = gsl_vector_view_array(x, p);
  gsl_linalg_cholesky_svx(&M.matrix, &v.vector);
}

/* Ai = (L L')^-1. */
static void chol_inverse(const double *L, size_t p, double *Ai, double *col) {
  (void)col;
  memcpy(Ai, L, p * p * sizeof *Ai);
  gsl_matrix_view M = gsl_matrix_view_array(Ai, p, p);
  gsl_linalg_cholesky_invert(&M.matrix);
}

/* Factor A (the sums of z z' over the rows, A_00 = n) into L, refusing
** aliased columns as the in-memory fit does (sine to the span of the
** earlier columns of (1, x) at most SL_RANK_TOL) and columns so nearly
** collinear that the normal equations would lose the digits
** (SL_DB_NEAR_SINGULAR, measured on the centred columns). */
static int factor(const dfit *d, const double *A, double *L, sl_error *e) {
  size_t p = d->p;
  double D[SL_DB_FIT_MAX_X + 1];
  for (size_t k = 0; k < p; k++) D[k] = A[k * p + k] > 0 ? sqrt(A[k * p + k]) : 1;
  for (size_t k = 0; k < p; k++)   /* scaled to unit diagonal: L's diagonal holds the sines */
    for (size_t l = 0; l < p; l++) L[k * p + l] = A[k * p + l] / (D[k] * D[l]);
  size_t bad = cholesky(L, p);
  for (size_t k = 0; k < p; k++) {
    double n = (double)d->n, c = k ? d->c[k] : 0, s = k ? A[k] : n;
    double raw = k ? A[k * p + k] + 2 * c * s + n * c * c : n;   /* |x_k|^2 uncentred */
    double sine = k < bad ? L[k * p + k] : 0;
    const char *nm = d->names ? d->names[k] : "?";
    if (k == bad || sine * D[k] <= SL_RANK_TOL * sqrt(raw) || A[k * p + k] <= 0) {
      if (raw == 0) return sl_error_set(e, SL_EARG, 0, 0, "column '%s' is all zeros: drop it", nm);
      return sl_error_set(e, SL_EARG, 0, 0, "column '%s' is a linear combination of earlier "
                          "columns: drop it", nm);
    }
    if (sine < SL_DB_NEAR_SINGULAR)
      return sl_error_set(e, SL_EARG, 0, 0, "column '%s' is nearly a linear combination of "
                          "earlier columns (sine %.1e, below %g): the cross-products in the "
                          "database would lose too many digits; fetch the rows (t:fetch()) and "
                          "fit in memory, or drop it", nm, sine, SL_DB_NEAR_SINGULAR);
  }
  for (size_t k = 0; k < p; k++)   /* back to the unscaled factor */
    for (size_t l = 0; l <= k; l++) L[k * p + l] *= D[k];
  return SL_OK;
}

/* From the centred coefficients to those of (1, x): b_0 = cy + t_0 -
** sum c_k t_k (cy = 0 for logit), b_k = t_k. */
static void to_raw_coef(const dfit *d, const double *theta, double cy, double *b) {
  b[0] = cy + theta[0];
  for (size_t k = 1; k < d->p; k++) { b[0] -= d->c[k] * theta[k]; b[k] = theta[k]; }
}

/* V = J C J' with J the map above (row 0: 1, -c_1, ..., -c_{p-1}). */
static void to_raw_cov(const dfit *d, const double *C, double *V) {
  size_t p = d->p;
  memcpy(V, C, p * p * sizeof *V);
  for (size_t l = 0; l < p; l++)   /* row 0 of J C */
    for (size_t k = 1; k < p; k++) V[l] -= d->c[k] * C[k * p + l];
  for (size_t r = 0; r < p; r++) {   /* column 0 of (J C) J' */
    double s = V[r * p];
    for (size_t k = 1; k < p; k++) s -= V[r * p + k] * d->c[k];
    V[r * p] = s;
  }
  for (size_t k = 1; k < p; k++) V[k] = V[k * p];   /* symmetric */
}

/* S = Ai M Ai times f (the sandwich). */
static void sandwich(size_t p, const double *Ai, const double *M, double f, double *S,
                     double *T) {
  for (size_t i = 0; i < p; i++)
    for (size_t j = 0; j < p; j++) {
      double s = 0;
      for (size_t k = 0; k < p; k++) s += Ai[i * p + k] * M[k * p + j];
      T[i * p + j] = s;
    }
  for (size_t i = 0; i < p; i++)
    for (size_t j = 0; j < p; j++) {
      double s = 0;
      for (size_t k = 0; k < p; k++) s += T[i * p + k] * Ai[k * p + j];
      S[i * p + j] = f * s;
    }
}

/* The arrays of a fit, zeroed (sl_fit_alloc), or an error. */
static int fit_alloc(sl_fit *fit, size_t n, size_t p, sl_error *e) {
  return sl_fit_alloc(fit, n, p) ? sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory") : SL_OK;
}

/* The SEs of a covariance (NaN where the variance is not positive). */
static void ses(size_t p, const double *V, double *se) {
  for (size_t k = 0; k < p; k++) se[k] = V[k * p + k] >= 0 ? sqrt(V[k * p + k]) : NAN;
}

/* The chosen covariance: the classical one, or the sandwich Ai M Ai (HC1:
** times n / (n - p), as the in-memory fits) mapped to (1, x); robust_se
** gets the sandwich's SEs (NaN when no meat was summed). */
static void finish(const dfit *d, sl_vcov_kind se, const double *Ai, const double *M,
                   sl_fit *fit, double *W) {
  size_t p = d->p;
  double n = (double)d->n, *S = W, *T = W + p * p;
  fit->se_kind = se;
  for (size_t k = 0; k < p; k++) fit->robust_se[k] = NAN;
  if (M) {
    sandwich(p, Ai, M, se == SL_VCOV_HC1 ? n / (n - (double)p) : 1, S, T);
    to_raw_cov(d, S, T);
    ses(p, T, fit->robust_se);
  }
  if (M && se != SL_VCOV_CLASSICAL) {
    memcpy(fit->cov_chosen, T, p * p * sizeof *T);
    memcpy(fit->se_chosen, fit->robust_se, p * sizeof *fit->se_chosen);
  } else {
    memcpy(fit->cov_chosen, fit->cov, p * p * sizeof *T);
    memcpy(fit->se_chosen, fit->se, p * sizeof *fit->se_chosen);
  }
  fit->rank = p;
  fit->wsum = fit->ess = n;
  fit->npos = (size_t)d->n;
}

/* The engine's subquery fence (db_internal.h): the logistic pass reads
** each of its values many times. */
static const char *fence(const dfit *d) { return sl_db_fence(sl_db_of(d->t)); }

/* ---- least squares ---- */

/* The residual-weighted cross-products sum e_i^2 z_i z_i' at theta. */
static int ols_meat(const dfit *d, const double *theta, double *M, double *v, sl_error *e) {
  sl_db_param par[2 * SL_DB_FIT_MAX_X + 4];
  size_t np = 0;
  sl_db_buf b = {0};
  sl_db_buf_add(&b, "SELECT COUNT(*)");
  add_cross(&b, d, "sl_e * sl_e");
  sl_db_buf_add(&b, " FROM (SELECT ");
  add_pass_on(&b, d);
  sl_db_buf_add(&b, ", sl_y - (");
  add_linear(&b, d, theta, par, &np);
  sl_db_buf_add(&b, ") AS sl_e FROM (");
  add_centred(&b, d, 1, par, &np);
  sl_db_buf_add(&b, "%s) AS sl_centred%s) AS sl_resid", fence(d), fence(d));
  int status = run(d, &b, par, np, v, 1 + d->p * (d->p + 1) / 2, e);
  if (status == SL_OK) take_cross(d, v + 1, M);
  return status;
}

int sl_db_ols(const sl_db_table *t, int y, const int *x, size_t nx, sl_vcov_kind se,
              const char *const *names, sl_fit *fit, uint64_t *dropped, sl_error *e) {
  memset(fit, 0, sizeof *fit);
  dfit d;
  int status = setup(&d, t, y, x, nx, se, names, e);
  if (status == SL_OK) status = means(&d, 0, e);
  if (status != SL_OK) return status;
  size_t p = d.p;
  /* work: sums p, cross p*p, A p*p, L p*p, Ai p*p, M p*p, W 2 p*p, v */
  double *w = malloc((8 * p * p + 4 * p + 8 + p * (p + 1) / 2) * sizeof *w);
  if (!w) return sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
  double *sum = w, *cross = sum + p, *A = cross + p * p, *L = A + p * p, *Ai = L + p * p;
  double *M = Ai + p * p, *W = M + p * p, *theta = W + 2 * p * p, *col = theta + p;
  double *v = col + p;
  sl_db_sums_out so;
  status = sl_db_sums(t, d.cols, p, -1, d.c, sum, cross, &so, e);
  if (status == SL_OK && so.used != d.n)
    status = sl_error_set(e, SL_EARG, 0, 0, "the table changed while the model was fitted");
  if (status != SL_OK) goto done;
  /* A = sum z z' and r = sum z (y - cy), from the sums of (y, x) - c */
  A[0] = (double)d.n;
  theta[0] = sum[0];
  for (size_t k = 1; k < p; k++) {
    A[k] = A[k * p] = sum[k];
    theta[k] = cross[k];   /* cross[0 * p + k] */
    for (size_t l = 1; l < p; l++) A[k * p + l] = cross[k * p + l];
  }
  double cyy = cross[0], r0 = sum[0];
  memcpy(col, theta, p * sizeof *col);   /* r, kept for the residual sum */
  if ((status = factor(&d, A, L, e)) != SL_OK) goto done;
  chol_solve(L, p, theta);
  double rss = cyy, n = (double)d.n, df = n - (double)p;
  for (size_t k = 0; k < p; k++) rss -= theta[k] * col[k];
  if (rss < 0) rss = 0;
  double tss = cyy - r0 * r0 / n;
  if ((status = fit_alloc(fit, (size_t)d.n, p, e)) != SL_OK) goto done;
  to_raw_coef(&d, theta, d.c[0], fit->coef);
  chol_inverse(L, p, Ai, v);
  double s2 = df > 0 ? rss / df : NAN;
  for (size_t k = 0; k < p * p; k++) W[k] = s2 * Ai[k];
  to_raw_cov(&d, W, fit->cov);
  ses(p, fit->cov, fit->se);
  if (se != SL_VCOV_CLASSICAL && (status = ols_meat(&d, theta, M, v, e)) != SL_OK) goto done;
  finish(&d, se, Ai, se != SL_VCOV_CLASSICAL ? M : NULL, fit, W);
  fit->rss = fit->deviance = rss;
  fit->sigma = df > 0 ? sqrt(rss / df) : NAN;
  fit->r2 = 1 - rss / tss;
  fit->adj_r2 = df > 0 ? 1 - (n - 1) / df * (rss / tss) : NAN;
  fit->loglik = -0.5 * n * (log(2 * M_PI * rss / n) + 1);
  fit->iterations = fit->converged = 1;
  fit->df = df;
  *dropped = d.dropped;
done:
  free(w);
  if (status != SL_OK) sl_fit_free(fit);
  return status;
}

/* ---- logistic regression ---- */

/* What one pass at theta gives. */
typedef struct lpass {
  double dev, ll, extreme;
  double *g, *H, *M;   /* p, p x p, p x p */
} lpass;

/* One aggregate query at theta: the log-likelihood, the rows fitted
** numerically 0 or 1, the score sum z (y - mu), the information
** mu (1 - mu) z z' and the meat (y - mu)^2 z z'.  mu from t = exp(-|eta|):
** 1 / (1 + t) or t / (1 + t), and log(1 + exp(-|eta|)) as LN(1 + t),
** never overflowing. */
static int logit_pass(const dfit *d, const double *theta, lpass *o, double *v, sl_error *e) {
  sl_db_param par[2 * SL_DB_FIT_MAX_X + 4];
  size_t np = 0, p = d->p;
  sl_db_buf b = {0};
  sl_db_buf_add(&b, "SELECT COUNT(*), SUM(sl_ll), SUM(CASE WHEN sl_mu < ");
  add_param(&b, d, par, &np, SL_DB_EXTREME);
  sl_db_buf_add(&b, " OR sl_omu < ");
  add_param(&b, d, par, &np, SL_DB_EXTREME);
  sl_db_buf_add(&b, " THEN 1 ELSE 0 END), SUM(sl_y - sl_mu)");
  for (size_t k = 1; k < p; k++) sl_db_buf_add(&b, ", SUM((sl_y - sl_mu) * sl_x%zu)", k);
  add_cross(&b, d, "sl_mu * sl_omu");
  add_cross(&b, d, "(sl_y - sl_mu) * (sl_y - sl_mu)");
  sl_db_buf_add(&b, " FROM (SELECT ");
  add_pass_on(&b, d);
  sl_db_buf_add(&b, ", CASE WHEN sl_eta >= 0 THEN 1 / (1 + sl_t) ELSE sl_t / (1 + sl_t) END "
                "AS sl_mu, CASE WHEN sl_eta >= 0 THEN sl_t / (1 + sl_t) ELSE 1 / (1 + sl_t) END "
                "AS sl_omu, -(LN(1 + sl_t) + CASE WHEN sl_eta < 0 THEN -sl_y * sl_eta "
                "ELSE (1 - sl_y) * sl_eta END) AS sl_ll FROM (SELECT ");
  add_pass_on(&b, d);
  sl_db_buf_add(&b, ", sl_eta, EXP(-(CASE WHEN ABS(sl_eta) > %d THEN %d ELSE ABS(sl_eta) END))"
                " AS sl_t FROM (SELECT ", SL_DB_EXP_CAP, SL_DB_EXP_CAP);
  add_pass_on(&b, d);
  sl_db_buf_add(&b, ", ");
  add_linear(&b, d, theta, par, &np);
  sl_db_buf_add(&b, " AS sl_eta FROM (");
  add_centred(&b, d, 0, par, &np);
  sl_db_buf_add(&b, "%s) AS sl_centred%s) AS sl_linear%s) AS sl_exp%s) AS sl_prob", fence(d),
                fence(d), fence(d), fence(d));
  int status = run(d, &b, par, np, v, 3 + p + p * (p + 1), e);
  if (status != SL_OK) return status;
  o->ll = v[1];
  o->dev = -2 * v[1];
  o->extreme = v[2];
  memcpy(o->g, v + 3, p * sizeof *o->g);
  take_cross(d, take_cross(d, v + 3 + p, o->H), o->M);
  return SL_OK;
}

/* Swap two passes' results. */
static void swap_pass(lpass *a, lpass *b) {
  lpass t = *a;
  *a = *b;
  *b = t;
}

int sl_db_logit(const sl_db_table *t, int y, const int *x, size_t nx, sl_vcov_kind se,
                const char *const *names, int max_iter, double tol, sl_fit *fit,
                uint64_t *dropped, char *warn, size_t warnsize, sl_error *e) {
  memset(fit, 0, sizeof *fit);
  if (warn && warnsize) warn[0] = 0;
  if (max_iter <= 0) max_iter = 50;
  if (!(tol > 0)) tol = 1e-10;
  dfit d;
  int status = setup(&d, t, y, x, nx, se, names, e);
  if (status == SL_OK) status = means(&d, 1, e);
  if (status != SL_OK) return status;
  size_t p = d.p, pp = p * p;
  /* work: two passes (g, H, M), L, Ai, A, W 2 p*p, b, bn, v */
  double *w = malloc((10 * pp + 6 * p + 8 + p * (p + 1)) * sizeof *w);
  if (!w) return sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
  lpass o = {0, 0, 0, w, w + p, w + p + pp}, on = {0, 0, 0, w + p + 2 * pp, w + 2 * p + 2 * pp,
                                                   w + 2 * p + 3 * pp};
  double *L = w + 2 * p + 4 * pp, *Ai = L + pp, *A = Ai + pp, *W = A + pp;
  double *b = W + 2 * pp, *bn = b + p, *v = bn + p;
  memset(b, 0, p * sizeof *b);
  status = logit_pass(&d, b, &o, v, e);
  if (status != SL_OK) goto done;
  for (size_t k = 0; k < pp; k++) A[k] = 4 * o.H[k];   /* at 0 every mu (1 - mu) is 1/4 */
  if ((status = factor(&d, A, L, e)) != SL_OK) goto done;
  int it = 0, converged = 0, stuck = 0;
  while (it < max_iter) {
    memcpy(L, o.H, pp * sizeof *L);
    if (cholesky(L, p) < p) {
      status = sl_error_set(e, SL_EARG, 0, 0, "the information matrix is singular after %d "
                            "iterations (separation?); fetch the rows (t:fetch()) and fit in "
                            "memory for a diagnosis", it);
      goto done;
    }
    memcpy(bn, o.g, p * sizeof *bn);
    chol_solve(L, p, bn);
    for (size_t k = 0; k < p; k++) bn[k] += b[k];
    it++;
    if ((status = logit_pass(&d, bn, &on, v, e)) != SL_OK) goto done;
    double rel = fabs(on.dev - o.dev) / (fabs(on.dev) + 0.1);
    int h = 0;
    while ((!isfinite(on.dev) || (on.dev > o.dev && rel >= tol)) && h < SL_DB_HALVINGS) {
      for (size_t k = 0; k < p; k++) bn[k] = 0.5 * (bn[k] + b[k]);
      if ((status = logit_pass(&d, bn, &on, v, e)) != SL_OK) goto done;
      rel = fabs(on.dev - o.dev) / (fabs(on.dev) + 0.1);
      h++;
    }
    if (!isfinite(on.dev) || (on.dev > o.dev && rel >= tol)) { stuck = 1; break; }
    memcpy(b, bn, p * sizeof *b);
    swap_pass(&o, &on);
    if (rel < tol) { converged = 1; break; }
  }
  /* covariances at the final coefficients */
  memcpy(L, o.H, pp * sizeof *L);
  if (cholesky(L, p) < p) {
    status = sl_error_set(e, SL_EARG, 0, 0, "the information matrix is singular at the last "
                          "coefficients (separation?); fetch the rows and fit in memory");
    goto done;
  }
  if ((status = fit_alloc(fit, (size_t)d.n, p, e)) != SL_OK) goto done;
  to_raw_coef(&d, b, 0, fit->coef);
  chol_inverse(L, p, Ai, v);
  to_raw_cov(&d, Ai, fit->cov);
  ses(p, fit->cov, fit->se);
  finish(&d, se, Ai, o.M, fit, W);
  if (se == SL_VCOV_HC1) {   /* robust_se is the HC0 sandwich, whatever is chosen */
    sandwich(p, Ai, o.M, 1, W, W + pp);
    to_raw_cov(&d, W, W + pp);
    ses(p, W + pp, fit->robust_se);
  }
  fit->loglik = o.ll;
  fit->deviance = o.dev;
  fit->iterations = it;
  fit->converged = converged || (stuck && isfinite(o.dev));
  fit->r2 = fit->adj_r2 = fit->sigma = fit->rss = NAN;
  fit->df = INFINITY;
  *dropped = d.dropped;
  if (warn && warnsize) {
    if (stuck) snprintf(warn, warnsize, "step-halving failed after %d iterations", it);
    else if (!converged) snprintf(warn, warnsize, "did not converge in %d iteration%s", it,
                                  it == 1 ? "" : "s");
    size_t used = strlen(warn);
    if (o.extreme > 0 && used < warnsize)
      snprintf(warn + used, warnsize - used, "%sfitted probabilities numerically 0 or 1 in %.0f "
               "row%s (separation?)", used ? "; " : "", o.extreme, o.extreme == 1 ? "" : "s");
  }
done:
  free(w);
  if (status != SL_OK) sl_fit_free(fit);
  return status;
}
