/*
** regress.h: least squares and logistic regression through GSL and a BLAS.
** Design matrices are row-major n x p, the intercept (when wanted) being a
** column of ones that the caller includes.
*/
#ifndef SL_REGRESS_H
#define SL_REGRESS_H

#include <stddef.h>
#include "error.h"

typedef struct sl_fit {
  size_t n, p;
  double *coef;          /* p */
  double *se;            /* p: classical */
  double *robust_se;     /* p: HC3 (OLS) or sandwich HC0 (logit) */
  double *cov;           /* p x p, classical */
  double r2, adj_r2, sigma, rss;      /* OLS */
  double loglik, deviance;            /* logit */
  int iterations, converged;          /* logit */
  size_t rank;           /* numerical rank of X */
  int *aliased;          /* p flags: a column that is a combination of earlier ones */
} sl_fit;

void sl_fit_free(sl_fit *fit);

/* Ordinary least squares.  A rank-deficient X is an error whose message
** names the aliased columns (names: p strings, may be NULL). */
int sl_ols(const double *X, const double *y, size_t n, size_t p,
           const char *const *names, sl_fit *fit, sl_error *e);

/* Logistic regression by iteratively reweighted least squares; optional
** prior weights w (NULL: 1).  Non-convergence and (quasi-)complete
** separation are reported in warn (may be NULL) naming the columns; the fit
** is still returned. */
int sl_logit(const double *X, const double *y, const double *w, size_t n, size_t p,
             const char *const *names, int max_iter, double tol, sl_fit *fit,
             char *warn, size_t warnsize, sl_error *e);

/* X beta for new rows (n x p): out has n entries; logistic gives
** probabilities when prob is nonzero. */
void sl_predict(const sl_fit *fit, const double *X, size_t n, int prob, double *out);

#endif
