/*
** sumest.c: standardization, IPW and AIPW over sums (sumest.h), for a
** data frame and a lazy table alike.  Each estimator fits its working
** models (sumfit.c), then asks for its two means in one request; with
** want_se, one request more gives the pieces of its rows' influence values
** (the bread H and the derivatives d of influence.c) and one the sums of
** their squares (and cubes, for the BCa acceleration), summed within
** clusters when there are clusters.  The formulas are those of
** estimate.c and influence.c, written as sums.
*/
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <gsl/gsl_errno.h>
#include <gsl/gsl_linalg.h>
#include "sumest.h"

#define MUL(x, a, b) sl_rx_op2(x, SL_RX_MUL, a, b)
#define ADD(x, a, b) sl_rx_op2(x, SL_RX_ADD, a, b)
#define SUB(x, a, b) sl_rx_op2(x, SL_RX_SUB, a, b)
#define DIV(x, a, b) sl_rx_op2(x, SL_RX_DIV, a, b)
#define NUM(x, v) sl_rx_num(x, v)
#define VAR(x, v) sl_rx_var(x, v)
#define PAR(x, j) sl_rx_par(x, (int)(j))
/* A value from node, and a node reading it back. */
#define VAL(r, node) sl_rx_ref(&(r)->rx, sl_req_val(r, node))

typedef struct est {
  const sl_est_spec *s;
  const sl_summer *S;
  int bin_t, bin_y;
  size_t q;
  const int *rep;
  size_t nrep;
  int want_se;
  double *warm;
  sl_point *out;
  char *warn;
  sl_error *e;
} est;

size_t sl_sum_warm_size(size_t q) { return (1 + q) + (2 + 2 * q); }

static int nomem(est *E) { return sl_error_set(E->e, SL_ENOMEM, 0, 0, "out of memory"); }

/* The outcome model's terms: the intercept, t, the covariates and, with
** inter, t times each; the propensity model's: the intercept and the
** covariates. */
static sl_term *outcome_terms(size_t q, int inter, size_t *p) {
  *p = 2 + q * (inter ? 2 : 1);
  sl_term *t = malloc(*p * sizeof *t);
  if (!t) return NULL;
  t[0] = (sl_term){-1, -1};
  t[1] = (sl_term){SL_RV_T, -1};
  for (size_t j = 0; j < q; j++) t[2 + j] = (sl_term){SL_RV_C0 + (int)j, -1};
  for (size_t j = 0; inter && j < q; j++) t[2 + q + j] = (sl_term){SL_RV_T, SL_RV_C0 + (int)j};
  return t;
}

static sl_term *propensity_terms(size_t q) {
  sl_term *t = malloc((1 + q) * sizeof *t);
  if (!t) return NULL;
  t[0] = (sl_term){-1, -1};
  for (size_t j = 0; j < q; j++) t[1 + j] = (sl_term){SL_RV_C0 + (int)j, -1};
  return t;
}

/* Fit a working model for every replicate; coef gets nrep x p.  The
** whole sample's coefficients go to warm + off, and start the logistic
** fits of later replicates.  what names the model in warnings. */
static int fit(est *E, const sl_term *term, size_t p, int yvar, int logistic,
               const char *const *names, size_t off, const char *what, double *coef, int *ok) {
  double *start = NULL;
  int whole = E->rep[0] == 0;
  if (E->warm && !whole) {
    start = malloc(E->nrep * p * sizeof *start);
    if (!start) return nomem(E);
    for (size_t i = 0; i < E->nrep; i++) memcpy(start + i * p, E->warm + off, p * sizeof *start);
  }
  char w[SL_WARN_MAX] = "";
  int rc = sl_sum_fit(E->S, term, p, yvar, logistic, names, E->rep, E->nrep, start, coef, ok,
                      whole ? w : NULL, E->e);
  free(start);
  if (rc == SL_OK && whole && E->warm) memcpy(E->warm + off, coef, p * sizeof *coef);
  if (w[0] && E->warn) {
    char m[SL_WARN_MAX + 32];
    snprintf(m, sizeof m, "%s: %s", what, w);
    sl_est_warn(E->warn, m);
  }
  return rc;
}

/* g(z(tnode)' beta) with beta the parameters from first: the model's
** prediction with the treatment set to tnode (or as observed: -1). */
static int predict(sl_rx *x, const sl_term *term, size_t p, size_t first, int tnode, int logistic) {
  int *z = malloc(p * sizeof *z);
  if (!z) { x->bad = 1; return -1; }
  for (size_t j = 0; j < p; j++) z[j] = sl_term_node(x, term[j], tnode);
  int eta = sl_rx_linear(x, z, p, (int)first);
  free(z);
  /* the linear predictor as a value: expit reads it several times */
  return logistic ? sl_rx_op1(x, SL_RX_EXPIT, sl_rx_ref(x, sl_rx_value(x, eta))) : eta;
}

/* The row's weight in the replicate, and its membership of the
** estimand's target (1 for a continuous treatment). */
static int weight(sl_rx *x) { return MUL(x, VAR(x, SL_RV_W), VAR(x, SL_RV_BOOT)); }
static int target(const est *E, sl_rx *x) {
  if (!E->bin_t || E->s->estimand == SL_ATE) return NUM(x, 1);
  return E->s->estimand == SL_ATT ? VAR(x, SL_RV_T) : SUB(x, NUM(x, 1), VAR(x, SL_RV_T));
}

/* u_a = H^-1 d_a for nd vectors (H p x p from lower, overwritten);
** nonzero when H is singular: no analytic SE. */
static int solve(double *H, size_t p, double *d, size_t nd) {
  for (size_t j = 0; j < p; j++)
    for (size_t k = 0; k < j; k++) H[k * p + j] = H[j * p + k];
  gsl_matrix_view M = gsl_matrix_view_array(H, p, p);
  gsl_error_handler_t *old = gsl_set_error_handler_off();
  int bad = gsl_linalg_cholesky_decomp1(&M.matrix);
  for (size_t a = 0; !bad && a < nd; a++) {
    gsl_vector_view v = gsl_vector_view_array(d + a * p, p);
    bad = gsl_linalg_cholesky_svx(&M.matrix, &v.vector);
  }
  gsl_set_error_handler(old);
  return bad;
}

/* The SE from the rows' influence values of the two means: L = g1 phi1 +
** g0 phi0, where phi_a is the node phi[a] (parameters par); var = sum L^2
** / n^2, or the clusters' sums squared times G / (G - 1). */
static int finish(est *E, sl_req *r, const int *phi, const double *par, size_t npar) {
  sl_point *o = &E->out[0];
  sl_rx *x = &r->rx;
  double g1, g0, n = (double)E->S->n;
  sl_infl_gradient(E->s->scale, o->mu1, o->mu0, &g1, &g0);
  int L = sl_req_val(r, ADD(x, MUL(x, NUM(x, g1), phi[0]), MUL(x, NUM(x, g0), phi[1])));
  sl_req_agg(r, SL_AGG_SUM, L, L, -1);
  sl_req_agg(r, SL_AGG_SUM, L, L, L);
  double v[2];
  int rep0 = 0, rc = sl_req_run(E->S, r, par, npar, &rep0, 1, v, E->e);
  if (rc) return rc;
  double var = v[0] / (n * n);
  if (E->S->has_cluster) {
    double ss;
    size_t G;
    if ((rc = E->S->cluster_ss(E->S->ctx, x, L, par, npar, &ss, &G, E->e))) return rc;
    var = ss / (n * n) * (double)G / ((double)G - 1);
  }
  if (!(var >= 0) || !isfinite(var)) return SL_OK;
  o->se = sqrt(var);
  o->se_log = E->s->scale != SL_DIFFERENCE;
  o->has_se = 1;
  /* Efron 1987: the acceleration from the empirical influence values */
  o->accel = v[0] > 0 ? v[1] / (6 * pow(v[0], 1.5)) : 0;
  return SL_OK;
}

/* Each replicate's contrast from its two means. */
static void contrasts(est *E, const double *mu, const int *ok) {
  for (size_t i = 0; i < E->nrep; i++) {
    sl_point *o = &E->out[i];
    o->mu1 = mu[2 * i]; o->mu0 = mu[2 * i + 1];
    o->est = ok[i] ? sl_est_contrast(E->s->scale, o->mu1, o->mu0) : NAN;
  }
}

/* The treatment values the two means set: 1 and 0, or t + contrast and t
** for a continuous treatment. */
static int set_treated(const est *E, sl_rx *x) {
  return E->bin_t ? NUM(x, 1) : ADD(x, VAR(x, SL_RV_T), NUM(x, E->s->contrast));
}
static int set_control(const est *E, sl_rx *x) { return E->bin_t ? NUM(x, 0) : VAR(x, SL_RV_T); }

/* Standardization's influence values (as standardize_se in estimate.c):
** phi_a = w (in (g_a - mu_a) n / m + (z' u_a) r), u_a = H^-1 D_a, H the
** sum of v z z' / n, D_a the target's mean of g'(z(a)' beta) z(a). */
static int standardize_se(est *E, const sl_term *term, size_t p, const double *beta, double m) {
  sl_req r;
  sl_req_init(&r);
  sl_rx *x = &r.rx;
  int lg = E->bin_y, rc = SL_OK, rep0 = 0;
  double n = (double)E->S->n, *o = NULL;
  double *H = malloc((p * p + 2 * p) * sizeof *H), *par = malloc((3 * p + 4) * sizeof *par);
  if (!H || !par) { rc = nomem(E); goto done; }
  /* the bread and the derivatives */
  int w = VAL(&r, VAR(x, SL_RV_W)), in = VAL(&r, target(E, x));
  int f = VAL(&r, predict(x, term, p, 0, -1, lg));
  int v = sl_req_val(&r, lg ? MUL(x, w, MUL(x, f, SUB(x, NUM(x, 1), f))) : w);
  int *z = malloc(p * sizeof *z), *za = malloc(2 * p * sizeof *za), gd[2];
  if (!z || !za) { free(z); free(za); rc = nomem(E); goto done; }
  for (size_t j = 0; j < p; j++) z[j] = sl_req_val(&r, sl_term_node(x, term[j], -1));
  for (int a = 0; a < 2; a++) {
    int tn = a == 0 ? set_treated(E, x) : set_control(E, x);
    int g = VAL(&r, predict(x, term, p, 0, tn, lg));
    gd[a] = sl_req_val(&r, MUL(x, MUL(x, w, in), lg ? MUL(x, g, SUB(x, NUM(x, 1), g)) : NUM(x, 1)));
    for (size_t j = 0; j < p; j++) za[a * p + j] = sl_req_val(&r, sl_term_node(x, term[j], tn));
  }
  for (size_t j = 0; j < p; j++)
    for (size_t k = 0; k <= j; k++) sl_req_agg(&r, SL_AGG_SUM, v, z[j], z[k]);
  for (int a = 0; a < 2; a++)
    for (size_t j = 0; j < p; j++) sl_req_agg(&r, SL_AGG_SUM, gd[a], za[a * p + j], -1);
  free(z); free(za);
  o = malloc(r.nagg * sizeof *o);
  if (!o) { rc = nomem(E); goto done; }
  if ((rc = sl_req_run(E->S, &r, beta, p, &rep0, 1, o, E->e))) goto done;
  size_t k = 0;
  for (size_t j = 0; j < p; j++)
    for (size_t l = 0; l <= j; l++) H[j * p + l] = o[k++] / n;
  double *D = H + p * p;
  for (size_t j = 0; j < 2 * p; j++) D[j] = o[k++] / m;
  if (solve(H, p, D, 2)) goto done;   /* singular: no analytic SE */
  /* the influence values' sums: parameters beta, u1, u0, mu1, mu0, n / m */
  memcpy(par, beta, p * sizeof *par);
  memcpy(par + p, D, 2 * p * sizeof *par);
  par[3 * p] = E->out[0].mu1; par[3 * p + 1] = E->out[0].mu0; par[3 * p + 2] = n / m;
  sl_req_clear(&r);
  w = VAL(&r, VAR(x, SL_RV_W)); in = VAL(&r, target(E, x));
  int res = VAL(&r, SUB(x, VAR(x, SL_RV_Y), predict(x, term, p, 0, -1, lg)));
  int phi[2];
  for (int a = 0; a < 2; a++) {
    int tn = a == 0 ? set_treated(E, x) : set_control(E, x);
    int g = predict(x, term, p, 0, tn, lg);
    int *zz = malloc(p * sizeof *zz);
    if (!zz) { rc = nomem(E); goto done; }
    for (size_t j = 0; j < p; j++) zz[j] = sl_term_node(x, term[j], -1);
    int c = sl_rx_linear(x, zz, p, (int)(p + (size_t)a * p));
    free(zz);
    int mean = MUL(x, MUL(x, in, SUB(x, g, PAR(x, 3 * p + (size_t)a))), PAR(x, 3 * p + 2));
    phi[a] = VAL(&r, MUL(x, w, ADD(x, mean, MUL(x, c, res))));
  }
  rc = finish(E, &r, phi, par, 3 * p + 3);
done:
  free(H); free(par); free(o);
  sl_req_free(&r);
  return rc;
}

/* Standardization (the g-formula): the target's mean of the outcome
** model's predictions with the treatment set. */
static int standardize(est *E) {
  int inter = E->s->interactions && E->q > 0, rc = SL_OK;
  size_t p, nr = E->nrep;
  sl_term *term = outcome_terms(E->q, inter, &p);
  double *beta = malloc(nr * p * sizeof *beta), *o = malloc(nr * 3 * sizeof *o);
  double *mu = malloc(nr * 2 * sizeof *mu);
  int *ok = malloc(nr * sizeof *ok);
  sl_req r;
  sl_req_init(&r);
  if (!term || !beta || !o || !mu || !ok) { rc = nomem(E); goto done; }
  if ((rc = fit(E, term, p, SL_RV_Y, E->bin_y, E->S->onames, 1 + E->q, "outcome model", beta, ok)))
    goto done;
  sl_rx *x = &r.rx;
  int wi = sl_req_val(&r, MUL(x, weight(x), target(E, x)));
  int a = sl_req_val(&r, predict(x, term, p, 0, set_treated(E, x), E->bin_y));
  int b = sl_req_val(&r, predict(x, term, p, 0, set_control(E, x), E->bin_y));
  sl_req_agg(&r, SL_AGG_SUM, wi, -1, -1);
  sl_req_agg(&r, SL_AGG_SUM, wi, a, -1);
  sl_req_agg(&r, SL_AGG_SUM, wi, b, -1);
  if ((rc = sl_req_run(E->S, &r, beta, p, E->rep, nr, o, E->e))) goto done;
  for (size_t i = 0; i < nr; i++) {
    double m = o[3 * i];
    if (!(m > 0)) ok[i] = 0;
    if (!(m > 0) && E->rep[i] == 0) {
      rc = sl_error_set(E->e, SL_EARG, 0, 0, "no rows in the target population");
      goto done;
    }
    mu[2 * i] = o[3 * i + 1] / m; mu[2 * i + 1] = o[3 * i + 2] / m;
  }
  contrasts(E, mu, ok);
  if (E->want_se && E->rep[0] == 0) rc = standardize_se(E, term, p, beta, o[0]);
done:
  free(term); free(beta); free(o); free(mu); free(ok);
  sl_req_free(&r);
  return rc;
}

/* The propensity model for every replicate: gamma (nrep x (1 + q)). */
static int propensity(est *E, sl_term **term, double **gamma, int *ok) {
  *term = propensity_terms(E->q);
  *gamma = malloc(E->nrep * (1 + E->q) * sizeof **gamma);
  if (!*term || !*gamma) return nomem(E);
  return fit(E, *term, 1 + E->q, SL_RV_T, 1, E->S->pnames, 0, "propensity model", *gamma, ok);
}

/* The estimand's inverse probability weight of a row with propensity ps
** (a node), times P(T = t) (the parameter stab) when stabilised, and cut
** at the parameters stab + 1 and stab + 2 when truncated; kappa (may be
** NULL) gets its log-derivative along the propensity model's linear
** predictor, 0 where cut: dw/d(gamma) = w kappa x (Lunceford and
** Davidian 2004). */
static int ipw_weight(const est *E, sl_rx *x, int ps, int stab, int cut, int *kappa) {
  int t = VAR(x, SL_RV_T), one = NUM(x, 1), c = SUB(x, one, t), q = SUB(x, one, ps), w, k;
  if (E->s->estimand == SL_ATE) {
    w = ADD(x, DIV(x, t, ps), DIV(x, c, q));
    k = SUB(x, ps, t);
    if (E->s->stabilized)
      w = MUL(x, w, ADD(x, MUL(x, t, PAR(x, stab)), MUL(x, c, SUB(x, one, PAR(x, stab)))));
  } else if (E->s->estimand == SL_ATT) {
    w = ADD(x, t, MUL(x, c, DIV(x, ps, q)));
    k = c;
  } else {
    w = ADD(x, MUL(x, t, DIV(x, q, ps)), c);
    k = SUB(x, NUM(x, 0), t);
  }
  if (cut && (E->s->trunc_lo > 0 || E->s->trunc_hi < 100)) {
    int wn = sl_rx_ref(x, sl_rx_value(x, w)), lo = PAR(x, stab + 1), hi = PAR(x, stab + 2);
    int below = sl_rx_op2(x, SL_RX_LT, wn, lo), above = sl_rx_op2(x, SL_RX_LT, hi, wn);
    w = ADD(x, wn, ADD(x, MUL(x, below, SUB(x, lo, wn)), MUL(x, above, SUB(x, hi, wn))));
    k = MUL(x, k, SUB(x, one, ADD(x, below, above)));
  }
  if (kappa) *kappa = k;
  return w;
}

/* The cuts of truncated weights: the percentiles trunc_lo and trunc_hi of
** the weights over the rows, into par[stab + 1], par[stab + 2] (par holds
** the propensity model's stab coefficients first). */
static int cuts(est *E, const sl_term *term, double *par, size_t stab) {
  if (!(E->s->trunc_lo > 0 || E->s->trunc_hi < 100)) return SL_OK;
  if (!E->S->quantiles || E->nrep != 1)
    return sl_error_set(E->e, SL_EARG, 0, 0, "truncate = needs the weights' percentiles, which "
                        "only a data frame gives: fetch the rows with t:fetch()");
  sl_req r;
  sl_req_init(&r);
  sl_rx *x = &r.rx;
  int ps = VAL(&r, predict(x, term, stab, 0, -1, 1));
  int w = sl_req_val(&r, ipw_weight(E, x, ps, (int)stab, 0, NULL));
  double pct[2] = {E->s->trunc_lo, E->s->trunc_hi};
  int rc = r.rx.bad ? nomem(E) : E->S->quantiles(E->S->ctx, x, w, par, pct, 2, par + stab + 1, E->e);
  sl_req_free(&r);
  return rc;
}

/* The propensities' range and the number outside [0.01, 0.99], and the
** effective sample sizes of the weights wt (value) overall and per arm:
** aggregates added to r from index first. */
static void diagnostics_aggs(sl_req *r, int ps, int wt) {
  sl_rx *x = &r->rx;
  int psn = sl_rx_ref(x, ps), t = sl_req_val(r, VAR(x, SL_RV_T));
  int c = sl_req_val(r, SUB(x, NUM(x, 1), VAR(x, SL_RV_T)));
  int ext = sl_req_val(r, ADD(x, sl_rx_op2(x, SL_RX_LT, psn, NUM(x, 0.01)),
                              sl_rx_op2(x, SL_RX_LT, NUM(x, 0.99), psn)));
  sl_req_agg(r, SL_AGG_MIN, ps, -1, -1);
  sl_req_agg(r, SL_AGG_MAX, ps, -1, -1);
  sl_req_agg(r, SL_AGG_SUM, ext, -1, -1);
  sl_req_agg(r, SL_AGG_SUM, wt, t, -1);
  sl_req_agg(r, SL_AGG_SUM, wt, wt, t);
  sl_req_agg(r, SL_AGG_SUM, wt, c, -1);
  sl_req_agg(r, SL_AGG_SUM, wt, wt, c);
}

static void diagnostics_take(sl_point *o, const double *d) {
  o->ps_min = d[0]; o->ps_max = d[1]; o->ps_extreme = (size_t)d[2];
  double s1 = d[3], q1 = d[4], s0 = d[5], q0 = d[6];
  o->ess1 = q1 > 0 ? s1 * s1 / q1 : 0;
  o->ess0 = q0 > 0 ? s0 * s0 / q0 : 0;
  o->ess = q1 + q0 > 0 ? (s1 + s0) * (s1 + s0) / (q1 + q0) : 0;
}

/* IPW's influence values (as ipw_se in estimate.c): phi_a = (wt (y -
** mu_a) [T = a] + (x' u_a) w (T - ps)) n / sw_a, u_a = H^-1 d_a, H the
** sum of w ps (1 - ps) x x' / n, d_a the sum over arm a of wt kappa (y -
** mu_a) x / n; u = 0 when the propensities count as known. */
static int ipw_se(est *E, const sl_term *term, const double *pw, double sw1, double sw0) {
  size_t p = 1 + E->q;
  double n = (double)E->S->n, *o = NULL;
  double *H = malloc((p * p + 2 * p) * sizeof *H), *par = malloc((3 * p + 8) * sizeof *par);
  sl_req r;
  sl_req_init(&r);
  sl_rx *x = &r.rx;
  int rc = SL_OK, rep0 = 0, known = E->s->se_kind == SL_SE_PS_KNOWN;
  if (!H || !par) { rc = nomem(E); goto done; }
  /* parameters: gamma, stab, lo, hi (pw), mu1, mu0, then u1, u0, n / sw1, n / sw0 */
  memcpy(par, pw, (p + 3) * sizeof *par);
  par[p + 3] = E->out[0].mu1; par[p + 4] = E->out[0].mu0;
  double *D = H + p * p;
  memset(D, 0, 2 * p * sizeof *D);
  int ps = VAL(&r, predict(x, term, p, 0, -1, 1));
  int t = VAR(x, SL_RV_T), w = VAR(x, SL_RV_W), y = VAR(x, SL_RV_Y);
  if (!known) {
    int kappa, wt = ipw_weight(E, x, ps, (int)p, 1, &kappa);
    int wk = VAL(&r, MUL(x, MUL(x, w, wt), kappa));
    int v = sl_req_val(&r, MUL(x, w, MUL(x, ps, SUB(x, NUM(x, 1), ps))));
    int *z = malloc(p * sizeof *z);
    if (!z) { rc = nomem(E); goto done; }
    for (size_t j = 0; j < p; j++) z[j] = sl_req_val(&r, sl_term_node(x, term[j], -1));
    int arm[2] = {sl_req_val(&r, MUL(x, MUL(x, wk, t), SUB(x, y, PAR(x, p + 3)))),
                  sl_req_val(&r, MUL(x, MUL(x, wk, SUB(x, NUM(x, 1), t)), SUB(x, y, PAR(x, p + 4))))};
    for (size_t j = 0; j < p; j++)
      for (size_t k = 0; k <= j; k++) sl_req_agg(&r, SL_AGG_SUM, v, z[j], z[k]);
    for (int a = 0; a < 2; a++)
      for (size_t j = 0; j < p; j++) sl_req_agg(&r, SL_AGG_SUM, arm[a], z[j], -1);
    free(z);
    o = malloc(r.nagg * sizeof *o);
    if (!o) { rc = nomem(E); goto done; }
    if ((rc = sl_req_run(E->S, &r, par, p + 5, &rep0, 1, o, E->e))) goto done;
    size_t k = 0;
    for (size_t j = 0; j < p; j++)
      for (size_t l = 0; l <= j; l++) H[j * p + l] = o[k++] / n;
    for (size_t j = 0; j < 2 * p; j++) D[j] = o[k++] / n;
    if (solve(H, p, D, 2)) goto done;   /* singular: no analytic SE */
  }
  memcpy(par + p + 5, D, 2 * p * sizeof *par);
  par[3 * p + 5] = n / sw1; par[3 * p + 6] = n / sw0;
  sl_req_clear(&r);
  ps = VAL(&r, predict(x, term, p, 0, -1, 1));
  t = VAR(x, SL_RV_T); w = VAR(x, SL_RV_W); y = VAR(x, SL_RV_Y);
  int wt = VAL(&r, MUL(x, w, ipw_weight(E, x, ps, (int)p, 1, NULL)));
  int score = VAL(&r, MUL(x, w, SUB(x, t, ps)));
  int phi[2];
  for (int a = 0; a < 2; a++) {
    int in = a == 0 ? t : SUB(x, NUM(x, 1), t);
    int *zz = malloc(p * sizeof *zz);
    if (!zz) { rc = nomem(E); goto done; }
    for (size_t j = 0; j < p; j++) zz[j] = sl_term_node(x, term[j], -1);
    int c = sl_rx_linear(x, zz, p, (int)(p + 5 + (size_t)a * p));
    free(zz);
    int mean = MUL(x, MUL(x, wt, in), SUB(x, y, PAR(x, p + 3 + (size_t)a)));
    phi[a] = VAL(&r, MUL(x, ADD(x, mean, MUL(x, c, score)), PAR(x, 3 * p + 5 + (size_t)a)));
  }
  rc = finish(E, &r, phi, par, 3 * p + 7);
done:
  free(H); free(par); free(o);
  sl_req_free(&r);
  return rc;
}

/* Inverse probability weighting with normalised (Hajek) weights. */
/* The propensity model and each replicate's weight parameters: par gets
** nrep rows of gamma (1 + q), P(T = 1) when stabilised (else 1) and the
** cuts of truncated weights (else -inf and inf). */
static int ipw_setup(est *E, sl_term **term, double *par, int *ok) {
  size_t p = 1 + E->q, nr = E->nrep;
  double *gamma = NULL, *o = malloc(nr * 2 * sizeof *o);
  sl_req r;
  sl_req_init(&r);
  int rc = o ? propensity(E, term, &gamma, ok) : nomem(E);
  int stab = E->s->stabilized && E->s->estimand == SL_ATE;
  if (rc == SL_OK && stab) {   /* P(T = 1) of the sample */
    sl_rx *x = &r.rx;
    int b = sl_req_val(&r, VAR(x, SL_RV_BOOT));
    sl_req_agg(&r, SL_AGG_SUM, b, -1, -1);
    sl_req_agg(&r, SL_AGG_SUM, b, sl_req_val(&r, VAR(x, SL_RV_T)), -1);
    rc = sl_req_run(E->S, &r, NULL, 0, E->rep, nr, o, E->e);
  }
  for (size_t i = 0; rc == SL_OK && i < nr; i++) {
    double *pi = par + i * (p + 3);
    memcpy(pi, gamma + i * p, p * sizeof *par);
    pi[p] = stab ? o[2 * i + 1] / o[2 * i] : 1;
    pi[p + 1] = -INFINITY; pi[p + 2] = INFINITY;
  }
  if (rc == SL_OK) rc = cuts(E, *term, par, p);
  free(gamma); free(o);
  sl_req_free(&r);
  return rc;
}

static int ipw(est *E) {
  size_t p = 1 + E->q, nr = E->nrep;
  sl_term *term = NULL;
  double *o = malloc(nr * 12 * sizeof *o), *mu = malloc(nr * 2 * sizeof *mu);
  double *par = malloc(nr * (p + 3) * sizeof *par);
  int *ok = malloc(nr * sizeof *ok), rc = SL_OK;
  sl_req r;
  sl_req_init(&r);
  if (!o || !mu || !par || !ok) { rc = nomem(E); goto done; }
  if ((rc = ipw_setup(E, &term, par, ok))) goto done;
  sl_rx *x = &r.rx;
  int ps = sl_req_val(&r, predict(x, term, p, 0, -1, 1));
  int wt = sl_req_val(&r, MUL(x, weight(x), ipw_weight(E, x, sl_rx_ref(x, ps), (int)p, 1, NULL)));
  int t = sl_req_val(&r, VAR(x, SL_RV_T)), c = sl_req_val(&r, SUB(x, NUM(x, 1), VAR(x, SL_RV_T)));
  int y = sl_req_val(&r, VAR(x, SL_RV_Y));
  sl_req_agg(&r, SL_AGG_SUM, wt, t, y);
  sl_req_agg(&r, SL_AGG_SUM, wt, t, -1);
  sl_req_agg(&r, SL_AGG_SUM, wt, c, y);
  sl_req_agg(&r, SL_AGG_SUM, wt, c, -1);
  int whole = E->rep[0] == 0 && E->want_se;
  if (whole) diagnostics_aggs(&r, ps, wt);
  size_t na = r.nagg;
  if ((rc = sl_req_run(E->S, &r, par, p + 3, E->rep, nr, o, E->e))) goto done;
  double sw1 = o[1], sw0 = o[3];
  for (size_t i = 0; i < nr; i++) {
    const double *oi = o + i * na;
    mu[2 * i] = oi[0] / oi[1]; mu[2 * i + 1] = oi[2] / oi[3];
  }
  contrasts(E, mu, ok);
  if (whole) {
    diagnostics_take(&E->out[0], o + 4);
    rc = ipw_se(E, term, par, sw1, sw0);
  }
done:
  free(term); free(o); free(mu); free(par); free(ok);
  sl_req_free(&r);
  return rc;
}

size_t sl_sum_ipw_npar(size_t q) { return q + 4; }

int sl_sum_ipw_values(const sl_est_spec *s, const sl_summer *S, sl_req *r, double *par, int *ps,
                      int *w, char *warn, sl_error *e) {
  int rep0 = 0, ok;
  sl_point pt;
  est E = {s, S, 1, 0, S->q, &rep0, 1, 0, NULL, &pt, warn, e};
  sl_term *term = NULL;
  int rc = ipw_setup(&E, &term, par, &ok);
  if (rc == SL_OK) {
    sl_rx *x = &r->rx;
    size_t p = 1 + S->q;
    *ps = sl_req_val(r, predict(x, term, p, 0, -1, 1));
    *w = sl_req_val(r, ipw_weight(&E, x, sl_rx_ref(x, *ps), (int)p, 1, NULL));
    if (r->rx.bad) rc = nomem(&E);
  }
  free(term);
  return rc;
}

/* Augmented IPW, doubly robust: each row's terms a and b of the treated
** and the control mean (estimate.c, aipw), their means over the target,
** and the SE from the terms as influence values. */
static int aipw(est *E) {
  size_t pp = 1 + E->q, po, nr = E->nrep;
  int lg = E->bin_y, rc = SL_OK;
  sl_term *tp = NULL, *to = outcome_terms(E->q, E->q > 0, &po);
  double *gamma = NULL, *beta = malloc(nr * po * sizeof *beta), *o = malloc(nr * 12 * sizeof *o);
  double *mu = malloc(nr * 2 * sizeof *mu), *par = malloc(nr * (pp + po + 3) * sizeof *par);
  int *ok = malloc(nr * sizeof *ok), *ok2 = malloc(nr * sizeof *ok2);
  sl_req r;
  sl_req_init(&r);
  if (!to || !beta || !o || !mu || !par || !ok || !ok2) { rc = nomem(E); goto done; }
  if ((rc = propensity(E, &tp, &gamma, ok))) goto done;
  if ((rc = fit(E, to, po, SL_RV_Y, lg, E->S->onames, pp, "outcome model", beta, ok2))) goto done;
  size_t np = pp + po + 3;
  for (size_t i = 0; i < nr; i++) {
    ok[i] = ok[i] && ok2[i];
    memcpy(par + i * np, gamma + i * pp, pp * sizeof *par);
    memcpy(par + i * np + pp, beta + i * po, po * sizeof *par);
  }
  sl_rx *x = &r.rx;
  int ps = VAL(&r, predict(x, tp, pp, 0, -1, 1));
  int m1 = VAL(&r, predict(x, to, po, pp, NUM(x, 1), lg));
  int m0 = VAL(&r, predict(x, to, po, pp, NUM(x, 0), lg));
  int t = VAR(x, SL_RV_T), y = VAR(x, SL_RV_Y), one = NUM(x, 1), c = SUB(x, one, t), q = SUB(x, one, ps);
  int a, b;
  if (E->s->estimand == SL_ATE) {
    a = ADD(x, m1, DIV(x, MUL(x, t, SUB(x, y, m1)), ps));
    b = ADD(x, m0, DIV(x, MUL(x, c, SUB(x, y, m0)), q));
  } else if (E->s->estimand == SL_ATT) {
    a = MUL(x, t, y);
    b = ADD(x, MUL(x, t, m0), MUL(x, MUL(x, c, DIV(x, ps, q)), SUB(x, y, m0)));
  } else {
    a = ADD(x, MUL(x, c, m1), MUL(x, MUL(x, t, DIV(x, q, ps)), SUB(x, y, m1)));
    b = MUL(x, c, y);
  }
  int an = VAL(&r, a), bn = VAL(&r, b), in = VAL(&r, target(E, x));
  int W = sl_req_val(&r, weight(x));
  sl_req_agg(&r, SL_AGG_SUM, W, sl_req_val(&r, an), -1);
  sl_req_agg(&r, SL_AGG_SUM, W, sl_req_val(&r, bn), -1);
  sl_req_agg(&r, SL_AGG_SUM, W, sl_req_val(&r, in), -1);
  int whole = E->rep[0] == 0 && E->want_se;
  if (whole) {
    int wt = sl_req_val(&r, MUL(x, VAR(x, SL_RV_W), ADD(x, DIV(x, t, ps), DIV(x, c, q))));
    diagnostics_aggs(&r, x->node[ps].a, wt);
  }
  size_t na = r.nagg;
  if ((rc = sl_req_run(E->S, &r, par, np, E->rep, nr, o, E->e))) goto done;
  for (size_t i = 0; i < nr; i++) {
    const double *oi = o + i * na;
    if (!(oi[2] > 0)) ok[i] = 0;
    mu[2 * i] = oi[0] / oi[2]; mu[2 * i + 1] = oi[1] / oi[2];
  }
  contrasts(E, mu, ok);
  if (!whole) goto done;
  diagnostics_take(&E->out[0], o + 3);
  /* influence values: w (term - in mean) n / (the target's weight) */
  double win = o[2], n = (double)E->S->n;
  par[np - 3] = E->out[0].mu1; par[np - 2] = E->out[0].mu0; par[np - 1] = n / win;
  int w = VAR(x, SL_RV_W), phi[2];
  for (int k = 0; k < 2; k++)
    phi[k] = VAL(&r, MUL(x, MUL(x, w, SUB(x, k ? bn : an, MUL(x, in, PAR(x, np - 3 + (size_t)k)))),
                         PAR(x, np - 1)));
  r.nagg = 0;
  rc = finish(E, &r, phi, par, np);
done:
  free(tp); free(to); free(gamma); free(beta); free(o); free(mu); free(par); free(ok); free(ok2);
  sl_req_free(&r);
  return rc;
}

int sl_sum_point(const sl_est_spec *s, const sl_summer *S, int bin_t, int bin_y, const int *rep,
                 size_t nrep, int want_se, double *warm, sl_point *out, char *warn, sl_error *e) {
  est E = {s, S, bin_t, bin_y, S->q, rep, nrep, want_se && rep[0] == 0 && nrep == 1, warm, out,
           warn, e};
  memset(out, 0, nrep * sizeof *out);
  switch (s->method) {
    case SL_IPW: return ipw(&E);
    case SL_AIPW: return aipw(&E);
    default: return standardize(&E);
  }
}
