/*
** regress.h: least squares and logistic regression through GSL and a BLAS.
** Design matrices are row-major n x p, the intercept (when wanted) being a
** column of ones that the caller includes.
**
** Both fits use a Householder QR factorization of X streamed over blocks of
** rows (accurate to the NIST StRD certified values; X is read in place,
** never copied, so n = 10^7 rows need no memory beyond X itself).
*/
#ifndef SL_REGRESS_H
#define SL_REGRESS_H

#include <stddef.h>
#include "error.h"

/* A column is aliased (a linear combination of earlier columns) when the
** sine of its angle to their span, |R_jj| / |x_j| in the QR factor, is at
** most this.  Scale-free; NIST's Filip (tenth-degree polynomial) has 5e-8. */
#define SL_RANK_TOL 1e-9

/* Rows x p x p per matrix product: below this OpenBLAS runs a product on
** one thread, so sums come out in the same order whatever the threads. */
#define SL_GEMM_WORK 262144u

/* The covariance a fit reports as the one chosen (sl_fit_opts.se):
** classical (the default), White's HC0, HC1 = HC0 n / (n - p), HC3 (each
** row's score divided by 1 - h_i, h_i its leverage), and cluster-robust
** (Liang and Zeger 1986) with statsmodels' small-sample factor
** G / (G - 1) (n - 1) / (n - p).  n counts the rows of positive weight. */
typedef enum {
  SL_VCOV_CLASSICAL, SL_VCOV_HC0, SL_VCOV_HC1, SL_VCOV_HC3, SL_VCOV_CLUSTER
} sl_vcov_kind;

/* The largest number of clusters (a G x p table of score sums is kept). */
#define SL_CLUSTERS_MAX 100000000u

/* Options of sl_ols_opts and sl_logit_opts; a zeroed struct is the plain
** unweighted fit with the classical covariance chosen. */
typedef struct sl_fit_opts {
  const double *w;          /* weights, one per row (NULL: all 1) */
  sl_vcov_kind se;          /* which covariance goes to se_chosen/cov_chosen */
  const size_t *cluster;    /* SL_VCOV_CLUSTER: each row's cluster, 0..nclusters-1 */
  size_t nclusters;
} sl_fit_opts;

typedef struct sl_fit {
  size_t n, p;
  double *coef;          /* p */
  double *se;            /* p: classical */
  double *robust_se;     /* p: HC3 (OLS) or sandwich HC0 (logit); NaN for OLS
                            when a row has leverage 1 or n == p */
  double *cov;           /* p x p row-major, classical */
  double r2, adj_r2, sigma, rss;      /* OLS (NaN for logit); r2 centered when
                                         a column is all ones, else uncentered */
  double loglik, deviance;            /* logit; OLS: Gaussian loglik and rss */
  int iterations, converged;          /* logit (OLS: 1 and 1) */
  size_t rank;           /* numerical rank of X (p: rank deficiency is an error) */
  int *aliased;          /* p flags, all 0 in a returned fit */
  /* the covariance chosen in sl_fit_opts (the classical one by default) */
  sl_vcov_kind se_kind;
  double *se_chosen;     /* p; NaN where undefined (HC3 with a leverage of 1) */
  double *cov_chosen;    /* p x p row-major */
  double df;             /* OLS: degrees of freedom of its t statistics (n - p,
                            sum of weights - p when classical and weighted,
                            G - 1 when clustered); logit: INFINITY (normal) */
  double wsum, ess;      /* sum of weights and Kish's effective sample size
                            (sum w)^2 / sum w^2 (both n when unweighted) */
  size_t npos;           /* rows of positive weight */
  size_t nclusters;      /* clusters with a row of positive weight (cluster SEs) */
} sl_fit;

/* Free the arrays of a fit and zero it; safe on a zeroed fit.  On an error
** return the fit holds no memory (freeing it is harmless). */
void sl_fit_free(sl_fit *fit);

/* The zeroed arrays of a fit of n rows and p columns; nonzero when memory
** runs out (the fit then holds none). */
int sl_fit_alloc(sl_fit *fit, size_t n, size_t p);

/* Ordinary least squares.  A rank-deficient X is an error whose message
** names the aliased columns (names: p strings, may be NULL); so are n < p
** and a NaN or infinity in X or y (naming the row).  With n == p the fit is
** exact and sigma, se and robust_se are NaN. */
int sl_ols(const double *X, const double *y, size_t n, size_t p,
           const char *const *names, sl_fit *fit, sl_error *e);

/* Least squares with options: weights w_i (minimizing sum w_i e_i^2) and
** the chosen covariance.  Weights are frequency weights for the classical
** covariance (row i counts w_i times: sigma^2 = sum w_i e_i^2 / (sum w_i -
** p), as statsmodels' GLM freq_weights) and sampling weights for the robust
** ones (scores w_i e_i x_i, as statsmodels' WLS with cov_type).  A negative
** or non-finite weight, or all weights 0, is an error naming the row. */
int sl_ols_opts(const double *X, const double *y, size_t n, size_t p,
                const char *const *names, const sl_fit_opts *o, sl_fit *fit, sl_error *e);

/* Logistic regression by iteratively reweighted least squares; optional
** prior weights w (NULL: 1).  Non-convergence and (quasi-)complete
** separation are reported in warn (may be NULL) naming the columns; the fit
** is still returned.  y in [0, 1]; max_iter <= 0 means 50; tol <= 0 means
** 1e-10, the bound on |dev - dev_prev| / (|dev| + 0.1).  Standard errors
** from the inverse Fisher information at the final coefficients; robust_se
** the HC0 sandwich with scores w_i (y_i - mu_i) x_i, so weights enter the
** meat squared (statsmodels' var_weights; for frequency weights, where
** each row stands for w_i copies, the meat would take w_i). */
int sl_logit(const double *X, const double *y, const double *w, size_t n, size_t p,
             const char *const *names, int max_iter, double tol, sl_fit *fit,
             char *warn, size_t warnsize, sl_error *e);

/* Logistic regression with options: prior weights (as sl_logit's w) and
** the chosen covariance, whose scores are w_i (y_i - mu_i) x_i (statsmodels'
** GLM var_weights with cov_type) and whose HC3 leverages are those of the
** weighted working design, h_i = W_i x_i' (X'WX)^-1 x_i, W_i = w_i mu_i (1 - mu_i). */
int sl_logit_opts(const double *X, const double *y, size_t n, size_t p,
                  const char *const *names, const sl_fit_opts *o, int max_iter, double tol,
                  sl_fit *fit, char *warn, size_t warnsize, sl_error *e);

/* X beta for new rows (n x p): out has n entries; logistic gives
** probabilities when prob is nonzero. */
void sl_predict(const sl_fit *fit, const double *X, size_t n, int prob, double *out);

#endif
