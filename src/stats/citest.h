/*
** citest.h: tests of one conditional independence a _||_ b | given on a
** data frame, and the adjustment of many p-values for multiple testing.
**
** The test follows the column types (or is forced by method):
**   - a and b continuous: the partial correlation (the correlation of the
**     least-squares residuals of a and of b on given) with Fisher's z test
**     and interval: z = atanh(r), SE 1 / sqrt(n - k - 3), k the number of
**     conditioning columns (Fisher 1924);
**   - a or b binary (0/1 or two levels) or categorical: the likelihood-ratio
**     test of response ~ given against response ~ given + other, logistic
**     for a binary response, linear with the Gaussian likelihood for a
**     continuous one (LR = n log(RSS0 / RSS1)); a categorical column of
**     more than two levels enters only as the regressor (dummies), never as
**     the response: two of them are refused unless the G-test applies;
**   - every column discrete and few cells (at most SL_CITEST_MAX_CELLS,
**     at least SL_CITEST_PER_CELL rows per cell on average): the G-test
**     summed over the strata of given; a stratum gives
**     df = (r - 1)(c - 1) with r, c its non-empty rows and columns (empty
**     rows and columns carry no information: the usual convention, e.g.
**     Agresti, Categorical Data Analysis);
**   - method = residual: Spearman's correlation of the two residuals, a
**     rank test that does not assume the relation is linear; p from t with
**     n - k - 2 degrees of freedom, the interval from Fisher's z with the
**     variance 1.06 / (n - k - 3) of Fieller, Hartley and Pearson (1957).
** The effect size is a correlation: the partial correlation; for the LR
** and G tests the partial correlation that would give the statistic,
** sqrt(1 - exp(-LR / n)) (exactly the partial correlation for the linear
** LR), signed by the coefficient when df = 1.  Its interval comes from the
** theory only for the partial and rank correlations and the linear LR with
** df = 1; otherwise it is NaN unless boot > 0 (percentile intervals).
** Rows with a missing value in a, b or given are dropped.
**
** On a lazy table (db.h) the partial correlation and the linear LR test
** run inside the database: both need only the cross-products of the
** test's columns centred over the complete rows (a query for the means and
** the kinds of the columns, then one of sl_db_sums), from which the frame
** and the database compute the same statistic (citest.c).  The tests that
** need the rows themselves or the cells of discrete columns (the G-test,
** the rank test, the logistic LR test, bootstrap intervals) and text
** columns are refused there with an error naming them.
*/
#ifndef SL_CITEST_H
#define SL_CITEST_H

#include <stddef.h>
#include <stdint.h>
#include "error.h"
#include "db.h"
#include "frame.h"

#define SL_CITEST_MAX_CELLS 512     /* cells of a table the G-test accepts */
#define SL_CITEST_PER_CELL 5        /* rows per cell, on average, for the G-test */
#define SL_CITEST_MAX_BOOT 100000   /* bootstrap replicates per implication */

enum sl_ci_method { SL_CI_AUTO = 0, SL_CI_PARTIAL, SL_CI_LR, SL_CI_GTEST, SL_CI_RESIDUAL };
enum sl_ci_test { SL_CI_NONE = 0, SL_CI_FISHER, SL_CI_LR_LINEAR, SL_CI_LR_LOGIT, SL_CI_G,
                  SL_CI_SPEARMAN };
enum sl_ci_adjust { SL_ADJ_NONE = 0, SL_ADJ_HOLM, SL_ADJ_BH };

typedef struct sl_ci_result {
  int test;                 /* an sl_ci_test */
  size_t n, dropped;        /* complete rows used; rows dropped as missing */
  double effect, lo, hi;    /* effect size (a correlation) and interval (NaN: none) */
  double stat, df, p;       /* z (Fisher), LR or G (chi-square, df), t (Spearman, df) */
  int response;             /* LR tests: the column index modelled, else -1 */
  size_t boot_done;         /* replicates that gave an effect */
  char note[SL_MSG_MAX];    /* what the reader should know: separation, dropped columns */
} sl_ci_result;

/* Test a _||_ b | given on f (column indices).  level is the interval's
** coverage (0.95); boot > 0 replaces the interval by the percentile
** interval of boot replicates drawn with seed (bit-identical for a seed).
** A test that cannot be done (a constant column, too few rows, a
** categorical pair without a G-test) is an error naming the reason. */
int sl_citest(const sl_frame *f, int a, int b, const int *given, size_t ng, int method,
              double level, size_t boot, uint64_t seed, sl_ci_result *r, sl_error *e);

/* The same test of a lazy table, inside the database: method auto,
** partial or lr, numeric columns only; the tests the frame would run
** there but the database does not (see above) are an error that names
** them and says to fetch the rows or use method partial.  At most
** SL_DB_MAX_SUMS - 2 conditioning columns.  r->n and r->dropped are set
** once the first query has run, also when the test is then refused. */
int sl_citest_db(const sl_db_table *t, int a, int b, const int *given, size_t ng, int method,
                 double level, sl_ci_result *r, sl_error *e);

/* SL_OK when method runs in the database (auto, partial, lr), else the
** error sl_citest_db gives before any query, naming the method. */
int sl_citest_db_method(int method, sl_error *e);

/* A short name for a test: "partial r", "LR linear", ... */
const char *sl_citest_name(int test);

/* Adjust m p-values (NaN entries are skipped and stay NaN) by Holm's step-
** down or the Benjamini-Hochberg step-up rule; out may equal p. */
int sl_citest_adjust(const double *p, size_t m, int method, double *out, sl_error *e);

#endif
