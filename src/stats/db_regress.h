/*
** db_regress.h: least squares and logistic regression of a lazy table,
** inside the database.  The rows never leave it: each fit reads p x p
** sums from aggregate queries (standard SUM and COUNT only, names quoted,
** values bound) and solves the small system in C.
**
** Least squares: a query for the means of the used columns, then one of
** the cross-products centred at them (sl_db_sums), so that no accuracy is
** lost to raw moments; the classical covariance from the same sums, and
** HC0/HC1 from one more query of the residual-weighted cross-products
** sum e_i^2 z_i z_i' (the coefficients bound as parameters).  HC3 needs
** each row's leverage and cluster-robust SEs each cluster's score sum:
** neither is available here.
**
** Logistic regression: Newton-Raphson (IRLS) with step-halving, from 0,
** as sl_logit, one aggregate query per iteration giving the deviance, the
** score sum z (y - mu) and the information sum mu (1 - mu) z z' (and the
** sandwich's sum (y - mu)^2 z z'), mu computed in SQL from the bound
** coefficients; the same convergence rule, |dev - dev_prev| / (|dev| +
** 0.1) < tol.
**
** Both work in the centred coordinates z = (1, x - xbar) and report the
** coefficients, covariances and SEs of the usual (1, x) ones.  Columns must
** be numeric; rows with a missing y or x are dropped and counted.
*/
#ifndef SL_DB_REGRESS_H
#define SL_DB_REGRESS_H

#include <stdint.h>
#include "db.h"
#include "regress.h"

/* Regressors of one database fit (their sums and the bound coefficients
** must fit sl_db_sums and the engine's parameters). */
#define SL_DB_FIT_MAX_X 60

/* A column whose sine to the span of the earlier centred columns is below
** this is refused: the normal equations of the p x p sums keep about
** 16 + 2 log10(sine) digits, and at 1e-5 that is 6.  (Below SL_RANK_TOL
** the column is aliased, as the in-memory fit says.) */
#define SL_DB_NEAR_SINGULAR 1e-5

/* Least squares of column y on columns x[0..nx-1] and an intercept; se is
** SL_VCOV_CLASSICAL, SL_VCOV_HC0 or SL_VCOV_HC1 (the other kinds are an
** error).  names: the nx + 1 term names, "(intercept)" first (for
** messages).  robust_se is the chosen HC0/HC1 one, NaN when classical.
** *dropped counts the rows left out for a missing value. */
int sl_db_ols(const sl_db_table *t, int y, const int *x, size_t nx, sl_vcov_kind se,
              const char *const *names, sl_fit *fit, uint64_t *dropped, sl_error *e);

/* Logistic regression of a 0/1 column y (as sl_logit; max_iter <= 0: 50,
** tol <= 0: 1e-10); se as for sl_db_ols, robust_se the HC0 sandwich.
** Non-convergence and fitted probabilities numerically 0 or 1 go to warn. */
int sl_db_logit(const sl_db_table *t, int y, const int *x, size_t nx, sl_vcov_kind se,
                const char *const *names, int max_iter, double tol, sl_fit *fit,
                uint64_t *dropped, char *warn, size_t warnsize, sl_error *e);

#endif
