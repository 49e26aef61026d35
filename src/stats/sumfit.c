/*
** sumfit.c: working models from sums (sumest.h).  Least squares solves the
** normal equations of the cross-products centred at the weighted means (a
** first request for the means), so that no accuracy is lost to raw
** moments; logistic regression takes Newton steps in the same centred
** coordinates, one request per step for all replicates still moving.
*/
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <gsl/gsl_errno.h>
#include <gsl/gsl_linalg.h>
#include "regress.h"
#include "sumest.h"

/* A column whose sine to the span of the earlier centred columns is below
** this is refused (as the database fits do: db_regress.h). */
#define NEAR_SINGULAR 1e-5
#define LOGIT_MAX_ITER 50
#define LOGIT_TOL 1e-10
#define HALVINGS 30
/* A deviance summed over 10^7 rows moves by about this much, relatively,
** with the order of the additions: a rise that small is no rise. */
#define ROUNDING 1e-12

void sl_req_init(sl_req *r) { memset(r, 0, sizeof *r); sl_rx_init(&r->rx); }
void sl_req_clear(sl_req *r) { sl_rx_clear(&r->rx); r->nagg = 0; r->bad = 0; }
void sl_req_free(sl_req *r) { sl_rx_free(&r->rx); free(r->agg); sl_req_init(r); }

int sl_req_val(sl_req *r, int node) { return sl_rx_value(&r->rx, node); }

int sl_req_agg(sl_req *r, int kind, int a, int b, int c) {
  if (r->bad || a < 0) { r->bad = 1; return -1; }
  if (r->nagg == r->cap) {
    size_t cap = r->cap ? 2 * r->cap : 64;
    sl_agg *na = realloc(r->agg, cap * sizeof *na);
    if (!na) { r->bad = 1; return -1; }
    r->agg = na; r->cap = cap;
  }
  r->agg[r->nagg] = (sl_agg){kind, a, b, c};
  return (int)r->nagg++;
}

int sl_req_run(const sl_summer *S, sl_req *r, const double *par, size_t npar, const int *rep,
               size_t nrep, double *out, sl_error *e) {
  if (r->bad || r->rx.bad) return sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
  sl_sum_req q = {&r->rx, r->agg, r->nagg, par, npar, nrep, rep};
  return S->sums(S->ctx, &q, out, e);
}

int sl_term_node(sl_rx *x, sl_term t, int tnode) {
  if (t.a < 0) return sl_rx_num(x, 1);
  int a = t.a == SL_RV_T && tnode >= 0 ? tnode : sl_rx_var(x, t.a);
  if (t.b < 0) return a;
  int b = t.b == SL_RV_T && tnode >= 0 ? tnode : sl_rx_var(x, t.b);
  return sl_rx_op2(x, SL_RX_MUL, a, b);
}

/* The row's weight in the replicate: w times the replicate's draw. */
static int weight_node(sl_rx *x) {
  return sl_rx_op2(x, SL_RX_MUL, sl_rx_var(x, SL_RV_W), sl_rx_var(x, SL_RV_BOOT));
}

/* Weighted means of the terms 1.. and of y (when yvar >= 0) per replicate,
** after the weights' sum: a row of m per replicate, p + 1 long with y and
** p without. */
static int term_means(const sl_summer *S, const sl_term *term, size_t p, int yvar,
                      const int *rep, size_t nrep, double *m, sl_error *e) {
  sl_req r;
  sl_req_init(&r);
  int w = sl_req_val(&r, weight_node(&r.rx));
  sl_req_agg(&r, SL_AGG_SUM, w, -1, -1);
  for (size_t j = 1; j < p; j++)
    sl_req_agg(&r, SL_AGG_SUM, w, sl_req_val(&r, sl_term_node(&r.rx, term[j], -1)), -1);
  if (yvar >= 0) sl_req_agg(&r, SL_AGG_SUM, w, sl_req_val(&r, sl_rx_var(&r.rx, yvar)), -1);
  size_t k = r.nagg;
  double *out = malloc(nrep * k * sizeof *out);
  int rc = out ? sl_req_run(S, &r, NULL, 0, rep, nrep, out, e)
               : sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
  for (size_t i = 0; rc == SL_OK && i < nrep; i++) {
    double sw = out[i * k];
    m[i * k] = sw;
    for (size_t j = 1; j < k; j++) m[i * k + j] = out[i * k + j] / sw;
  }
  free(out);
  sl_req_free(&r);
  return rc;
}

/* Whether the leading k x k block of the p x p matrix A (d: A's diagonal)
** factors with every column's sine to the earlier ones above the bound;
** the factor goes to L (k x k). */
static int factors(const double *A, const double *d, size_t p, size_t k, double tol, double *L) {
  for (size_t i = 0; i < k; i++) memcpy(L + i * k, A + i * p, k * sizeof *L);
  gsl_matrix_view M = gsl_matrix_view_array(L, k, k);
  gsl_error_handler_t *old = gsl_set_error_handler_off();
  int bad = gsl_linalg_cholesky_decomp1(&M.matrix);
  gsl_set_error_handler(old);
  for (size_t j = 0; !bad && j < k; j++) {
    double l = L[j * k + j];
    bad = !(d[j] > 0) || !(l * l >= d[j] * tol * tol);
  }
  return !bad;
}

/* Cholesky factor of the p x p matrix A, in place (lower); -1, or the
** first column whose sine to the span of the earlier ones is below tol,
** found by factoring the leading blocks; -2 when memory runs out.  Least
** squares refuses nearly collinear columns (NEAR_SINGULAR), the logistic
** information only aliased ones (SL_RANK_TOL, as sl_logit): near
** separation makes it ill-conditioned without harm to the fit. */
static int factor(double *A, size_t p, double tol) {
  double *d = calloc(p + 1, sizeof *d), *L = malloc((p * p + 1) * sizeof *L);
  int which = -2;
  if (d && L) {
    for (size_t j = 0; j < p; j++) d[j] = A[j * p + j];
    if (factors(A, d, p, p, tol, L)) { memcpy(A, L, p * p * sizeof *A); which = -1; }
    else for (size_t k = 1; k <= p && which < 0; k++) if (!factors(A, d, p, k, tol, L)) which = (int)k - 1;
  }
  free(d); free(L);
  return which;
}

static int near_singular(const char *const *names, int j, sl_error *e) {
  return sl_error_set(e, SL_EARG, 0, 0, "the working model's term '%s' is (nearly) a linear "
                      "combination of the terms before it: leave it out of the set",
                      names ? names[j] : "?");
}

/* Least squares per replicate. */
static int linear(const sl_summer *S, const sl_term *term, size_t p, int yvar,
                  const char *const *names, const int *rep, size_t nrep, double *coef, int *ok,
                  sl_error *e) {
  size_t q = p - 1;
  double *m = malloc(nrep * (p + 1) * sizeof *m);
  double *par = malloc(nrep * p * sizeof *par);
  double *out = NULL, *A = malloc((q * q + 1) * sizeof *A), *c = malloc(p * sizeof *c);
  sl_req r;
  sl_req_init(&r);
  int rc = SL_OK;
  if (!m || !par || !A || !c) { rc = sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory"); goto done; }
  if ((rc = term_means(S, term, p, yvar, rep, nrep, m, e))) goto done;
  for (size_t i = 0; i < nrep; i++)   /* the centres: the means of x and y */
    memcpy(par + i * p, m + i * (p + 1) + 1, p * sizeof *par);
  int w = sl_req_val(&r, weight_node(&r.rx));
  int *dx = malloc(p * sizeof *dx);
  if (!dx) { rc = sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory"); goto done; }
  for (size_t j = 0; j < p; j++) {   /* dx[0..q): the centred terms; dx[q]: y */
    int node = j < q ? sl_term_node(&r.rx, term[j + 1], -1) : sl_rx_var(&r.rx, yvar);
    dx[j] = sl_req_val(&r, sl_rx_op2(&r.rx, SL_RX_SUB, node, sl_rx_par(&r.rx, (int)j)));
  }
  for (size_t j = 0; j < q; j++)
    for (size_t k = 0; k <= j; k++) sl_req_agg(&r, SL_AGG_SUM, w, dx[j], dx[k]);
  for (size_t j = 0; j < q; j++) sl_req_agg(&r, SL_AGG_SUM, w, dx[j], dx[q]);
  free(dx);
  size_t na = r.nagg;
  out = malloc(nrep * na * sizeof *out);
  if (!out) { rc = sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory"); goto done; }
  if ((rc = sl_req_run(S, &r, par, p, rep, nrep, out, e))) goto done;
  for (size_t i = 0; i < nrep; i++) {
    const double *o = out + i * na, *mean = m + i * (p + 1) + 1;
    double *b = coef + i * p;
    size_t a = 0;
    for (size_t j = 0; j < q; j++)
      for (size_t k = 0; k <= j; k++) A[j * q + k] = A[k * q + j] = o[a++];
    for (size_t j = 0; j < q; j++) c[j] = o[a++];
    ok[i] = m[i * (p + 1)] > 0;
    int bad = q ? factor(A, q, NEAR_SINGULAR) : -1;
    if (bad == -2) { rc = sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory"); goto done; }
    if (bad >= 0 || !ok[i]) {
      ok[i] = 0;
      if (rep[i] == 0) {
        rc = bad >= 0 ? near_singular(names, bad + 1, e)
                      : sl_error_set(e, SL_EARG, 0, 0, "the rows' weights sum to 0");
        goto done;
      }
      continue;
    }
    if (q) {
      gsl_matrix_view L = gsl_matrix_view_array(A, q, q);
      gsl_vector_view cv = gsl_vector_view_array(c, q);
      gsl_linalg_cholesky_svx(&L.matrix, &cv.vector);
    }
    double b0 = mean[q];
    for (size_t j = 0; j < q; j++) { b[j + 1] = c[j]; b0 -= c[j] * mean[j]; }
    b[0] = b0;
  }
done:
  free(m); free(par); free(out); free(A); free(c);
  sl_req_free(&r);
  return rc;
}

/* The logistic request at the candidates (per replicate, the row of par:
** theta in centred coordinates (p), then the centres (p - 1)): the
** information (p x p, lower), the score (p), the log-likelihood, and the
** least and largest linear predictor. */
static void logit_request(sl_req *r, const sl_term *term, size_t p, int yvar) {
  sl_rx *x = &r->rx;
  int *z = malloc(p * sizeof *z), *zn = malloc(p * sizeof *zn);
  if (!z || !zn) { r->bad = 1; free(z); free(zn); return; }
  int w = sl_req_val(r, weight_node(x)), wn = sl_rx_ref(x, w);
  z[0] = sl_req_val(r, sl_rx_num(x, 1));
  zn[0] = sl_rx_ref(x, z[0]);
  for (size_t j = 1; j < p; j++) {
    z[j] = sl_req_val(r, sl_rx_op2(x, SL_RX_SUB, sl_term_node(x, term[j], -1),
                                   sl_rx_par(x, (int)(p + j - 1))));
    zn[j] = sl_rx_ref(x, z[j]);
  }
  int eta = sl_req_val(r, sl_rx_linear(x, zn, p, 0)), etan = sl_rx_ref(x, eta);
  int mun = sl_rx_ref(x, sl_req_val(r, sl_rx_op1(x, SL_RX_EXPIT, etan)));
  int y = sl_rx_var(x, yvar);
  int c = sl_req_val(r, sl_rx_op2(x, SL_RX_MUL, wn, sl_rx_op2(x, SL_RX_MUL, mun,
                                  sl_rx_op2(x, SL_RX_SUB, sl_rx_num(x, 1), mun))));
  int res = sl_req_val(r, sl_rx_op2(x, SL_RX_MUL, wn, sl_rx_op2(x, SL_RX_SUB, y, mun)));
  int ll = sl_req_val(r, sl_rx_op2(x, SL_RX_MUL, wn,
                      sl_rx_op2(x, SL_RX_SUB, sl_rx_op2(x, SL_RX_MUL, y, etan),
                                sl_rx_op1(x, SL_RX_LOG1PEXP, etan))));
  for (size_t j = 0; j < p; j++)
    for (size_t k = 0; k <= j; k++) sl_req_agg(r, SL_AGG_SUM, c, z[j], z[k]);
  for (size_t j = 0; j < p; j++) sl_req_agg(r, SL_AGG_SUM, res, z[j], -1);
  sl_req_agg(r, SL_AGG_SUM, ll, -1, -1);
  sl_req_agg(r, SL_AGG_MIN, eta, -1, -1);
  sl_req_agg(r, SL_AGG_MAX, eta, -1, -1);
  free(z); free(zn);
}

/* Logistic regression per replicate by Newton steps with step-halving;
** one request per step for the replicates still moving. */
static int logistic(const sl_summer *S, const sl_term *term, size_t p, int yvar,
                    const char *const *names, const int *rep, size_t nrep, const double *start,
                    double *coef, int *ok, char *warn, sl_error *e) {
  size_t q = p - 1, np = p + q;
  double *m = malloc(nrep * p * sizeof *m), *th = calloc(nrep * p, sizeof *th);
  double *cand = malloc(nrep * p * sizeof *cand), *step = calloc(nrep * p, sizeof *step);
  double *dev = malloc(nrep * sizeof *dev), *par = malloc(nrep * np * sizeof *par);
  double *A = malloc(p * p * sizeof *A), *eta_lo = malloc(2 * nrep * sizeof *eta_lo);
  int *h = calloc(nrep, sizeof *h), *it = calloc(nrep, sizeof *it), *done = calloc(nrep, sizeof *done);
  int *act = malloc(nrep * sizeof *act), *arep = malloc(nrep * sizeof *arep);
  double *out = NULL;
  sl_req r;
  sl_req_init(&r);
  int rc = SL_OK;
  if (!m || !th || !cand || !step || !dev || !par || !A || !eta_lo || !h || !it || !done || !act || !arep) {
    rc = sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
    goto done;
  }
  if ((rc = term_means(S, term, p, -1, rep, nrep, m, e))) goto done;
  for (size_t i = 0; i < nrep; i++) {   /* centred coordinates of the start */
    const double *xb = m + i * p + 1;
    ok[i] = 1;
    dev[i] = INFINITY;
    if (start) {
      th[i * p] = start[i * p];
      for (size_t j = 1; j < p; j++) { th[i * p + j] = start[i * p + j]; th[i * p] += start[i * p + j] * xb[j - 1]; }
    }
    memcpy(cand + i * p, th + i * p, p * sizeof *th);
  }
  logit_request(&r, term, p, yvar);
  size_t na = r.nagg;
  out = malloc(nrep * na * sizeof *out);
  if (!out) { rc = sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory"); goto done; }
  for (;;) {
    size_t nact = 0;
    for (size_t i = 0; i < nrep; i++)
      if (!done[i]) {
        act[nact] = (int)i; arep[nact] = rep[i];
        memcpy(par + nact * np, cand + i * p, p * sizeof *par);
        memcpy(par + nact * np + p, m + i * p + 1, q * sizeof *par);
        nact++;
      }
    if (!nact) break;
    if ((rc = sl_req_run(S, &r, par, np, arep, nact, out, e))) goto done;
    for (size_t k = 0; k < nact; k++) {
      size_t i = (size_t)act[k];
      const double *o = out + k * na;
      double dc = -2 * o[p * (p + 1) / 2 + p];
      double *ti = th + i * p, *ci = cand + i * p, *si = step + i * p;
      int first = isinf(dev[i]);
      /* worse (beyond the rounding of a sum over many rows): halve the step */
      if (!first && !(dc <= dev[i] + ROUNDING * (fabs(dev[i]) + 0.1))) {
        if (++h[i] > HALVINGS) { done[i] = 1; continue; }
        for (size_t j = 0; j < p; j++) ci[j] = ti[j] + ldexp(si[j], -h[i]);
        continue;
      }
      int conv = !first && fabs(dc - dev[i]) / (fabs(dc) + 0.1) < LOGIT_TOL;
      memcpy(ti, ci, p * sizeof *ti);
      dev[i] = dc;
      eta_lo[2 * i] = o[na - 2]; eta_lo[2 * i + 1] = o[na - 1];
      if (!conv && ++it[i] > LOGIT_MAX_ITER) { done[i] = 2; continue; }
      size_t a = 0;
      for (size_t j = 0; j < p; j++)
        for (size_t l = 0; l <= j; l++) A[j * p + l] = A[l * p + j] = o[a++];
      memcpy(si, o + a, p * sizeof *si);
      int bad = factor(A, p, SL_RANK_TOL);
      if (bad == -2) { rc = sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory"); goto done; }
      if (bad >= 0 && conv) { done[i] = 1; continue; }
      if (bad >= 0) {
        ok[i] = 0; done[i] = 3;
        if (rep[i] == 0) { rc = near_singular(names, bad, e); goto done; }
        continue;
      }
      gsl_matrix_view L = gsl_matrix_view_array(A, p, p);
      gsl_vector_view sv = gsl_vector_view_array(si, p);
      gsl_linalg_cholesky_svx(&L.matrix, &sv.vector);
      h[i] = 0;
      /* the Newton decrement: the step will lower the deviance by about
      ** score' step; when that passes the rule already, take it and stop
      ** rather than pay a query to confirm (Boyd and Vandenberghe 2004,
      ** 9.5.1) */
      double dec = 0;
      for (size_t j = 0; j < p; j++) dec += si[j] * o[p * (p + 1) / 2 + j];
      if (dec >= 0 && dec / (fabs(dc) + 0.1) < LOGIT_TOL) conv = 1;
      if (conv) {   /* one more step from the information in hand: the error squared */
        for (size_t j = 0; j < p; j++) ti[j] += si[j];
        done[i] = 1;
      }
      for (size_t j = 0; j < p; j++) ci[j] = ti[j] + si[j];
    }
  }
  for (size_t i = 0; i < nrep; i++) {   /* back to the raw coordinates */
    const double *xb = m + i * p + 1, *ti = th + i * p;
    double *b = coef + i * p;
    b[0] = ti[0];
    for (size_t j = 1; j < p; j++) { b[j] = ti[j]; b[0] -= ti[j] * xb[j - 1]; }
    if (!isfinite(dev[i])) ok[i] = 0;
    if (rep[i] != 0 || !warn) continue;
    char msg[200];
    if (done[i] == 2) {
      snprintf(msg, sizeof msg, "did not converge in %d iterations", LOGIT_MAX_ITER);
      sl_est_warn(warn, msg);
    }
    if (eta_lo[2 * i] < -36.7 || eta_lo[2 * i + 1] > 36.7) {   /* expit within DBL_EPSILON of 0 or 1 */
      snprintf(msg, sizeof msg, "fitted probabilities numerically 0 or 1 (linear predictor from "
               "%.3g to %.3g)", eta_lo[2 * i], eta_lo[2 * i + 1]);
      sl_est_warn(warn, msg);
    }
  }
done:
  free(m); free(th); free(cand); free(step); free(dev); free(par); free(A); free(eta_lo);
  free(h); free(it); free(done); free(act); free(arep); free(out);
  sl_req_free(&r);
  return rc;
}

int sl_sum_fit(const sl_summer *S, const sl_term *term, size_t p, int yvar, int logistic_,
               const char *const *names, const int *rep, size_t nrep, const double *start,
               double *coef, int *ok, char *warn, sl_error *e) {
  return logistic_ ? logistic(S, term, p, yvar, names, rep, nrep, start, coef, ok, warn, e)
                   : linear(S, term, p, yvar, names, rep, nrep, coef, ok, e);
}
