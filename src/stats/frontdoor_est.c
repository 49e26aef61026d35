/*
** frontdoor_est.c: the front-door estimate of the effect of a 0/1
** treatment x on an outcome y through mediators M (Pearl 1995; Causality
** 2009, 3.3.2):
**
**   E[Y | do(x)] = sum_m P(m | x) sum_x' P(x') E[Y | x', m]
**
** with regression working models.  Each mediator M_j is regressed on
** (1, x, M_1 .. M_j-1), the mediators taken in the order given (earliest
** first), by least squares, or by logistic regression when it is 0/1; the
** outcome on (1, x, M), linear or logistic (with interactions, x:M_j as
** well).  P(x') is the sample proportion.
**
** The assumption behind a continuous mediator: it is its model's mean plus
** an error whose distribution does not depend on x nor on the earlier
** mediators (an additive-error model).  Its values under x are then the
** fitted mean at x plus each row's own residual, and the sum over m becomes
** a mean over the rows (each row's residuals taken together, so their
** joint distribution is kept).  A 0/1 mediator is summed over exactly with
** its fitted probability (2^k terms for k of them).
**
** With every model linear and no interaction the estimate is
** sum_j b_j d_j, where b_j is M_j's coefficient in the outcome model and d_j
** the effect of x on M_j through the mediator models (one mediator: the
** product a b of the two coefficients), and the delta method gives its
** standard error (Sobel 1982; the coefficients of different equations
** taken as independent, each equation's classical covariance).
*/
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include "estimate_internal.h"
#include "regress.h"

typedef struct fdctx {
  const sl_prep *P;
  size_t k;
  sl_fit med[SL_ROUTE_MAX];   /* mediator models */
  sl_fit out;                 /* outcome model */
  int inter;                  /* outcome model has x:M_j */
  double pbar;                /* P(x = 1) in the sample */
  const double *R;            /* n x k residuals of the continuous mediators */
} fdctx;

static double expit(double eta) { return 1 / (1 + exp(-eta)); }

/* E[Y | x', m] under the outcome model. */
static double outcome_mean(const fdctx *c, double xv, const double *m) {
  const double *b = c->out.coef;
  double eta = b[0] + b[1] * xv;
  for (size_t j = 0; j < c->k; j++) eta += b[2 + j] * m[j];
  if (c->inter)
    for (size_t j = 0; j < c->k; j++) eta += b[2 + c->k + j] * xv * m[j];
  return c->P->bin_y ? expit(eta) : eta;
}

/* sum_x' P(x') E[Y | x', m]: the inner sum of the formula. */
static double outcome_avg(const fdctx *c, const double *m) {
  return c->pbar * outcome_mean(c, 1, m) + (1 - c->pbar) * outcome_mean(c, 0, m);
}

/* Linear predictor of mediator j's model at x and the earlier mediators. */
static double mediator_eta(const fdctx *c, size_t j, double xv, const double *m) {
  const double *a = c->med[j].coef;
  double eta = a[0] + a[1] * xv;
  for (size_t l = 0; l < j; l++) eta += a[2 + l] * m[l];
  return eta;
}

/* The outer sum for sample row r from mediator j on: 0/1 mediators are
** summed over with their probabilities, continuous ones take the row's
** residual. */
static double walk(const fdctx *c, size_t r, size_t j, double xv, double *m) {
  if (j == c->k) return outcome_avg(c, m);
  double eta = mediator_eta(c, j, xv, m);
  if (c->P->abin[j]) {
    double p = expit(eta);
    m[j] = 1;
    double v1 = walk(c, r, j + 1, xv, m);
    m[j] = 0;
    double v0 = walk(c, r, j + 1, xv, m);
    return p * v1 + (1 - p) * v0;
  }
  m[j] = eta + c->R[r * c->k + j];
  return walk(c, r, j + 1, xv, m);
}

/* E[Y | do(x)] by the formula; the mean over rows only when a mediator is
** continuous (otherwise no term depends on the row). */
static double psi(const fdctx *c, size_t n, double xv) {
  double m[SL_ROUTE_MAX];
  int cont = 0;
  for (size_t j = 0; j < c->k; j++) cont |= !c->P->abin[j];
  if (!cont) return walk(c, 0, 0, xv, m);
  double s = 0;
  for (size_t r = 0; r < n; r++) s += walk(c, r, 0, xv, m);
  return s / (double)n;
}

/* With every model linear and no interaction: d_j, the effect of x on M_j
** through the mediator models, and E[Y | do(x)] in closed form. */
static void linear_paths(const fdctx *c, double *d, double *psi1, double *psi0) {
  double mu1[SL_ROUTE_MAX], mu0[SL_ROUTE_MAX];
  const double *b = c->out.coef;
  double y1 = b[0] + b[1] * c->pbar, y0 = y1;
  for (size_t j = 0; j < c->k; j++) {
    const double *a = c->med[j].coef;
    double v1 = a[0] + a[1], v0 = a[0], dj = a[1];
    for (size_t l = 0; l < j; l++) {
      v1 += a[2 + l] * mu1[l]; v0 += a[2 + l] * mu0[l]; dj += a[2 + l] * d[l];
    }
    mu1[j] = v1; mu0[j] = v0; d[j] = dj;
    y1 += b[2 + j] * v1; y0 += b[2 + j] * v0;
  }
  *psi1 = y1; *psi0 = y0;
}

/* v' V v for a p-vector v and a p x p row-major V. */
static double quad(const double *v, const double *V, size_t p) {
  double s = 0;
  for (size_t i = 0; i < p; i++)
    for (size_t j = 0; j < p; j++) s += v[i] * V[i * p + j] * v[j];
  return s;
}

/* The delta-method SE of sum_j b_j d_j: the gradient with respect to
** mediator model j's coefficients is g_j (0, 1, d_1 .. d_j-1), where g_j =
** b_j + sum_{l > j} g_l a_l[M_j], and with respect to the outcome model's
** (0, 0, d_1 .. d_k). */
static double delta_se(const fdctx *c, const double *d) {
  size_t k = c->k;
  double g[SL_ROUTE_MAX], v[2 + SL_ROUTE_MAX];
  for (size_t jj = k; jj-- > 0;) {
    double s = c->out.coef[2 + jj];
    for (size_t l = jj + 1; l < k; l++) s += g[l] * c->med[l].coef[2 + jj];
    g[jj] = s;
  }
  double var = 0;
  for (size_t j = 0; j < k; j++) {
    v[0] = 0; v[1] = g[j];
    for (size_t l = 0; l < j; l++) v[2 + l] = g[j] * d[l];
    var += quad(v, c->med[j].cov, 2 + j);
  }
  v[0] = 0; v[1] = 0;
  for (size_t j = 0; j < k; j++) v[2 + j] = d[j];
  var += quad(v, c->out.cov, 2 + k);
  return sqrt(var);
}

/* Fit mediator model j on the sample; residuals of a continuous mediator
** into R[., j]. */
static int fit_mediator(fdctx *c, const size_t *ix, size_t n, size_t j, double *X, double *y,
                        double *R, char *warn, sl_error *e) {
  const sl_prep *P = c->P;
  size_t k = P->k, p = 2 + j;
  const char *names[2 + SL_ROUTE_MAX];
  names[0] = "(intercept)"; names[1] = P->onames[1];
  for (size_t l = 0; l < j; l++) names[2 + l] = P->anames[l];
  for (size_t r = 0; r < n; r++) {
    size_t i = ix[r];
    double *x = X + r * p;
    x[0] = 1; x[1] = P->t[i];
    for (size_t l = 0; l < j; l++) x[2 + l] = P->A[i * k + l];
    y[r] = P->A[i * k + j];
  }
  char w[256] = "";
  int rc = P->abin[j] ? sl_logit(X, y, NULL, n, p, names, 0, 0, &c->med[j], w, sizeof w, e)
                      : sl_ols(X, y, n, p, names, &c->med[j], e);
  if (rc) {
    char m[SL_MSG_MAX];
    snprintf(m, sizeof m, "%s", e->msg);
    return sl_error_set(e, rc, 0, 0, "the model of the mediator '%s': %s", P->anames[j], m);
  }
  if (w[0]) {
    char m[400];
    snprintf(m, sizeof m, "model of the mediator '%s': %s", P->anames[j], w);
    sl_est_warn(warn, m);
  }
  if (!P->abin[j]) {
    double fitted;
    for (size_t r = 0; r < n; r++) {
      sl_predict(&c->med[j], X + r * p, 1, 0, &fitted);
      R[r * k + j] = y[r] - fitted;
    }
  }
  return SL_OK;
}

/* Fit the outcome model on the sample: y on (1, x, M[, x:M]). */
static int fit_outcome(fdctx *c, const size_t *ix, size_t n, double *X, double *y,
                       char *warn, sl_error *e) {
  const sl_prep *P = c->P;
  size_t k = P->k, p = 2 + k * (c->inter ? 2 : 1);
  const char *names[2 + 2 * SL_ROUTE_MAX];
  char ibuf[SL_ROUTE_MAX][128];
  names[0] = "(intercept)"; names[1] = P->onames[1];
  for (size_t j = 0; j < k; j++) {
    names[2 + j] = P->anames[j];
    snprintf(ibuf[j], sizeof ibuf[j], "%s:%s", P->onames[1], P->anames[j]);
    names[2 + k + j] = ibuf[j];
  }
  for (size_t r = 0; r < n; r++) {
    size_t i = ix[r];
    double *x = X + r * p, t = P->t[i];
    x[0] = 1; x[1] = t;
    for (size_t j = 0; j < k; j++) {
      x[2 + j] = P->A[i * k + j];
      if (c->inter) x[2 + k + j] = t * P->A[i * k + j];
    }
    y[r] = P->y[i];
  }
  char w[256] = "";
  int rc = P->bin_y ? sl_logit(X, y, NULL, n, p, names, 0, 0, &c->out, w, sizeof w, e)
                    : sl_ols(X, y, n, p, names, &c->out, e);
  if (rc) {
    char m[SL_MSG_MAX];
    snprintf(m, sizeof m, "%s", e->msg);
    return sl_error_set(e, rc, 0, 0, "the outcome model: %s", m);
  }
  if (w[0]) {
    char m[300];
    snprintf(m, sizeof m, "outcome model: %s", w);
    sl_est_warn(warn, m);
  }
  return SL_OK;
}

int sl_est_frontdoor(const sl_est_spec *s, const sl_prep *P, const size_t *ix, size_t n,
                     sl_point *out, char *warn, sl_error *e) {
  fdctx c;
  memset(&c, 0, sizeof c);
  c.P = P;
  c.k = P->k;
  c.inter = s->interactions != 0;
  size_t k = P->k, pmax = 2 + 2 * k;
  double *X = malloc(n * pmax * sizeof *X), *y = malloc(n * sizeof *y);
  double *R = malloc(n * k * sizeof *R);
  int rc = SL_OK;
  if (!X || !y || !R) { rc = sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory"); goto done; }
  for (size_t r = 0; r < n; r++) c.pbar += P->t[ix[r]];
  c.pbar /= (double)n;
  c.R = R;
  for (size_t j = 0; j < k; j++)
    if ((rc = fit_mediator(&c, ix, n, j, X, y, R, warn, e))) goto done;
  if ((rc = fit_outcome(&c, ix, n, X, y, warn, e))) goto done;
  int product = !P->bin_y && !c.inter;
  for (size_t j = 0; j < k; j++) product &= !P->abin[j];
  double d[SL_ROUTE_MAX];
  if (product) linear_paths(&c, d, &out->mu1, &out->mu0);
  else { out->mu1 = psi(&c, n, 1); out->mu0 = psi(&c, n, 0); }
  out->est = sl_est_contrast(s->scale, out->mu1, out->mu0);
  sl_route_info *ri = &out->route;
  ri->k = k;
  ri->product = product;
  ri->se_delta = NAN;
  for (size_t j = 0; j < k; j++) {
    ri->binary[j] = P->abin[j];
    ri->a[j] = c.med[j].coef[1];
    ri->b[j] = c.out.coef[2 + j];
  }
  if (product && s->scale == SL_DIFFERENCE) {
    ri->se_delta = delta_se(&c, d);
    if (isfinite(ri->se_delta)) { out->se = ri->se_delta; out->has_se = 1; }
  }
done:
  for (size_t j = 0; j < k; j++) sl_fit_free(&c.med[j]);
  sl_fit_free(&c.out);
  free(X); free(y); free(R);
  return rc;
}
