/*
** sumdiag.h: the diagnostics of inverse probability weighting, covariate
** balance and propensity overlap, written once over the sums of rowsum.h,
** so that a data frame (its sums in C) and a lazy table (its sums in one
** SQL query each) give the same numbers and a table's rows stay in the
** database.
*/
#ifndef SL_SUMDIAG_H
#define SL_SUMDIAG_H

#include "estimate.h"

/* One covariate design column: a number, or the dummy of a text
** covariate's level (named "name=level"); [0] before weighting (by the
** rows' own weights, or 1) and [1] after (times the IPW weights), of the
** controls [0] and the treated [1].  The standardized mean difference is
** (mean1 - mean0) / sqrt((var1 + var0) / 2), 0 when both variances are 0
** (Austin 2009); variances divide by the sum of the weights. */
typedef struct sl_balance_col {
  char *name;
  double mean[2][2], var[2][2];
  double smd[2];
} sl_balance_col;

typedef struct sl_balance {
  size_t q, n, dropped;          /* columns; rows used; rows dropped for missing values */
  sl_balance_col *col;
  char warnings[SL_WARN_MAX];    /* of the propensity model */
} sl_balance;

/* The balance of s's covariates under the IPW weights of s's estimand
** (stabilised and truncated as s asks).  A column that takes one value
** among the treated and another among the controls is an error. */
int sl_diag_balance(const sl_est_spec *s, sl_balance *out, sl_error *e);
void sl_balance_free(sl_balance *b);

/* The fitted propensities by arm, [0] the controls and [1] the treated:
** the rows, extremes and quartiles (type 7, by linear interpolation), the
** count outside [0.01, 0.99], and the rows of each arm in bin k, the
** propensities from k / bins to (k + 1) / bins.  Each edge and 0.01 is
** lessened by 1e-12 of itself and 0.99 increased, so that a propensity on
** them in exact arithmetic counts as on them (in the bin above an edge,
** not outside) whatever the last bits of its sums. */
#define SL_OVERLAP_BINS_MAX 1000
typedef struct sl_overlap {
  size_t n, dropped, extreme;
  double count[2], min[2], q1[2], median[2], q3[2], max[2];
  size_t bins;
  double *hist;                  /* bins x 2: hist[2 k + arm] */
  char warnings[SL_WARN_MAX];
} sl_overlap;

int sl_diag_overlap(const sl_est_spec *s, size_t bins, sl_overlap *out, sl_error *e);
void sl_overlap_free(sl_overlap *o);

#endif
