/*
** iv.c: two-stage least squares (see iv.h), each stage a least-squares
** fit of regress.c (a streamed QR, so the bits never depend on the thread
** count), and the 2SLS estimate of estimate{method = "iv"} with the Wald
** estimator beside it.
**
** (X^'X^)^-1, the bread of both covariances, is the second-stage fit's
** classical covariance divided by its residual variance: that fit is the
** regression of y on X^, whose covariance is s2^2 (X^'X^)^-1 from the QR
** factor of X^.  The sandwich is formed with GSL's BLAS on p x p matrices.
*/
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <gsl/gsl_blas.h>
#include <gsl/gsl_cdf.h>
#include <gsl/gsl_linalg.h>
#include <gsl/gsl_matrix.h>
#include "iv.h"
#include "estimate_internal.h"
#include "regress.h"

void sl_iv_fit_free(sl_iv_fit *fit) {
  if (!fit) return;
  free(fit->coef); free(fit->se); free(fit->se_hc0); free(fit->se_hc1); free(fit->first_coef);
  memset(fit, 0, sizeof *fit);
}

/* Rows [1, a_i, b_i] of n x (1 + ka + kb) from two row-major blocks. */
static void design(double *D, const double *a, size_t ka, const double *b, size_t kb, size_t n) {
  size_t p = 1 + ka + kb;
  for (size_t i = 0; i < n; i++) {
    double *d = D + i * p;
    d[0] = 1;   /* plain loops: a call to memcpy per row of 1 or 2 values costs more */
    for (size_t j = 0; j < ka; j++) d[1 + j] = a[i * ka + j];
    for (size_t j = 0; j < kb; j++) d[1 + ka + j] = b[i * kb + j];
  }
}

/* Re-raise a stage's error with the stage named. */
static int stage_error(sl_error *e, const char *what) {
  char m[SL_MSG_MAX];
  snprintf(m, sizeof m, "%s", e->msg);
  return sl_error_set(e, e->code, 0, 0, "%s: %s", what, m);
}

/* The F statistic of the excluded instruments from the first-stage fit
** alone: b' V^-1 b / k for their coefficients b and classical covariance
** V, which equals ((RSS_r - RSS) / k) / (RSS / (n - p)) for the fit
** without them (the Wald form of the F test of linear restrictions; Greene
** 2012, Econometric Analysis, 5.3.2), so that fit is never needed.  V^-1 b
** by GSL's modified Cholesky, which takes any symmetric matrix (V is
** positive definite for a full-rank fit, but may be nearly singular), so
** GSL's error handler is never reached. */
static int first_f(const sl_fit *f1, size_t k, double *F, sl_error *e) {
  size_t p = f1->p;
  gsl_matrix *V = gsl_matrix_alloc(k, k);
  gsl_vector *b = gsl_vector_alloc(k), *v = gsl_vector_alloc(k);
  gsl_permutation *perm = gsl_permutation_alloc(k);
  int rc = SL_OK;
  if (!V || !b || !v || !perm) { rc = sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory"); goto done; }
  for (size_t i = 0; i < k; i++) {
    gsl_vector_set(b, i, f1->coef[1 + i]);
    for (size_t j = 0; j < k; j++) gsl_matrix_set(V, i, j, f1->cov[(1 + i) * p + 1 + j]);
  }
  gsl_linalg_mcholesky_decomp(V, perm, NULL);
  gsl_linalg_mcholesky_solve(V, perm, b, v);
  double q = 0;
  gsl_blas_ddot(b, v, &q);
  *F = q / (double)k;
done:
  if (V) gsl_matrix_free(V);
  if (b) gsl_vector_free(b);
  if (v) gsl_vector_free(v);
  if (perm) gsl_permutation_free(perm);
  return rc;
}

/* The first stage: x on (1, Z, W); x^ into xhat; the F statistic of the
** excluded instruments and their partial R^2. */
static int first_stage(const double *x, const double *Z, size_t k, const double *W, size_t q,
                       size_t n, const char *const *names, double *D, double *xhat,
                       sl_iv_fit *fit, sl_error *e) {
  size_t p1 = 1 + k + q;
  sl_fit f1;
  memset(&f1, 0, sizeof f1);
  design(D, Z, k, W, q, n);
  if (sl_ols(D, x, n, p1, names, &f1, e)) return stage_error(e, "first stage (the treatment on the instruments and the set)");
  sl_predict(&f1, D, n, 0, xhat);
  memcpy(fit->first_coef, f1.coef, p1 * sizeof *f1.coef);
  fit->first_df1 = (double)k;
  fit->first_df2 = (double)(n - p1);
  double F = INFINITY;
  int rc = f1.rss > 0 ? first_f(&f1, k, &F, e) : SL_OK;
  double rss = f1.rss;
  sl_fit_free(&f1);
  if (rc) return rc;
  fit->first_f = F;
  fit->first_p = isfinite(F) ? gsl_cdf_fdist_Q(F, fit->first_df1, fit->first_df2) : 0;
  double drop = isfinite(F) ? F * (double)k * rss / fit->first_df2 : 1;   /* RSS_r - RSS */
  fit->first_r2_partial = isfinite(F) ? drop / (rss + drop) : 1;
  return SL_OK;
}

/* B M B for p x p row-major B and M, into V. */
static void sandwich(const double *B, const double *M, size_t p, double *V, double *tmp) {
  gsl_matrix_const_view b = gsl_matrix_const_view_array(B, p, p), m = gsl_matrix_const_view_array(M, p, p);
  gsl_matrix_view t = gsl_matrix_view_array(tmp, p, p), v = gsl_matrix_view_array(V, p, p);
  gsl_blas_dgemm(CblasNoTrans, CblasNoTrans, 1.0, &b.matrix, &m.matrix, 0.0, &t.matrix);
  gsl_blas_dgemm(CblasNoTrans, CblasNoTrans, 1.0, &t.matrix, &b.matrix, 0.0, &v.matrix);
}

/* Standard errors from the second-stage fit f2 on design D (rows
** [1, x^_i, W_i]) and the 2SLS residuals u. */
static void standard_errors(const sl_fit *f2, const double *D, const double *u, size_t n,
                            size_t p, sl_iv_fit *fit, double *work) {
  double s2 = f2->rss / (double)(n - p);
  if (!(s2 > 0) || !isfinite(s2)) {
    for (size_t j = 0; j < p; j++) fit->se[j] = fit->se_hc0[j] = fit->se_hc1[j] = NAN;
    fit->has_se = 0;
    return;
  }
  double *B = work, *M = work + p * p, *V = work + 2 * p * p, *T = work + 3 * p * p;
  for (size_t j = 0; j < p * p; j++) { B[j] = f2->cov[j] / s2; M[j] = 0; }
  double uu = 0;
  for (size_t i = 0; i < n; i++) {   /* the meat, rows in order */
    const double *d = D + i * p;
    double w = u[i] * u[i];
    uu += w;
    for (size_t a = 0; a < p; a++)
      for (size_t b = 0; b < p; b++) M[a * p + b] += w * d[a] * d[b];
  }
  double sig2 = uu / (double)(n - p);
  sandwich(B, M, p, V, T);
  for (size_t j = 0; j < p; j++) {
    fit->se[j] = sqrt(sig2 * B[j * p + j]);
    fit->se_hc0[j] = sqrt(V[j * p + j]);
    fit->se_hc1[j] = sqrt(V[j * p + j] * (double)n / (double)(n - p));
  }
  fit->has_se = 1;
}

int sl_iv_2sls(const double *y, const double *x, const double *Z, size_t k,
               const double *W, size_t q, size_t n, const char *xname,
               const char *const *znames, const char *const *wnames,
               sl_iv_fit *fit, sl_error *e) {
  memset(fit, 0, sizeof *fit);
  size_t p = 2 + q, p1 = 1 + k + q;
  if (k == 0) return sl_error_set(e, SL_EARG, 0, 0, "two-stage least squares needs an instrument");
  if (n <= p1 || n <= p)
    return sl_error_set(e, SL_EARG, 0, 0, "%zu rows for %zu first-stage terms: too few", n, p1);
  fit->n = n; fit->p = p;
  fit->coef = calloc(p, sizeof *fit->coef);
  fit->se = calloc(p, sizeof *fit->se);
  fit->se_hc0 = calloc(p, sizeof *fit->se_hc0);
  fit->se_hc1 = calloc(p, sizeof *fit->se_hc1);
  fit->first_coef = calloc(p1, sizeof *fit->first_coef);
  double *D = malloc(n * (p1 > p ? p1 : p) * sizeof *D), *xhat = malloc(n * sizeof *xhat);
  double *u = malloc(n * sizeof *u), *work = malloc(4 * p * p * sizeof *work);
  const char **names = malloc((p1 + p) * sizeof *names);
  sl_fit f2;
  memset(&f2, 0, sizeof f2);
  int rc = SL_OK;
  if (!fit->coef || !fit->se || !fit->se_hc0 || !fit->se_hc1 || !fit->first_coef || !D ||
      !xhat || !u || !work || !names) {
    rc = sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
    goto done;
  }
  names[0] = "(intercept)";
  for (size_t j = 0; j < k; j++) names[1 + j] = znames ? znames[j] : NULL;
  for (size_t j = 0; j < q; j++) names[1 + k + j] = wnames ? wnames[j] : NULL;
  if ((rc = first_stage(x, Z, k, W, q, n, names, D, xhat, fit, e))) goto done;
  /* second stage: y on (1, x^, W) */
  char fitted[160];
  snprintf(fitted, sizeof fitted, "%s (fitted)", xname ? xname : "x");
  names[1] = fitted;
  for (size_t j = 0; j < q; j++) names[2 + j] = wnames ? wnames[j] : NULL;
  design(D, xhat, 1, W, q, n);
  if (sl_ols(D, y, n, p, names, &f2, e)) {
    rc = sl_error_set(e, SL_EARG, 0, 0, "the instruments do not move '%s' once the set is "
                      "accounted for: no IV estimate", xname ? xname : "x");
    goto done;
  }
  memcpy(fit->coef, f2.coef, p * sizeof *fit->coef);
  for (size_t i = 0; i < n; i++) {   /* 2SLS residuals: with x, not x^ */
    const double *d = D + i * p;
    double eta = f2.coef[0] + f2.coef[1] * x[i];
    for (size_t j = 0; j < q; j++) eta += f2.coef[2 + j] * d[2 + j];
    u[i] = y[i] - eta;
  }
  standard_errors(&f2, D, u, n, p, fit, work);
done:
  sl_fit_free(&f2);
  free(D); free(xhat); free(u); free(work); free(names);
  if (rc) sl_iv_fit_free(fit);
  return rc;
}

/* The Wald estimator for one 0/1 instrument and a 0/1 treatment with no
** set: the difference in mean outcome between the instrument's arms over
** the difference in the treatment's uptake. */
static void wald(const sl_prep *P, const size_t *ix, size_t n, sl_route_info *ri) {
  double sy[2] = {0, 0}, sx[2] = {0, 0}, c[2] = {0, 0};
  for (size_t r = 0; r < n; r++) {
    size_t i = ix[r];
    int z = P->A[i * P->k] == 1;
    sy[z] += P->y[i]; sx[z] += P->t[i]; c[z] += 1;
  }
  if (c[0] == 0 || c[1] == 0) return;
  ri->wald_itt = sy[1] / c[1] - sy[0] / c[0];
  ri->wald_uptake = sx[1] / c[1] - sx[0] / c[0];
  ri->wald = ri->wald_itt / ri->wald_uptake;
  ri->has_wald = 1;
}

int sl_est_iv(const sl_est_spec *s, const sl_prep *P, const size_t *ix, size_t n,
              sl_point *out, char *warn, sl_error *e) {
  size_t k = P->k, q = P->q;
  double *y = malloc(n * sizeof *y), *x = malloc(n * sizeof *x);
  double *Z = malloc(n * k * sizeof *Z), *W = malloc((q ? n * q : 1) * sizeof *W);
  sl_iv_fit fit;
  memset(&fit, 0, sizeof fit);
  int rc = SL_OK;
  if (!y || !x || !Z || !W) { rc = sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory"); goto done; }
  for (size_t r = 0; r < n; r++) {
    size_t i = ix[r];
    y[r] = P->y[i]; x[r] = P->t[i];
    for (size_t j = 0; j < k; j++) Z[r * k + j] = P->A[i * k + j];
    for (size_t j = 0; j < q; j++) W[r * q + j] = P->C[i * q + j];
  }
  if ((rc = sl_iv_2sls(y, x, Z, k, q ? W : NULL, q, n, P->onames[1], P->anames,
                       (const char *const *)P->cnames, &fit, e)))
    goto done;
  (void)s;
  sl_route_info *ri = &out->route;
  ri->k = k;
  for (size_t j = 0; j < k; j++) ri->a[j] = fit.first_coef[1 + j];
  ri->se_classical = fit.se[1]; ri->se_hc0 = fit.se_hc0[1]; ri->se_hc1 = fit.se_hc1[1];
  ri->first_f = fit.first_f; ri->first_df1 = fit.first_df1; ri->first_df2 = fit.first_df2;
  ri->first_p = fit.first_p; ri->first_r2_partial = fit.first_r2_partial;
  ri->se_delta = NAN;
  out->est = fit.coef[1];
  out->se = fit.se_hc1[1];
  out->has_se = fit.has_se;
  out->mu1 = out->mu0 = NAN;
  if (k == 1 && q == 0 && P->abin[0] && P->bin_t) wald(P, ix, n, ri);
  if (fit.first_f < 10) {
    char m[300];
    snprintf(m, sizeof m, "weak instrument%s: the first-stage F is %.3g, below 10 (Staiger and "
             "Stock 1997): 2SLS leans toward the confounded least-squares estimate and its "
             "interval is too narrow", k > 1 ? "s" : "", fit.first_f);
    sl_est_warn(warn, m);
  }
done:
  sl_iv_fit_free(&fit);
  free(y); free(x); free(Z); free(W);
  return rc;
}
