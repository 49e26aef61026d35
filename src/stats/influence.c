/*
** influence.c: analytic standard errors of the standardization, IPW and
** AIPW estimates from the rows' influence values (M-estimation, the
** "sandwich"; Stefanski and Boos 2002, The calculus of M-estimation).
**
** Every estimator here is a pair of means (mu1, mu0) solved jointly with a
** working model's score equations.  Stacking them, the estimate's error is
** to first order the mean of one value per row, phi_k; the working model
** enters phi through the derivative of the mean's equation with respect to
** the model's coefficients, d, and the model's bread H:
**
**   phi_k = (mean equation at row k) / A + (d' H^-1 x_k) r_k,
**
** with r_k the model's score residual (y - fitted).  For IPW this is the
** correction for estimated propensities of Lunceford and Davidian 2004
** (Statistics in Medicine 23, 2937-2960, section 3); leaving it out treats
** the propensities as known.  The contrast's standard error follows by the
** delta method: of the difference itself, of the logarithm of a ratio or
** odds ratio.  Rows of one cluster are summed before squaring (Liang and
** Zeger 1986), with the factor G/(G-1) (common practice).
*/
#include <math.h>
#include <stdlib.h>
#include <string.h>
#include <gsl/gsl_blas.h>
#include <gsl/gsl_errno.h>
#include <gsl/gsl_linalg.h>
#include "estimate_internal.h"
#include "regress.h"

/* u_j = H^-1 d_j for nd vectors d (each p long, in d and u one after the
** other), H = sum_k v_k x_k x_k' / n over the rows of X (n x p).  A
** singular H (the working model's columns aliased) is an error. */
int sl_infl_solve(const double *X, const double *v, size_t n, size_t p, const double *d,
                  size_t nd, double *u, sl_error *e) {
  gsl_matrix *H = gsl_matrix_alloc(p, p);
  double *blk = malloc(sl_gram_rows(p) * p * sizeof *blk);
  if (!H || !blk) {
    if (H) gsl_matrix_free(H);
    free(blk);
    return sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
  }
  sl_gram g;
  sl_gram_start(&g, H->data, blk, p);
  double sn = sqrt((double)n);
  for (size_t k = 0; k < n; k++) sl_gram_add(&g, X + k * p, sqrt(v ? v[k] : 1) / sn);
  sl_gram_finish(&g);
  free(blk);
  gsl_error_handler_t *old = gsl_set_error_handler_off();
  int bad = gsl_linalg_cholesky_decomp1(H);
  gsl_set_error_handler(old);
  if (bad) {
    gsl_matrix_free(H);
    return sl_error_set(e, SL_EARG, 0, 0, "the working model's information matrix is singular: "
                        "no analytic standard error (give boot = 200 or more)");
  }
  for (size_t j = 0; j < nd; j++) {
    gsl_vector_const_view dv = gsl_vector_const_view_array(d + j * p, p);
    gsl_vector_view uv = gsl_vector_view_array(u + j * p, p);
    gsl_linalg_cholesky_solve(H, &dv.vector, &uv.vector);
  }
  gsl_matrix_free(H);
  return SL_OK;
}

/* The gradient of the contrast, on the scale its SE is given on: the
** difference itself; the logarithm of a ratio or odds ratio. */
static void contrast_gradient(int scale, double mu1, double mu0, double *g1, double *g0) {
  if (scale == SL_RATIO) { *g1 = 1 / mu1; *g0 = -1 / mu0; }
  else if (scale == SL_ODDS_RATIO) { *g1 = 1 / (mu1 * (1 - mu1)); *g0 = -1 / (mu0 * (1 - mu0)); }
  else { *g1 = 1; *g0 = -1; }
}

int sl_infl_finish(const sl_prep *P, int scale, double mu1, double mu0, const double *phi1,
                   const double *phi0, sl_point *out, sl_error *e) {
  size_t n = P->n;
  double g1, g0;
  contrast_gradient(scale, mu1, mu0, &g1, &g0);
  double s2 = 0, s3 = 0;
  for (size_t k = 0; k < n; k++) {
    double L = g1 * phi1[k] + g0 * phi0[k];
    s2 += L * L; s3 += L * L * L;
  }
  double var = s2 / ((double)n * (double)n);
  if (P->cluster) {   /* sum within clusters, then square */
    double *sum = calloc(P->nclusters, sizeof *sum);
    if (!sum) return sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
    for (size_t k = 0; k < n; k++) sum[P->cluster[k]] += g1 * phi1[k] + g0 * phi0[k];
    double ss = 0;
    for (size_t c = 0; c < P->nclusters; c++) ss += sum[c] * sum[c];
    free(sum);
    double G = (double)P->nclusters;
    var = ss / ((double)n * (double)n) * G / (G - 1);
  }
  if (!(var >= 0) || !isfinite(var)) {
    out->has_se = 0;
    return SL_OK;
  }
  out->se = sqrt(var);
  out->se_log = scale != SL_DIFFERENCE;
  out->has_se = 1;
  /* Efron 1987 (JASA 82, 171-185), the acceleration from the empirical
  ** influence values: a = sum L^3 / (6 (sum L^2)^(3/2)) */
  out->accel = s2 > 0 ? s3 / (6 * pow(s2, 1.5)) : 0;
  return SL_OK;
}
