/*
** iv.h: two-stage least squares for one endogenous regressor x with
** excluded instruments Z and exogenous covariates W (Wooldridge 2010,
** Econometric Analysis of Cross Section and Panel Data, ch. 5):
**
**   first stage   x on (1, Z, W): fitted x^
**   second stage  y on (1, x^, W): the 2SLS coefficients b
**   residuals     u = y - (1, x, W) b   (with x, not x^)
**
** Classical covariance s^2 (X^'X^)^-1 with s^2 = u'u / (n - p); the
** heteroskedasticity-robust HC0 (X^'X^)^-1 (sum u_i^2 x^_i x^_i') (X^'X^)^-1
** and HC1 = HC0 n / (n - p) (White 1980; MacKinnon and White 1985).  The
** first-stage F statistic tests the excluded instruments: ((RSS_r - RSS) /
** k) / (RSS / (n - 1 - k - q)), RSS_r from x on (1, W) alone (computed in
** its Wald form from the first stage's own fit).
*/
#ifndef SL_IV_H
#define SL_IV_H

#include <stddef.h>
#include "error.h"

typedef struct sl_iv_fit {
  size_t n, p;               /* rows; p = 2 + q terms: (intercept), x, W */
  double *coef;              /* p */
  double *se, *se_hc0, *se_hc1;   /* p each; NaN when has_se is 0 */
  double *first_coef;        /* 1 + k + q: the first stage, (intercept), Z, W */
  double first_f, first_df1, first_df2, first_p;
  double first_r2_partial;   /* (RSS_r - RSS) / RSS_r */
  int has_se;                /* 0 when y is an exact function of (1, x^, W) */
} sl_iv_fit;

/* 2SLS of y on x instrumented by the k columns of Z (n x k, row-major),
** with the q covariates W (n x q, row-major; NULL when q is 0).  Names (of
** x, of the columns of Z and W; W's may be NULL when q is 0) appear in
** errors: an instrument collinear with W, or instruments that do not move x
** once W is accounted for.  n must exceed 2 + k + q. */
int sl_iv_2sls(const double *y, const double *x, const double *Z, size_t k,
               const double *W, size_t q, size_t n, const char *xname,
               const char *const *znames, const char *const *wnames,
               sl_iv_fit *fit, sl_error *e);

/* Free the arrays of a fit and zero it; safe on a zeroed fit. */
void sl_iv_fit_free(sl_iv_fit *fit);

#endif
