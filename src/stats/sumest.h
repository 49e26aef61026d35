/*
** sumest.h: the working models and the standardization, IPW and AIPW
** estimators written once over the sums of rowsum.h, so that a data frame
** and a lazy table answer the same estimator.  Internal to src/stats.
*/
#ifndef SL_SUMEST_H
#define SL_SUMEST_H

#include "estimate_internal.h"
#include "rowsum.h"

/* A model term: the product of variables a and b (b < 0: a alone; a < 0:
** the intercept). */
typedef struct sl_term { int a, b; } sl_term;

/* A request being built: values in rx, aggregates in agg. */
typedef struct sl_req {
  sl_rx rx;
  sl_agg *agg;
  size_t nagg, cap;
  int bad;
} sl_req;
void sl_req_init(sl_req *r);
void sl_req_clear(sl_req *r);
void sl_req_free(sl_req *r);
/* A value from node; returns its index. */
int sl_req_val(sl_req *r, int node);
/* An aggregate of value indices (b, c < 0: left out); returns its index. */
int sl_req_agg(sl_req *r, int kind, int a, int b, int c);
/* Run it: out gets nrep x nagg numbers. */
int sl_req_run(const sl_summer *S, sl_req *r, const double *par, size_t npar, const int *rep,
               size_t nrep, double *out, sl_error *e);
/* The node of term t, with the treatment variable replaced by node tnode
** when tnode >= 0. */
int sl_term_node(sl_rx *x, sl_term t, int tnode);

/* Working models of yvar on the terms (term[0] the intercept), weighted
** by the row's weight times its replicate weight: least squares from
** centred cross-products, logistic regression by Newton steps with
** step-halving (sl_logit's convergence rule).  coef gets nrep x p; ok[r]
** is 0 for a replicate whose fit failed (replicate 0 failing is an error
** naming the term).  start (nrep x p, or NULL) starts the logistic fits. */
int sl_sum_fit(const sl_summer *S, const sl_term *term, size_t p, int yvar, int logistic,
               const char *const *names, const int *rep, size_t nrep, const double *start,
               double *coef, int *ok, char *warn, sl_error *e);

/* Point estimates of standardization, IPW or AIPW for each replicate
** (out: nrep points; the SE and diagnostics for replicate 0 when want_se).
** bin_t, bin_y: the treatment and outcome are 0/1.  warm (NULL, or
** sl_sum_warm_size(q) doubles) keeps replicate 0's working-model
** coefficients, which start the logistic fits of later replicates. */
size_t sl_sum_warm_size(size_t q);
int sl_sum_point(const sl_est_spec *s, const sl_summer *S, int bin_t, int bin_y, const int *rep,
                 size_t nrep, int want_se, double *warm, sl_point *out, char *warn, sl_error *e);

/* For the diagnostics (balance, overlap): the propensity model fitted on
** the whole sample and its IPW weights for s's estimand (stabilised and
** truncated as s asks; not times the rows' own weights), as the values ps
** and w of the request r, whose parameters go to par (sl_sum_ipw_npar(q)
** numbers, to give with the request). */
size_t sl_sum_ipw_npar(size_t q);
int sl_sum_ipw_values(const sl_est_spec *s, const sl_summer *S, sl_req *r, double *par, int *ps,
                      int *w, char *warn, sl_error *e);

#endif
