/*
** estimate.h: the average effect of a treatment on an outcome, adjusted
** for a set of covariates, by standardization (the g-formula), inverse
** probability weighting or augmented IPW, with bootstrap intervals.
**
**   standardization: Robins 1986; Hernan and Robins, Causal Inference: What
**     If (2020), ch. 13;
**   IPW with normalised (Hajek) weights: ibid. ch. 12;
**   augmented IPW: Robins, Rotnitzky and Zhao 1994; Bang and Robins 2005;
**     influence-function standard error (Tsiatis 2006, ch. 13).
*/
#ifndef SL_ESTIMATE_H
#define SL_ESTIMATE_H

#include <stddef.h>
#include <stdint.h>
#include "frame.h"

enum sl_method { SL_STANDARDIZE = 0, SL_IPW = 1, SL_AIPW = 2 };
enum sl_estimand { SL_ATE = 0, SL_ATT = 1, SL_ATC = 2 };
enum sl_scale { SL_DIFFERENCE = 0, SL_RATIO = 1, SL_ODDS_RATIO = 2 };

/* Called now and then from the calling thread during a bootstrap. */
typedef void (*sl_progress_fn)(void *ctx, size_t done, size_t total);

typedef struct sl_est_spec {
  const sl_frame *data;
  int treatment, outcome;        /* column indices */
  const int *set;                /* covariate column indices */
  size_t nset;
  int method, estimand, scale;
  int interactions;              /* standardize: treatment x covariate terms */
  double contrast;               /* continuous treatment: effect of +contrast (default 1) */
  int stabilized;                /* ipw: multiply weights by P(T = t) */
  double trunc_lo, trunc_hi;     /* ipw/aipw: truncate weights at these percentiles
                                    (0 and 100: none) */
  size_t boot;                   /* bootstrap replicates (0: none) */
  double level;                  /* interval level, default 0.95 */
  uint64_t seed;
  int threads;                   /* 0: all cores */
  sl_progress_fn progress;
  void *progress_ctx;
  volatile int *stop;            /* set to end the bootstrap early (an error) */
} sl_est_spec;

#define SL_WARN_MAX 1024

typedef struct sl_est_result {
  double estimate, se;
  double lo, hi;                 /* percentile bootstrap; or normal when no bootstrap */
  double lo_normal, hi_normal;   /* estimate +- z se */
  double mu1, mu0;               /* mean potential outcomes (the contrast's two ends) */
  size_t n, dropped;             /* rows used; rows dropped for missing values */
  size_t boot_done, boot_failed;
  double ess, ess1, ess0;        /* ipw/aipw: effective sample sizes */
  double ps_min, ps_max;         /* ipw/aipw: fitted propensity range */
  size_t ps_extreme;             /* propensities outside [0.01, 0.99] */
  int binary_outcome, binary_treatment;
  int has_se;                    /* 0 when no standard error is available */
  char warnings[SL_WARN_MAX];    /* lines separated by '\n' */
} sl_est_result;

/* The estimate.  Bad input (a treatment with one level, a non-binary
** treatment for ipw/aipw, no complete rows, an outcome in the set) is an
** error naming the problem. */
int sl_estimate(const sl_est_spec *spec, sl_est_result *res, sl_error *e);

/* Fitted propensities and weights for the complete rows, for diagnostics:
** ps, w and t get n entries each (caller frees with free()); rows gives the
** frame row of each. */
typedef struct sl_weights {
  size_t n;
  double *ps, *w, *t;
  size_t *rows;
} sl_weights;
int sl_est_weights(const sl_est_spec *spec, sl_weights *out, sl_error *e);
void sl_weights_free(sl_weights *w);

#endif
