/*
** estimate.c: standardization, IPW and AIPW point estimates on a sample of
** the complete rows.  Preparation of the data is in estimate_prep.c, the
** bootstrap in bootstrap.c.
*/
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include "estimate_internal.h"
#include "regress.h"

/* Append a warning line (kept once). */
void sl_est_warn(char *buf, const char *msg) {
  if (!buf || strstr(buf, msg)) return;
  size_t len = strlen(buf);
  if (len + strlen(msg) + 2 >= SL_WARN_MAX) return;
  if (len) buf[len++] = '\n';
  strcpy(buf + len, msg);
}

/* Outcome-model design row for sample row i with treatment value tv. */
void sl_est_outcome_row(const sl_prep *P, size_t i, double tv, int inter, double *row) {
  const double *c = P->C + i * P->q;
  row[0] = 1;
  row[1] = tv;
  for (size_t j = 0; j < P->q; j++) row[2 + j] = c[j];
  if (inter)
    for (size_t j = 0; j < P->q; j++) row[2 + P->q + j] = tv * c[j];
}

/* Row i's weight: its weights = value, or 1. */
static double wt(const sl_prep *P, size_t i) { return P->w ? P->w[i] : 1; }

/* Fit y on X (n x p), by weighted least squares or weighted logistic
** regression when the rows have weights (w: n entries, or NULL).  Least
** squares scales the rows by sqrt(w) in place. */
static int fit_model(double *X, double *y, const double *w, size_t n, size_t p, int logistic,
                     const char *const *names, sl_fit *fit, char *warn, size_t wsize, sl_error *e) {
  if (logistic) return sl_logit(X, y, w, n, p, names, 0, 0, fit, warn, wsize, e);
  if (w)
    for (size_t k = 0; k < n; k++) {
      double r = sqrt(w[k]);
      for (size_t j = 0; j < p; j++) X[k * p + j] *= r;
      y[k] *= r;
    }
  return sl_ols(X, y, n, p, names, fit, e);
}

/* The weights of the sample rows ix, or NULL without weights (freed by the
** caller). *bad is set when memory runs out. */
static double *sample_weights(const sl_prep *P, const size_t *ix, size_t n, int *bad) {
  *bad = 0;
  if (!P->w) return NULL;
  double *w = malloc(n * sizeof *w);
  if (!w) { *bad = 1; return NULL; }
  for (size_t k = 0; k < n; k++) w[k] = P->w[ix[k]];
  return w;
}

/* Fit the outcome model on the sample ix; predictions under t = a and
** t = b for every sample row go to m_a and m_b. */
static int outcome_fit(const sl_prep *P, const size_t *ix, size_t n, int inter,
                       const double *ta, const double *tb, double *m_a, double *m_b,
                       double *beta, char *warn, sl_error *e) {
  size_t p = 2 + P->q * (inter ? 2 : 1);
  double *X = malloc(n * p * sizeof *X), *y = malloc(n * sizeof *y);
  double *row = malloc(p * sizeof *row);
  int bad, rc = SL_OK;
  double *sw = sample_weights(P, ix, n, &bad);
  if (!X || !y || !row || bad) { rc = sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory"); goto done; }
  for (size_t k = 0; k < n; k++) {
    sl_est_outcome_row(P, ix[k], P->t[ix[k]], inter, X + k * p);
    y[k] = P->y[ix[k]];
  }
  sl_fit fit;
  memset(&fit, 0, sizeof fit);
  char w[256] = "";
  rc = fit_model(X, y, sw, n, p, P->bin_y, P->onames, &fit, w, sizeof w, e);
  if (rc) goto done;
  if (w[0]) { char m[300]; snprintf(m, sizeof m, "outcome model: %s", w); sl_est_warn(warn, m); }
  for (size_t k = 0; k < n; k++) {
    sl_est_outcome_row(P, ix[k], ta ? ta[ix[k]] : 1, inter, row);
    sl_predict(&fit, row, 1, P->bin_y, &m_a[k]);
    sl_est_outcome_row(P, ix[k], tb ? tb[ix[k]] : 0, inter, row);
    sl_predict(&fit, row, 1, P->bin_y, &m_b[k]);
  }
  if (beta) memcpy(beta, fit.coef, p * sizeof *beta);
  sl_fit_free(&fit);
done:
  free(X); free(y); free(row); free(sw);
  return rc;
}

/* Propensity model on the sample: e[k] = P(T = 1 | C) for sample row k. */
int sl_est_propensity(const sl_prep *P, const size_t *ix, size_t n, double *ps,
                      char *warn, sl_error *e) {
  size_t p = 1 + P->q;
  double *X = malloc(n * p * sizeof *X), *t = malloc(n * sizeof *t);
  int bad, rc = SL_OK;
  double *sw = sample_weights(P, ix, n, &bad);
  if (!X || !t || bad) { rc = sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory"); goto done; }
  for (size_t k = 0; k < n; k++) {
    X[k * p] = 1;
    memcpy(X + k * p + 1, P->C + ix[k] * P->q, P->q * sizeof *X);
    t[k] = P->t[ix[k]];
  }
  sl_fit fit;
  memset(&fit, 0, sizeof fit);
  char w[256] = "";
  rc = sl_logit(X, t, sw, n, p, P->pnames, 0, 0, &fit, w, sizeof w, e);
  if (rc) goto done;
  if (w[0]) { char m[300]; snprintf(m, sizeof m, "propensity model: %s", w); sl_est_warn(warn, m); }
  sl_predict(&fit, X, n, 1, ps);
  sl_fit_free(&fit);
done:
  free(X); free(t); free(sw);
  return rc;
}

/* Whether sample row k belongs to the target population of the estimand. */
int sl_est_in_target(const sl_est_spec *s, double t) {
  return s->estimand == SL_ATE || (s->estimand == SL_ATT ? t == 1 : t == 0);
}

/* The contrast of mu1 and mu0 on the chosen scale.  A ratio of means
** needs mu0 > 0 and mu1 >= 0: otherwise it is undefined or its sign says
** nothing (NaN, so a bootstrap replicate counts as failed). */
double sl_est_contrast(int scale, double mu1, double mu0) {
  if (scale == SL_RATIO) return mu0 > 0 && mu1 >= 0 ? mu1 / mu0 : NAN;
  if (scale == SL_ODDS_RATIO) return (mu1 / (1 - mu1)) / (mu0 / (1 - mu0));
  return mu1 - mu0;
}

/* For a linear outcome model the mean prediction is the prediction at the
** mean design row, so the standardized means need one pass of sums, not a
** prediction per row.  ta/tb: the treatment values to set (NULL: 1 / 0). */
static int linear_means(const sl_est_spec *s, const sl_prep *P, const size_t *ix, size_t n,
                        int inter, const double *ta, const double *tb, double *mu_a,
                        double *mu_b, double *beta, char *warn, sl_error *e) {
  size_t p = 2 + P->q * (inter ? 2 : 1);
  double *X = malloc(n * p * sizeof *X), *y = malloc(n * sizeof *y);
  double *ra = calloc(p, sizeof *ra), *rb = calloc(p, sizeof *rb), *row = malloc(p * sizeof *row);
  int bad, rc = SL_OK;
  double *sw = sample_weights(P, ix, n, &bad);
  if (!X || !y || !ra || !rb || !row || bad) { rc = sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory"); goto done; }
  double m = 0;
  for (size_t k = 0; k < n; k++) {
    size_t i = ix[k];
    double wi = wt(P, i);
    sl_est_outcome_row(P, i, P->t[i], inter, X + k * p);
    y[k] = P->y[i];
    if (P->bin_t && !sl_est_in_target(s, P->t[i])) continue;
    m += wi;
    sl_est_outcome_row(P, i, ta ? ta[i] : 1, inter, row);
    for (size_t j = 0; j < p; j++) ra[j] += wi * row[j];
    sl_est_outcome_row(P, i, tb ? tb[i] : 0, inter, row);
    for (size_t j = 0; j < p; j++) rb[j] += wi * row[j];
  }
  if (!(m > 0)) { rc = sl_error_set(e, SL_EARG, 0, 0, "no rows in the target population"); goto done; }
  sl_fit fit;
  memset(&fit, 0, sizeof fit);
  if ((rc = fit_model(X, y, sw, n, p, 0, P->onames, &fit, NULL, 0, e))) goto done;
  double a = 0, b = 0;
  for (size_t j = 0; j < p; j++) { a += fit.coef[j] * ra[j]; b += fit.coef[j] * rb[j]; }
  *mu_a = a / m;
  *mu_b = b / m;
  if (beta) memcpy(beta, fit.coef, p * sizeof *beta);
  sl_fit_free(&fit);
  (void)warn;
done:
  free(X); free(y); free(ra); free(rb); free(row); free(sw);
  return rc;
}

/* The outcome model's fitted value at a design row: linear or logistic. */
static double fitted(const double *beta, const double *row, size_t p, int logistic) {
  double eta = 0;
  for (size_t j = 0; j < p; j++) eta += beta[j] * row[j];
  return logistic ? 1 / (1 + exp(-eta)) : eta;
}

/* Influence values of the standardized means (influence.c): the mean
** equations over the target rows, and the outcome model's score equations
** through D_a = mean over the target of g'(x(a)' beta) x(a). */
static int standardize_se(const sl_est_spec *s, const sl_prep *P, int inter, const double *ta,
                          const double *tb, const double *beta, sl_point *out, sl_error *e) {
  size_t n = P->n, p = 2 + P->q * (inter ? 2 : 1);
  int lg = P->bin_y;
  double *X = malloc(n * p * sizeof *X), *v = malloc(n * sizeof *v), *r = malloc(n * sizeof *r);
  double *phi1 = malloc(n * sizeof *phi1), *phi0 = malloc(n * sizeof *phi0);
  double *row = malloc(p * sizeof *row), *D = calloc(2 * p, sizeof *D), *u = malloc(2 * p * sizeof *u);
  int rc = SL_OK;
  if (!X || !v || !r || !phi1 || !phi0 || !row || !D || !u) {
    rc = sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
    goto done;
  }
  double m = 0;   /* the target's weight */
  for (size_t k = 0; k < n; k++) {
    double wk = wt(P, k);
    sl_est_outcome_row(P, k, P->t[k], inter, X + k * p);
    double f = fitted(beta, X + k * p, p, lg);
    v[k] = wk * (lg ? f * (1 - f) : 1);
    r[k] = P->y[k] - f;
    phi1[k] = phi0[k] = 0;
    if (P->bin_t && !sl_est_in_target(s, P->t[k])) continue;
    m += wk;
    for (int a = 0; a < 2; a++) {
      sl_est_outcome_row(P, k, a == 0 ? (ta ? ta[k] : 1) : (tb ? tb[k] : 0), inter, row);
      double g = fitted(beta, row, p, lg), gd = lg ? g * (1 - g) : 1;
      for (size_t j = 0; j < p; j++) D[a * p + j] += wk * gd * row[j];
      (a == 0 ? phi1 : phi0)[k] = g - (a == 0 ? out->mu1 : out->mu0);
    }
  }
  for (size_t j = 0; j < 2 * p; j++) D[j] /= m;
  if ((rc = sl_infl_solve(X, v, n, p, D, 2, u, e))) {
    if (rc == SL_EARG) rc = SL_OK;   /* singular: no analytic SE, said by the caller */
    goto done;
  }
  for (size_t k = 0; k < n; k++) {
    double c1 = 0, c0 = 0;
    for (size_t j = 0; j < p; j++) { c1 += X[k * p + j] * u[j]; c0 += X[k * p + j] * u[p + j]; }
    double wk = wt(P, k);   /* a row's weight multiplies its equations */
    phi1[k] = wk * (phi1[k] * (double)n / m + c1 * r[k]);
    phi0[k] = wk * (phi0[k] * (double)n / m + c0 * r[k]);
  }
  rc = sl_infl_finish(P, s->scale, out->mu1, out->mu0, phi1, phi0, out, e);
done:
  free(X); free(v); free(r); free(phi1); free(phi0); free(row); free(D); free(u);
  return rc;
}

/* Standardization (g-formula). */
static int standardize(const sl_est_spec *s, const sl_prep *P, const size_t *ix, size_t n,
                       int want_se, sl_point *out, char *warn, sl_error *e) {
  double *ma = NULL, *mb = NULL, *tp = NULL;
  int inter = s->interactions && P->q > 0;
  size_t p = 2 + P->q * (inter ? 2 : 1);
  double *beta = malloc(p * sizeof *beta);
  int rc = SL_OK;
  if (!beta) return sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
  if (!P->bin_t) {   /* the average effect of moving every unit by +contrast */
    tp = malloc(P->n * sizeof *tp);
    if (!tp) { rc = sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory"); goto done; }
    for (size_t i = 0; i < P->n; i++) tp[i] = P->t[i] + s->contrast;
  }
  const double *ta = tp, *tb = tp ? P->t : NULL;
  if (!P->bin_y) {   /* linear: the means at the mean design rows */
    rc = linear_means(s, P, ix, n, inter, ta, tb, &out->mu1, &out->mu0, beta, warn, e);
  } else {
    ma = malloc(n * sizeof *ma); mb = malloc(n * sizeof *mb);
    if (!ma || !mb) { rc = sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory"); goto done; }
    if ((rc = outcome_fit(P, ix, n, inter, ta, tb, ma, mb, beta, warn, e))) goto done;
    double s1 = 0, s0 = 0, m = 0;
    for (size_t k = 0; k < n; k++)
      if (!P->bin_t || sl_est_in_target(s, P->t[ix[k]])) {
        double wk = wt(P, ix[k]);
        s1 += wk * ma[k]; s0 += wk * mb[k]; m += wk;
      }
    if (!(m > 0)) { rc = sl_error_set(e, SL_EARG, 0, 0, "no rows in the target population"); goto done; }
    out->mu1 = s1 / m;
    out->mu0 = s0 / m;
  }
  if (rc) goto done;
  out->est = sl_est_contrast(s->scale, out->mu1, out->mu0);
  out->has_se = 0;
  if (want_se) rc = standardize_se(s, P, inter, ta, tb, beta, out, e);
done:
  free(ma); free(mb); free(tp); free(beta);
  return rc;
}

/* The value at percentile q (0..100) of v[0..n) by linear interpolation
** (type 7); v is sorted in place. */
static int cmp_double(const void *a, const void *b) {
  double x = *(const double *)a, y = *(const double *)b;
  return (x > y) - (x < y);
}
double sl_est_quantile(double *v, size_t n, double q) {
  qsort(v, n, sizeof *v, cmp_double);
  double h = (double)(n - 1) * q / 100.0;
  size_t lo = (size_t)floor(h);
  if (lo + 1 >= n) return v[n - 1];
  return v[lo] + (h - (double)lo) * (v[lo + 1] - v[lo]);
}

/* IPW weights for the estimand, stabilised and truncated on request.
** kappa (may be NULL) gets each weight's log-derivative along the
** propensity model's linear predictor, dw/d(gamma) = w kappa x: 0 for a
** constant or a truncated weight. */
int sl_est_ipw_weights(const sl_est_spec *s, const sl_prep *P, const size_t *ix, size_t n,
                       const double *ps, double *w, double *kappa, sl_error *e) {
  double pt = 0;
  for (size_t k = 0; k < n; k++) pt += P->t[ix[k]];
  pt /= (double)n;
  for (size_t k = 0; k < n; k++) {
    double t = P->t[ix[k]], p = ps[k], kp;
    if (s->estimand == SL_ATE) { w[k] = t ? 1 / p : 1 / (1 - p); kp = t ? -(1 - p) : p; }
    else if (s->estimand == SL_ATT) { w[k] = t ? 1 : p / (1 - p); kp = t ? 0 : 1; }
    else { w[k] = t ? (1 - p) / p : 1; kp = t ? -1 : 0; }
    if (s->stabilized && s->estimand == SL_ATE) w[k] *= t ? pt : 1 - pt;
    if (kappa) kappa[k] = kp;
  }
  if (s->trunc_lo > 0 || s->trunc_hi < 100) {
    double *tmp = malloc(n * sizeof *tmp);
    if (!tmp) return sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
    memcpy(tmp, w, n * sizeof *tmp);
    double lo = sl_est_quantile(tmp, n, s->trunc_lo), hi = sl_est_quantile(tmp, n, s->trunc_hi);
    free(tmp);
    for (size_t k = 0; k < n; k++)
      if (w[k] < lo || w[k] > hi) {
        w[k] = w[k] < lo ? lo : hi;
        if (kappa) kappa[k] = 0;
      }
  }
  return SL_OK;
}

/* Kish's effective sample size of weights w over rows with T == arm (or
** all rows when arm < 0). */
static double ess(const sl_prep *P, const size_t *ix, size_t n, const double *w, int arm) {
  double s = 0, s2 = 0;
  for (size_t k = 0; k < n; k++)
    if (arm < 0 || P->t[ix[k]] == arm) { s += w[k]; s2 += w[k] * w[k]; }
  return s2 > 0 ? s * s / s2 : 0;
}

/* Propensity range and the count outside [0.01, 0.99] (common practice). */
static void ps_stats(const double *ps, size_t n, sl_point *out) {
  out->ps_min = 1; out->ps_max = 0; out->ps_extreme = 0;
  for (size_t k = 0; k < n; k++) {
    if (ps[k] < out->ps_min) out->ps_min = ps[k];
    if (ps[k] > out->ps_max) out->ps_max = ps[k];
    if (ps[k] < 0.01 || ps[k] > 0.99) out->ps_extreme++;
  }
}

/* The propensity model's design: the intercept and the covariates. */
static double *propensity_design(const sl_prep *P) {
  size_t n = P->n, p = 1 + P->q;
  double *X = malloc(n * p * sizeof *X);
  if (!X) return NULL;
  for (size_t k = 0; k < n; k++) {
    X[k * p] = 1;
    memcpy(X + k * p + 1, P->C + k * P->q, P->q * sizeof *X);
  }
  return X;
}

/* Influence values of the IPW means: arm a's mean equation
** w (y - mu_a) over its rows, scaled by n / (sum of its weights), plus
** (unless the propensities count as known) the propensity model's part
** through d_a = mean of w kappa (y - mu_a) x over arm a's rows. */
static int ipw_se(const sl_est_spec *s, const sl_prep *P, const double *ps, const double *w,
                  const double *kappa, sl_point *out, sl_error *e) {
  size_t n = P->n, p = 1 + P->q;
  double *X = propensity_design(P), *v = malloc(n * sizeof *v);
  double *phi1 = malloc(n * sizeof *phi1), *phi0 = malloc(n * sizeof *phi0);
  double *d = calloc(2 * p, sizeof *d), *u = malloc(2 * p * sizeof *u);
  int rc = SL_OK;
  if (!X || !v || !phi1 || !phi0 || !d || !u) { rc = sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory"); goto done; }
  double sw[2] = {0, 0};
  for (size_t k = 0; k < n; k++) {
    int a = P->t[k] == 1;
    double res = P->y[k] - (a ? out->mu1 : out->mu0);
    sw[a] += w[k];
    (a ? phi1 : phi0)[k] = w[k] * res;
    (a ? phi0 : phi1)[k] = 0;
    for (size_t j = 0; j < p; j++) d[(1 - a) * p + j] += w[k] * kappa[k] * res * X[k * p + j];
    v[k] = wt(P, k) * ps[k] * (1 - ps[k]);
  }
  for (size_t j = 0; j < 2 * p; j++) d[j] /= (double)n;
  int known = s->se_kind == SL_SE_PS_KNOWN;
  if (!known && (rc = sl_infl_solve(X, v, n, p, d, 2, u, e))) {
    if (rc == SL_EARG) rc = SL_OK;   /* singular: no analytic SE, said by the caller */
    goto done;
  }
  for (size_t k = 0; k < n; k++) {
    double c1 = 0, c0 = 0;
    for (size_t j = 0; !known && j < p; j++) { c1 += X[k * p + j] * u[j]; c0 += X[k * p + j] * u[p + j]; }
    double r = wt(P, k) * (P->t[k] - ps[k]);   /* the propensity model's weighted score */
    phi1[k] = (phi1[k] + c1 * r) * (double)n / sw[1];
    phi0[k] = (phi0[k] + c0 * r) * (double)n / sw[0];
  }
  rc = sl_infl_finish(P, s->scale, out->mu1, out->mu0, phi1, phi0, out, e);
done:
  free(X); free(v); free(phi1); free(phi0); free(d); free(u);
  return rc;
}

/* Inverse probability weighting with normalised (Hajek) weights. */
static int ipw(const sl_est_spec *s, const sl_prep *P, const size_t *ix, size_t n,
               int want_se, sl_point *out, char *warn, sl_error *e) {
  double *ps = malloc(n * sizeof *ps), *w = malloc(n * sizeof *w), *kappa = malloc(n * sizeof *kappa);
  int rc = SL_OK;
  if (!ps || !w || !kappa) { rc = sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory"); goto done; }
  if ((rc = sl_est_propensity(P, ix, n, ps, warn, e))) goto done;
  if ((rc = sl_est_ipw_weights(s, P, ix, n, ps, w, kappa, e))) goto done;
  for (size_t k = 0; k < n; k++) w[k] *= wt(P, ix[k]);   /* times the rows' own weights */
  double a1 = 0, b1 = 0, a0 = 0, b0 = 0;
  for (size_t k = 0; k < n; k++) {
    double t = P->t[ix[k]], y = P->y[ix[k]];
    if (t) { a1 += w[k] * y; b1 += w[k]; } else { a0 += w[k] * y; b0 += w[k]; }
  }
  out->mu1 = a1 / b1;
  out->mu0 = a0 / b0;
  out->est = sl_est_contrast(s->scale, out->mu1, out->mu0);
  out->ess = ess(P, ix, n, w, -1);
  out->ess1 = ess(P, ix, n, w, 1);
  out->ess0 = ess(P, ix, n, w, 0);
  ps_stats(ps, n, out);
  if (want_se) rc = ipw_se(s, P, ps, w, kappa, out, e);
done:
  free(ps); free(w); free(kappa);
  return rc;
}

/* Augmented IPW, doubly robust.  Its standard error takes the rows'
** values of the two means' estimating functions as their influence values
** (Tsiatis 2006, ch. 13): exact when both working models hold. */
static int aipw(const sl_est_spec *s, const sl_prep *P, const size_t *ix, size_t n,
                int want_se, sl_point *out, char *warn, sl_error *e) {
  double *ps = malloc(n * sizeof *ps), *m1 = malloc(n * sizeof *m1);
  double *m0 = malloc(n * sizeof *m0), *a = malloc(n * sizeof *a), *b = malloc(n * sizeof *b);
  int rc = SL_OK;
  if (!ps || !m1 || !m0 || !a || !b) { rc = sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory"); goto done; }
  if ((rc = sl_est_propensity(P, ix, n, ps, warn, e))) goto done;
  /* arm-specific outcome models: the full treatment-by-covariate model */
  if ((rc = outcome_fit(P, ix, n, P->q > 0, NULL, NULL, m1, m0, NULL, warn, e))) goto done;
  /* a and b: each row's term of the treated and the control mean; the
  ** target's own arm is its observed mean; in: the row is in the target */
  double s1 = 0, s0 = 0, win = 0;
  for (size_t k = 0; k < n; k++) {
    double t = P->t[ix[k]], y = P->y[ix[k]], p = ps[k], wk = wt(P, ix[k]);
    if (s->estimand == SL_ATE) {
      a[k] = m1[k] + t * (y - m1[k]) / p;
      b[k] = m0[k] + (1 - t) * (y - m0[k]) / (1 - p);
    } else if (s->estimand == SL_ATT) {
      a[k] = t * y;
      b[k] = t * m0[k] + (1 - t) * p / (1 - p) * (y - m0[k]);
    } else {
      a[k] = (1 - t) * m1[k] + t * (1 - p) / p * (y - m1[k]);
      b[k] = (1 - t) * y;
    }
    s1 += wk * a[k]; s0 += wk * b[k];
    win += wk * (s->estimand == SL_ATE ? 1 : s->estimand == SL_ATT ? t : 1 - t);
  }
  out->mu1 = s1 / win;
  out->mu0 = s0 / win;
  out->est = sl_est_contrast(s->scale, out->mu1, out->mu0);
  ps_stats(ps, n, out);
  if (want_se) {   /* influence values: w (term - in-target * mean) n / (target's weight) */
    for (size_t k = 0; k < n; k++) {
      double t = P->t[ix[k]], wk = wt(P, ix[k]);
      double in = s->estimand == SL_ATE ? 1 : s->estimand == SL_ATT ? t : 1 - t;
      a[k] = wk * (a[k] - in * out->mu1) * (double)n / win;
      b[k] = wk * (b[k] - in * out->mu0) * (double)n / win;
    }
    if ((rc = sl_infl_finish(P, s->scale, out->mu1, out->mu0, a, b, out, e))) goto done;
  }
  double *w = m0;  /* reuse for the IPW weights behind the ESS */
  for (size_t k = 0; k < n; k++) {
    double t = P->t[ix[k]];
    w[k] = wt(P, ix[k]) * (t ? 1 / ps[k] : 1 / (1 - ps[k]));
  }
  out->ess = ess(P, ix, n, w, -1); out->ess1 = ess(P, ix, n, w, 1); out->ess0 = ess(P, ix, n, w, 0);
done:
  free(ps); free(m1); free(m0); free(a); free(b);
  return rc;
}

int sl_est_point(const sl_est_spec *s, const sl_prep *P, const size_t *ix, size_t n,
                 int want_se, sl_point *out, char *warn, sl_error *e) {
  memset(out, 0, sizeof *out);
  /* a resample may lose one arm: no estimate from it */
  if (P->bin_t && s->method != SL_IV) {
    size_t n1 = 0;
    for (size_t k = 0; k < n; k++) n1 += P->t[ix[k]] == 1;
    if (n1 == 0 || n1 == n)
      return sl_error_set(e, SL_EARG, 0, 0, "the sample holds one treatment level only");
  }
  switch (s->method) {
    case SL_IPW: return ipw(s, P, ix, n, want_se, out, warn, e);
    case SL_AIPW: return aipw(s, P, ix, n, want_se, out, warn, e);
    case SL_FRONTDOOR: return sl_est_frontdoor(s, P, ix, n, out, warn, e);
    case SL_IV: return sl_est_iv(s, P, ix, n, out, warn, e);
    default: return standardize(s, P, ix, n, want_se, out, warn, e);
  }
}
