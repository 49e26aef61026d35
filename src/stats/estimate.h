/*
** estimate.h: the average effect of a treatment on an outcome, adjusted
** for a set of covariates, by standardization (the g-formula), inverse
** probability weighting or augmented IPW, with bootstrap intervals.
**
**   standardization: Robins 1986; Hernan and Robins, Causal Inference: What
**     If (2020), ch. 13;
**   IPW with normalised (Hajek) weights: ibid. ch. 12;
**   augmented IPW: Robins, Rotnitzky and Zhao 1994; Bang and Robins 2005;
**     influence-function standard error (Tsiatis 2006, ch. 13);
**   the front-door formula with regression working models: Pearl 1995,
**     Causality 2009, 3.3.2 (frontdoor_est.c);
**   two-stage least squares: Wooldridge 2010, Econometric Analysis of Cross
**     Section and Panel Data, ch. 5 (iv.c).
*/
#ifndef SL_ESTIMATE_H
#define SL_ESTIMATE_H

#include <stddef.h>
#include <stdint.h>
#include "frame.h"

enum sl_method { SL_STANDARDIZE = 0, SL_IPW = 1, SL_AIPW = 2, SL_FRONTDOOR = 3, SL_IV = 4 };

/* Mediators of a front-door estimate, or excluded instruments of an IV
** estimate, at most; and the binary mediators whose values the front-door
** estimate sums over (2^k terms per row). */
#define SL_ROUTE_MAX 16
#define SL_ROUTE_BINARY_MAX 10
enum sl_estimand { SL_ATE = 0, SL_ATT = 1, SL_ATC = 2 };
enum sl_scale { SL_DIFFERENCE = 0, SL_RATIO = 1, SL_ODDS_RATIO = 2 };
/* The analytic standard error: the full sandwich (default), or for ipw
** one that treats the fitted propensities as known. */
enum sl_se_kind { SL_SE_SANDWICH = 0, SL_SE_PS_KNOWN = 1 };
/* Which interval lo and hi hold: percentile with a bootstrap and normal
** without (default), or one asked for.  BCa needs SL_BCA_MIN replicates
** (common practice: Efron and Tibshirani 1993, ch. 14, from memory) and an
** estimator with influence values (standardize, ipw, aipw). */
enum sl_interval { SL_CI_DEFAULT = 0, SL_CI_PERCENTILE = 1, SL_CI_BCA = 2, SL_CI_NORMAL = 3 };
#define SL_BCA_MIN 1000
/* Fewer clusters than this get a warning: the cluster sandwich is biased
** downwards with few clusters (common practice; e.g. Cameron and Miller
** 2015, J. Human Resources 50, 317-372, section VI, from memory). */
#define SL_CLUSTERS_FEW 30
/* A numeric treatment with more than two but at most this many distinct
** values is estimated as continuous with a warning: it may be categorical. */
#define SL_FEW_VALUES 5

/* Called now and then from the calling thread during a bootstrap. */
typedef void (*sl_progress_fn)(void *ctx, size_t done, size_t total);

struct sl_db_table;
typedef struct sl_est_spec {
  const sl_frame *data;
  const struct sl_db_table *table;   /* or a lazy table (then data is NULL and the
                                    columns are the table's): standardize, ipw and
                                    aipw inside the database (estimate_db.c) */
  int treatment, outcome;        /* column indices */
  const int *set;                /* covariate column indices */
  size_t nset;
  const int *aux;                /* frontdoor: the mediators, earliest first;
                                    iv: the excluded instruments */
  size_t naux;
  int method, estimand, scale;
  int interactions;              /* standardize: treatment x covariate terms */
  double contrast;               /* continuous treatment: effect of +contrast (default 1) */
  int stabilized;                /* ipw: multiply weights by P(T = t) */
  int se_kind;                   /* enum sl_se_kind */
  int interval;                  /* enum sl_interval */
  int weights;                   /* 1 + the weights column's index; 0: none.
                                    Sampling weights: every model and mean is
                                    weighted, the SEs take each row's influence
                                    times its weight, the bootstrap carries them */
  const char *treated;           /* the treatment's level (as text) taken as treated
                                    when it has two; NULL: the larger number, or the
                                    level that reads as yes (see estimate_prep.c) */
  int cluster;                   /* 1 + the cluster column's index; 0: none.
                                    Clustered SEs and a bootstrap of clusters */
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

/* What the front-door and IV routes report beside the estimate. */
typedef struct sl_route_info {
  size_t k;                      /* mediators or instruments */
  int binary[SL_ROUTE_MAX];      /* frontdoor: the mediator is 0/1 (logistic model) */
  double a[SL_ROUTE_MAX];        /* frontdoor: the treatment's coefficient in each
                                    mediator model; iv: each instrument's in the
                                    first stage */
  double b[SL_ROUTE_MAX];        /* frontdoor: each mediator's coefficient in the
                                    outcome model */
  int product;                   /* frontdoor: every model linear, no interaction:
                                    the estimate is a sum of products a b */
  double se_delta;               /* frontdoor: delta-method SE (NaN when none) */
  double se_classical, se_hc0, se_hc1;   /* iv: 2SLS standard errors */
  double first_f, first_df1, first_df2, first_p;   /* iv: first-stage F of the
                                    excluded instruments */
  double first_r2_partial;       /* iv: their partial R^2 */
  int has_wald;                  /* iv: one 0/1 instrument, 0/1 treatment, no set */
  double wald, wald_itt, wald_uptake;
} sl_route_info;

/* Where the reported standard error comes from. */
enum sl_se_source { SL_SE_NONE = 0, SL_SE_FROM_SANDWICH, SL_SE_FROM_PS_KNOWN, SL_SE_FROM_ROUTE,
                    SL_SE_FROM_BOOT };

typedef struct sl_est_result {
  double estimate, se;
  int se_source;                 /* enum sl_se_source */
  int se_log;                    /* the analytic se is of log(estimate) */
  double se_analytic;            /* NaN when none (e.g. frontdoor with logistic models) */
  double lo, hi;                 /* the interval asked for (enum sl_interval) */
  int interval;                  /* which one lo and hi are */
  double lo_normal, hi_normal;   /* estimate +- z se (exp of log(estimate) +- z se for a
                                    ratio with the analytic se) */
  double lo_pct, hi_pct;         /* bootstrap percentile (NaN without a bootstrap) */
  double lo_bca, hi_bca;         /* bootstrap BCa (NaN when not available) */
  double accel, bias_z0;         /* BCa's acceleration and bias correction */
  double mu1, mu0;               /* mean potential outcomes (the contrast's two ends) */
  size_t n, dropped;             /* rows used; rows dropped for missing values */
  size_t nclusters;              /* with cluster: the clusters in the rows used */
  double ess_weights;            /* with weights: Kish's effective sample size of them */
  char treated_level[64], control_level[64];   /* a two-level treatment coded
                                    other than 0/1: its levels as text, else "" */
  size_t boot_done, boot_failed;
  double ess, ess1, ess0;        /* ipw/aipw: effective sample sizes */
  double ps_min, ps_max;         /* ipw/aipw: fitted propensity range */
  size_t ps_extreme;             /* propensities outside [0.01, 0.99] */
  int binary_outcome, binary_treatment;
  int has_se;                    /* 0 when no standard error is available */
  sl_route_info route;           /* frontdoor and iv */
  char warnings[SL_WARN_MAX];    /* lines separated by '\n' */
} sl_est_result;

/* The estimate.  Bad input (a treatment with one level, a non-binary
** treatment for ipw/aipw, no complete rows, an outcome in the set) is an
** error naming the problem. */
int sl_estimate(const sl_est_spec *spec, sl_est_result *res, sl_error *e);

#endif
