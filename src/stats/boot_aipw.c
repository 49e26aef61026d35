/*
** boot_aipw.c: bootstrap replicates of augmented IPW with a linear outcome
** model from the counts of each row.  The propensity model is refitted by
** Newton-Raphson (IRLS) on count-weighted cross-products, starting from the
** whole sample's coefficients, which a replicate moves only a little; the
** outcome model by the sufficient statistics of boot_linear.c.  A replicate
** whose Newton steps do not settle, or whose cross-products are
** ill-conditioned, is refitted on its rows by the full path.
*/
#include <math.h>
#include <stdlib.h>
#include <string.h>
#include <gsl/gsl_blas.h>
#include <gsl/gsl_errno.h>
#include <gsl/gsl_linalg.h>
#include "estimate_internal.h"
#include "regress.h"

/* Newton steps of the propensity model before a replicate is refitted on
** its rows instead; from the whole sample's coefficients a handful do. */
#define SL_BOOT_NEWTON_MAX 25

void sl_boot_aipw_free(sl_boot_aipw *A) {
  sl_boot_linear_free(&A->lin);
  free(A->Xp); free(A->gamma);
  memset(A, 0, sizeof *A);
}

size_t sl_boot_aipw_work(const sl_boot_aipw *A) {
  size_t q = A->q1;
  return sl_boot_linear_work(&A->lin) + q * q + 3 * q + sl_gram_rows(q) * q;
}

/* The fitted propensity of row k at coefficients g. */
static double propensity(const sl_boot_aipw *A, size_t k, const double *g) {
  const double *x = A->Xp + k * A->q1;
  double eta = 0;
  for (size_t j = 0; j < A->q1; j++) eta += x[j] * g[j];
  return 1 / (1 + exp(-eta));
}

/* The logistic model of t on Xp weighted by count, by Newton steps from g
** (updated in place); nonzero when it does not settle.  It settles when the
** Newton decrement sc' G^-1 sc (about twice the deviance a further step
** would gain) is below 1e-10 (N + 0.1), N the sum of the counts: sl_logit's
** rule of a deviance change below 1e-10 relative, with N in place of the
** deviance (which lies between 0 and 2 N log 2), so that no logarithm is
** taken.  The last, small step is taken too (its error is of the order
** of its square).  work: q^2 + 2q + sl_gram_rows(q) q doubles. */
static int newton(const sl_boot_aipw *A, const double *t, const double *count, double *work,
                  double *g) {
  size_t n = A->lin.n, q = A->q1;
  double *G = work, *sc = G + q * q, *step = sc + q, *blk = step + q;
  gsl_matrix_view Gv = gsl_matrix_view_array(G, q, q);
  double N = 0;
  for (size_t k = 0; k < n; k++) N += count[k];
  for (int it = 0; it < SL_BOOT_NEWTON_MAX; it++) {
    sl_gram gr;
    sl_gram_start(&gr, G, blk, q);
    memset(sc, 0, q * sizeof *sc);
    for (size_t k = 0; k < n; k++) {
      if (count[k] == 0) continue;
      double c = count[k];
      const double *x = A->Xp + k * q;
      double e = propensity(A, k, g);
      for (size_t j = 0; j < q; j++) sc[j] += c * (t[k] - e) * x[j];
      sl_gram_add(&gr, x, sqrt(c * e * (1 - e)));
    }
    sl_gram_finish(&gr);
    gsl_error_handler_t *old = gsl_set_error_handler_off();
    int bad = gsl_linalg_cholesky_decomp1(&Gv.matrix);
    gsl_set_error_handler(old);
    if (bad) return 1;
    gsl_vector_view sv = gsl_vector_view_array(sc, q), dv = gsl_vector_view_array(step, q);
    gsl_linalg_cholesky_solve(&Gv.matrix, &sv.vector, &dv.vector);
    double decrement = 0;
    for (size_t j = 0; j < q; j++) decrement += sc[j] * step[j];
    for (size_t j = 0; j < q; j++) g[j] += step[j];
    if (decrement < 1e-10 * (N + 0.1)) return 0;
  }
  return 1;
}

int sl_boot_aipw_init(const sl_est_spec *s, const sl_prep *P, sl_boot_aipw *A, sl_error *e) {
  memset(A, 0, sizeof *A);
  int rc = sl_boot_linear_init(s, P, P->q > 0, &A->lin, e);
  if (rc) return rc;
  size_t n = P->n, q = A->q1 = 1 + P->q;
  A->Xp = malloc(n * q * sizeof *A->Xp);
  A->gamma = calloc(q, sizeof *A->gamma);
  double *count = malloc(n * sizeof *count), *work = NULL;
  if (A->Xp && A->gamma && count) work = malloc(sl_boot_aipw_work(A) * sizeof *work);
  if (!work) {
    free(count); sl_boot_aipw_free(A);
    return sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
  }
  for (size_t k = 0; k < n; k++) {
    A->Xp[k * q] = 1;
    memcpy(A->Xp + k * q + 1, P->C + k * P->q, P->q * sizeof *A->Xp);
    count[k] = P->w ? P->w[k] : 1;
  }
  /* the whole sample's coefficients: the start of every replicate's steps */
  if (newton(A, P->t, count, work, A->gamma)) memset(A->gamma, 0, q * sizeof *A->gamma);
  free(count); free(work);
  return SL_OK;
}

int sl_boot_aipw_point(const sl_est_spec *s, const sl_prep *P, const sl_boot_aipw *A,
                       const double *count, double *work, double *est) {
  const sl_boot_linear *L = &A->lin;
  size_t n = L->n, p = L->p, q = A->q1;
  double *beta = work, *g = beta + p, *rest = g + q;
  if (sl_boot_linear_fit(L, count, rest, beta)) return 1;
  memcpy(g, A->gamma, q * sizeof *g);
  if (newton(A, P->t, count, rest, g)) return 1;
  double s1 = 0, s0 = 0, win = 0;
  for (size_t k = 0; k < n; k++) {   /* the terms of aipw() in estimate.c, counted */
    double c = count[k];
    if (c == 0) continue;
    const double *xa = L->Xa + k * p, *xb = L->Xb + k * p;
    double m1 = 0, m0 = 0;
    for (size_t j = 0; j < p; j++) { m1 += xa[j] * beta[j]; m0 += xb[j] * beta[j]; }
    double t = P->t[k], y = P->y[k], ek = propensity(A, k, g), a, b, in;
    if (s->estimand == SL_ATE) {
      a = m1 + t * (y - m1) / ek; b = m0 + (1 - t) * (y - m0) / (1 - ek); in = 1;
    } else if (s->estimand == SL_ATT) {
      a = t * y; b = t * m0 + (1 - t) * ek / (1 - ek) * (y - m0); in = t;
    } else {
      a = (1 - t) * m1 + t * (1 - ek) / ek * (y - m1); b = (1 - t) * y; in = 1 - t;
    }
    s1 += c * a; s0 += c * b; win += c * in;
  }
  *est = win > 0 ? sl_est_contrast(s->scale, s1 / win, s0 / win) : NAN;
  return 0;
}
