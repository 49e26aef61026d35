/*
** bench_ols.c: time of sl_ols on a large design beside the memory-bandwidth
** bound of one pass over the same data.
**
**   bench_ols N P SEED REPS
**
** Fills X (N x P, row-major, a column of ones then standard normals) and
** y = X beta + noise (beta_j = j / P) from GSL's MT19937 seeded with SEED,
** then, each best of REPS:
**   onepass_s  one read of X and y: a summing loop with eight accumulators
**              (so the adds keep up with memory), the time below which no
**              method that reads the data can go;
**   ols_s      sl_ols: the streamed Householder QR (pass 1) plus residuals,
**              leverages and HC3 (pass 2), all of coef, se, robust_se;
**   xtx_s      the normal equations, for comparison only: X'X by
**              gsl_blas_dsyrk and X'y by gsl_blas_dgemv over the whole X
**              (OpenBLAS threads), then a Cholesky solve; coefficients only,
**              and half the digits of QR on ill-conditioned data.
** Output, one line of key=value pairs: n= p= threads= fill_s= onepass_s=
** read_gbs= (bytes of X and y / onepass_s, GB = 1e9 bytes) ols_s=
** ols_ratio= (ols_s / onepass_s) xtx_s= xtx_ratio= extra_mb= (peak RSS
** minus the bytes of X and y: what sl_ols needs beyond the data) max_dcoef=
** (largest |coef QR - coef Cholesky| / se, a sanity check).  Exit status 1
** when a fit fails or the two solutions disagree by more than 1e-6 se.
*/
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <gsl/gsl_blas.h>
#include <gsl/gsl_linalg.h>
#include <gsl/gsl_randist.h>
#include <gsl/gsl_rng.h>
#include "bench_common.h"
#include "regress.h"

int openblas_get_num_threads(void);

/* One read of the k doubles at v; the sum keeps the loop from vanishing. */
static double sum_pass(const double *v, size_t k) {
  double s[8] = {0, 0, 0, 0, 0, 0, 0, 0};
  size_t i = 0;
  for (; i + 8 <= k; i += 8)
    for (int j = 0; j < 8; j++) s[j] += v[i + (size_t)j];
  for (; i < k; i++) s[0] += v[i];
  return ((s[0] + s[1]) + (s[2] + s[3])) + ((s[4] + s[5]) + (s[6] + s[7]));
}

/* Coefficients by the normal equations X'X b = X'y (Cholesky). */
static int normal_equations(const double *X, const double *y, size_t n, size_t p, double *b) {
  gsl_matrix_const_view Xv = gsl_matrix_const_view_array(X, n, p);
  gsl_vector_const_view yv = gsl_vector_const_view_array(y, n);
  gsl_matrix *C = gsl_matrix_calloc(p, p);
  gsl_vector *c = gsl_vector_alloc(p), *x = gsl_vector_alloc(p);
  if (!C || !c || !x) return -1;
  gsl_blas_dsyrk(CblasLower, CblasTrans, 1.0, &Xv.matrix, 0.0, C);
  gsl_blas_dgemv(CblasTrans, 1.0, &Xv.matrix, &yv.vector, 0.0, c);
  gsl_linalg_cholesky_decomp1(C);
  gsl_linalg_cholesky_solve(C, c, x);
  for (size_t j = 0; j < p; j++) b[j] = gsl_vector_get(x, j);
  gsl_matrix_free(C);
  gsl_vector_free(c);
  gsl_vector_free(x);
  return 0;
}

int main(int argc, char **argv) {
  if (argc != 5) {
    fprintf(stderr, "usage: bench_ols N P SEED REPS\n");
    return 1;
  }
  size_t n = strtoull(argv[1], NULL, 10), p = strtoull(argv[2], NULL, 10);
  unsigned long seed = strtoul(argv[3], NULL, 10);
  int reps = atoi(argv[4]);
  if (n < 2 || p < 1 || n <= p || reps < 1) { fprintf(stderr, "bench_ols: bad arguments\n"); return 1; }
  double *X = malloc(n * p * sizeof *X), *y = malloc(n * sizeof *y), *bq = malloc(p * sizeof *bq);
  if (!X || !y || !bq) { fprintf(stderr, "bench_ols: out of memory\n"); return 1; }
  gsl_rng *r = gsl_rng_alloc(gsl_rng_mt19937);
  gsl_rng_set(r, seed);
  double t0 = now();
  for (size_t i = 0; i < n; i++) {
    double *row = X + i * p, eta = 0;
    row[0] = 1;
    for (size_t j = 1; j < p; j++) row[j] = gsl_ran_gaussian_ziggurat(r, 1.0);
    for (size_t j = 0; j < p; j++) eta += row[j] * (double)j / (double)p;
    y[i] = eta + gsl_ran_gaussian_ziggurat(r, 1.0);
  }
  double fill = now() - t0;
  long rss0 = maxrss_kb();

  double onepass = INFINITY, chk = 0;
  for (int k = 0; k < reps + 1; k++) {   /* one untimed warm-up */
    double a = now();
    chk += sum_pass(X, n * p) + sum_pass(y, n);
    double t = now() - a;
    if (k > 0 && t < onepass) onepass = t;
  }

  double ols = INFINITY, xtx = INFINITY;
  sl_fit fit;
  sl_error e;
  memset(&fit, 0, sizeof fit);
  for (int k = 0; k < reps; k++) {
    sl_fit_free(&fit);
    double a = now();
    int rc = sl_ols(X, y, n, p, NULL, &fit, &e);
    double t = now() - a;
    if (rc) { fprintf(stderr, "bench_ols: sl_ols: %s\n", e.msg); return 1; }
    if (t < ols) ols = t;
  }
  long rss1 = maxrss_kb();
  for (int k = 0; k < reps; k++) {
    double a = now();
    if (normal_equations(X, y, n, p, bq)) { fprintf(stderr, "bench_ols: out of memory\n"); return 1; }
    double t = now() - a;
    if (t < xtx) xtx = t;
  }
  double dmax = 0;
  for (size_t j = 0; j < p; j++) {
    double d = fabs(fit.coef[j] - bq[j]) / fit.se[j];
    if (!(d <= dmax)) dmax = d;
  }
  double bytes = (double)(n * p + n) * sizeof(double);
  printf("n=%zu p=%zu threads=%d fill_s=%.2f onepass_s=%.4f read_gbs=%.2f ols_s=%.3f "
         "ols_ratio=%.1f xtx_s=%.3f xtx_ratio=%.1f extra_mb=%.1f max_dcoef=%.2g check=%.6g\n",
         n, p, openblas_get_num_threads(), fill, onepass, bytes / onepass / 1e9, ols,
         ols / onepass, xtx, xtx / onepass, (double)(rss1 - rss0) * 1024 / 1e6, dmax,
         chk / (reps + 1));
  sl_fit_free(&fit);
  gsl_rng_free(r);
  free(X); free(y); free(bq);
  return dmax <= 1e-6 ? 0 : 1;
}
