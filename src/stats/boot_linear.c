/*
** boot_linear.c: bootstrap replicates of a standardization with a linear
** outcome model from sufficient statistics.  A replicate is a vector of
** counts (how often each row was drawn); its least-squares fit needs only
** the count-weighted cross-products of the design and the outcome, and its
** standardized means only the count-weighted mean design rows under each
** treatment value.  The columns are centred once at their means over all
** rows, so the replicate's centred cross-products lose little to
** cancellation; the fit of all rows keeps the QR factorization (regress.c).
** A replicate whose cross-products are too ill-conditioned for the normal
** equations is refitted by QR.
*/
#include <math.h>
#include <stdlib.h>
#include <string.h>
#include <gsl/gsl_blas.h>
#include <gsl/gsl_errno.h>
#include <gsl/gsl_linalg.h>
#include "estimate_internal.h"
#include "regress.h"

/* Below this reciprocal condition number of the centred cross-products a
** replicate is refitted by QR: the normal equations would lose more than
** about half the digits. */
#define SL_BOOT_RCOND 1e-8

void sl_boot_linear_free(sl_boot_linear *L) {
  free(L->Z); free(L->mean); free(L->Xa); free(L->Xb); free(L->target);
  memset(L, 0, sizeof *L);
}

int sl_boot_linear_init(const sl_est_spec *s, const sl_prep *P, int inter, sl_boot_linear *L,
                        sl_error *e) {
  memset(L, 0, sizeof *L);
  size_t n = P->n, p = 2 + P->q * (inter ? 2 : 1), m = p;   /* m: p - 1 columns and y */
  L->n = n; L->p = p; L->inter = inter;
  L->Z = malloc(n * m * sizeof *L->Z);
  L->mean = calloc(m, sizeof *L->mean);
  L->Xa = malloc(n * p * sizeof *L->Xa);
  L->Xb = malloc(n * p * sizeof *L->Xb);
  L->target = malloc(n);
  double *row = malloc(p * sizeof *row);
  if (!L->Z || !L->mean || !L->Xa || !L->Xb || !L->target || !row) {
    free(row); sl_boot_linear_free(L);
    return sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
  }
  for (size_t k = 0; k < n; k++) {
    sl_est_outcome_row(P, k, P->t[k], inter, row);
    memcpy(L->Z + k * m, row + 1, (p - 1) * sizeof *row);
    L->Z[k * m + p - 1] = P->y[k];
    double ta = P->bin_t ? 1 : P->t[k] + s->contrast, tb = P->bin_t ? 0 : P->t[k];
    sl_est_outcome_row(P, k, ta, inter, L->Xa + k * p);
    sl_est_outcome_row(P, k, tb, inter, L->Xb + k * p);
    L->target[k] = !P->bin_t || sl_est_in_target(s, P->t[k]);
  }
  free(row);
  for (size_t k = 0; k < n; k++)
    for (size_t j = 0; j < m; j++) L->mean[j] += L->Z[k * m + j];
  for (size_t j = 0; j < m; j++) L->mean[j] /= (double)n;
  for (size_t k = 0; k < n; k++)
    for (size_t j = 0; j < m; j++) L->Z[k * m + j] -= L->mean[j];
  return SL_OK;
}

int sl_boot_linear_fit(const sl_boot_linear *L, const double *count, double *work, double *beta) {
  size_t n = L->n, p = L->p, m = p;
  double *G = work, *zbar = G + m * m, *blk = zbar + m, N = 0;
  memset(zbar, 0, m * sizeof *zbar);
  gsl_matrix_view Gv = gsl_matrix_view_array(G, m, m);
  sl_gram g;
  sl_gram_start(&g, G, blk, m);
  for (size_t k = 0; k < n; k++) {
    if (count[k] == 0) continue;
    double c = count[k];
    const double *z = L->Z + k * m;
    N += c;
    for (size_t j = 0; j < m; j++) zbar[j] += c * z[j];
    sl_gram_add(&g, z, sqrt(c));
  }
  sl_gram_finish(&g);
  for (size_t j = 0; j < m; j++) zbar[j] /= N;
  for (size_t i = 0; i < m; i++)   /* the replicate's centred cross-products */
    for (size_t j = 0; j <= i; j++) G[i * m + j] = G[i * m + j] / N - zbar[i] * zbar[j];
  size_t q = p - 1;                /* the slopes: S_xx b = S_xy */
  gsl_matrix_view Sxx = gsl_matrix_submatrix(&Gv.matrix, 0, 0, q, q);
  double *sxy = blk;
  for (size_t j = 0; j < q; j++) sxy[j] = G[q * m + j];
  gsl_error_handler_t *old = gsl_set_error_handler_off();
  int bad = gsl_linalg_cholesky_decomp1(&Sxx.matrix);
  double rcond = 0;
  gsl_vector *wk = bad ? NULL : gsl_vector_alloc(3 * q);
  if (wk) { gsl_linalg_cholesky_rcond(&Sxx.matrix, &rcond, wk); gsl_vector_free(wk); }
  gsl_set_error_handler(old);
  if (bad || !(rcond > SL_BOOT_RCOND)) return 1;
  gsl_vector_view bv = gsl_vector_view_array(beta + 1, q);
  gsl_vector_view yv = gsl_vector_view_array(sxy, q);
  gsl_linalg_cholesky_solve(&Sxx.matrix, &yv.vector, &bv.vector);
  double b0 = L->mean[q] + zbar[q];   /* intercept: mean y - mean x' b */
  for (size_t j = 0; j < q; j++) b0 -= (L->mean[j] + zbar[j]) * beta[1 + j];
  beta[0] = b0;
  return 0;
}

size_t sl_boot_linear_work(const sl_boot_linear *L) {
  size_t m = L->p;
  return m * m + m + sl_gram_rows(m) * m + L->p;
}

int sl_boot_linear_point(const sl_est_spec *s, const sl_boot_linear *L, const double *count,
                         double *work, double *est) {
  size_t n = L->n, p = L->p;
  double *beta = work + sl_boot_linear_work(L) - p;
  if (sl_boot_linear_fit(L, count, work, beta)) return 1;
  double ma = 0, mb = 0, m = 0;
  for (size_t k = 0; k < n; k++) {
    if (count[k] == 0 || !L->target[k]) continue;
    const double *xa = L->Xa + k * p, *xb = L->Xb + k * p;
    double fa = 0, fb = 0;
    for (size_t j = 0; j < p; j++) { fa += xa[j] * beta[j]; fb += xb[j] * beta[j]; }
    ma += count[k] * fa; mb += count[k] * fb; m += count[k];
  }
  if (m == 0) { *est = NAN; return 0; }
  *est = sl_est_contrast(s->scale, ma / m, mb / m);
  return 0;
}
