/*
** sumdiag.c: covariate balance and propensity overlap over sums
** (sumdiag.h), for a data frame and a lazy table alike.
**
** Balance: one request for each column's weighted sums by arm and its
** range, one for its extremes within each arm (a column constant within
** each arm is the treatment under another name), then the propensity model
** and its IPW weights (sumest.c) and one request for the sums centred at
** the first means, before and after weighting, so that no accuracy is lost
** to raw moments.
**
** Overlap: the propensity model, then one request for the arms' rows and
** extremes and the histogram's counts below its inner edges.  The
** quartiles need order statistics: a frame sorts (its percentiles), and
** sums give them exactly by counting: starting from the histogram's bin
** that holds the rank, each round counts an arm's rows below cuts inside
** an interval of the ordered doubles known to hold it, and keeps the part
** that holds it, until the interval holds at most two rows or one value,
** whose MIN and MAX are then the order statistics themselves.
*/
#include <math.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>
#include "estimate_internal.h"
#include "sumdiag.h"
#include "sumest.h"

#define MUL(x, a, b) sl_rx_op2(x, SL_RX_MUL, a, b)
#define ADD(x, a, b) sl_rx_op2(x, SL_RX_ADD, a, b)
#define SUB(x, a, b) sl_rx_op2(x, SL_RX_SUB, a, b)
#define LT(x, a, b) sl_rx_op2(x, SL_RX_LT, a, b)
#define NUM(x, v) sl_rx_num(x, v)
#define VAR(x, v) sl_rx_var(x, v)
#define PAR(x, j) sl_rx_par(x, (int)(j))
#define REF(x, v) sl_rx_ref(x, v)

/* Cuts a round of the order statistics' search shares among the
** intervals searched (each gets CUTS_MIN - 1 at least): more cuts, fewer
** rounds (each a pass over the rows), but more sums per row.  GUESSES of
** an interval's cuts go about the rank's place were the rows spread
** evenly, the rest evenly; an interval of SMALL rows or fewer gets only
** even ones. */
#define CUTS 48
#define CUTS_MIN 8
#define GUESSES 4
#define SMALL 24
/* The ranks searched at once: two per quartile and arm. */
#define RANKS 12
/* The even cuts shrink an interval's ordered doubles 4-fold a round at
** least, so that 64 / 2 + 2 rounds end any search; more means the place's
** sums are not repeatable. */
#define ROUNDS_MAX 40
/* The histogram's edges counted in one request. */
#define EDGES 200
/* A propensity this close (relatively) below a bin's edge or 0.01, or
** above 0.99, counts as on it: a propensity on an edge in exact
** arithmetic (a model of text covariates gives such, 1/2 or 3/4) then
** falls on the same side whichever place sums, whose last bits differ. */
#define SNAP 1e-12

static int nomem(sl_error *e) { return sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory"); }

/* ---- the place of the rows ---- */

typedef struct place {
  sl_summer S;
  void *h;
  sl_est_info I;
  size_t dropped;
  int db;
} place;

static void close_place(place *p) {
  if (p->db) sl_db_summer_close(p->h); else sl_est_summer_close(p->h);
}

/* The sums of s's complete rows; the diagnostics draw no replicates. */
static int open_place(const sl_est_spec *s0, place *p, sl_error *e) {
  sl_est_spec s = *s0;
  s.boot = 0;
  memset(p, 0, sizeof *p);
  p->db = s.table != NULL;
  int rc = p->db ? sl_db_summer_open(&s, &p->S, &p->h, &p->I, &p->dropped, e)
                 : sl_est_summer_open(&s, &p->S, &p->h, &p->I, &p->dropped, e);
  if (rc == SL_OK && !p->I.bin_t) {
    rc = sl_error_set(e, SL_EARG, 0, 0, "the propensity of treatment needs a 0/1 treatment, and "
                      "'%s' takes other values: use f:binarize", p->I.tname);
    close_place(p);
  }
  return rc;
}

static int run(const place *p, sl_req *r, const double *par, size_t npar, double **o, sl_error *e) {
  int rep0 = 0;
  free(*o);
  *o = malloc((r->nagg ? r->nagg : 1) * sizeof **o);
  if (!*o) return nomem(e);
  return sl_req_run(&p->S, r, par, npar, &rep0, 1, *o, e);
}

/* The rows' indicators of the controls and the treated, as values. */
static void arms(sl_req *r, int ind[2]) {
  sl_rx *x = &r->rx;
  ind[1] = sl_req_val(r, VAR(x, SL_RV_T));
  ind[0] = sl_req_val(r, SUB(x, NUM(x, 1), VAR(x, SL_RV_T)));
}

/* ---- balance ---- */

/* Mean and variance from the sums of w, w d and w d^2, d = x - centre. */
static void moments(double centre, double sw, double s1, double s2, double *mean, double *var) {
  double m = s1 / sw, v = s2 / sw - m * m;
  *mean = centre + m;
  *var = v < 0 ? 0 : v;
}

static double smd(const double mean[2], const double var[2]) {
  double pooled = sqrt((var[1] + var[0]) / 2);
  return pooled == 0 ? 0 : (mean[1] - mean[0]) / pooled;
}

static int balance(const sl_est_spec *s, const place *p, sl_balance *out, sl_error *e) {
  const sl_summer *S = &p->S;
  size_t q = S->q, np = sl_sum_ipw_npar(q);
  out->n = S->n;
  if (!(out->col = calloc(q ? q : 1, sizeof *out->col))) return nomem(e);
  out->q = q;
  for (size_t j = 0; j < q; j++)
    if (!(out->col[j].name = strdup(S->pnames[1 + j]))) return nomem(e);
  if (q == 0) return SL_OK;
  double *par = malloc((np + 2 * q) * sizeof *par), *range = malloc(2 * q * sizeof *range);
  double *o = NULL, sw[2];
  int rc = SL_OK, ind[2];
  sl_req r;
  sl_req_init(&r);
  sl_rx *x = &r.rx;
  if (!par || !range) { rc = nomem(e); goto done; }
  /* 1: the sums of w and w x by arm, and x's range */
  arms(&r, ind);
  int w = sl_req_val(&r, VAR(x, SL_RV_W)), wa[2];
  for (int a = 0; a < 2; a++) {
    wa[a] = sl_req_val(&r, MUL(x, REF(x, w), REF(x, ind[a])));
    sl_req_agg(&r, SL_AGG_SUM, wa[a], -1, -1);
  }
  for (size_t j = 0; j < q; j++) {
    int c = sl_req_val(&r, VAR(x, SL_RV_C0 + (int)j));
    sl_req_agg(&r, SL_AGG_SUM, wa[0], c, -1);
    sl_req_agg(&r, SL_AGG_SUM, wa[1], c, -1);
    sl_req_agg(&r, SL_AGG_MIN, c, -1, -1);
    sl_req_agg(&r, SL_AGG_MAX, c, -1, -1);
  }
  if ((rc = run(p, &r, NULL, 0, &o, e))) goto done;
  sw[0] = o[0]; sw[1] = o[1];
  for (size_t j = 0; j < q; j++) {
    const double *oj = o + 2 + 4 * j;
    sl_balance_col *c = &out->col[j];
    for (int a = 0; a < 2; a++) c->mean[0][a] = oj[a] / sw[a];
    range[2 * j] = oj[2]; range[2 * j + 1] = oj[3];
  }
  /* 2: x's extremes within each arm: x in the arm, else the other end of
  ** x's range (a * x + b * end is x exactly when a = 1 and b = 0) */
  sl_req_clear(&r);
  arms(&r, ind);
  for (size_t j = 0; j < q; j++) {
    int c = sl_req_val(&r, VAR(x, SL_RV_C0 + (int)j));
    for (int a = 0; a < 2; a++)
      for (int top = 1; top >= 0; top--) {   /* MIN with x's top beyond the arm, MAX with its bottom */
        int in = MUL(x, REF(x, ind[a]), REF(x, c)), end = MUL(x, REF(x, ind[1 - a]), PAR(x, 2 * j + top));
        sl_req_agg(&r, top ? SL_AGG_MIN : SL_AGG_MAX, sl_req_val(&r, ADD(x, in, end)), -1, -1);
      }
  }
  if ((rc = run(p, &r, range, 2 * q, &o, e))) goto done;
  for (size_t j = 0; j < q; j++) {
    const double *oj = o + 4 * j;   /* min0, max0, min1, max1 */
    if (oj[0] == oj[1] && oj[2] == oj[3] && oj[0] != oj[2]) {
      rc = sl_error_set(e, SL_EARG, 0, 0, "the covariate '%s' takes one value among the treated and "
                        "another among the controls: it is the treatment '%s' under another name, "
                        "and its SMD is not defined", out->col[j].name, p->I.tname);
      goto done;
    }
  }
  /* 3: the IPW weights, then the sums centred at the first means (the
  ** parameters after the weights') */
  sl_req_clear(&r);
  int ps, wt;
  if ((rc = sl_sum_ipw_values(s, S, &r, par, &ps, &wt, out->warnings, e))) goto done;
  for (size_t j = 0; j < q; j++)
    for (int a = 0; a < 2; a++) {
      double m = out->col[j].mean[0][a];
      par[np + 2 * j + a] = isfinite(m) ? m : range[2 * j];
    }
  arms(&r, ind);
  w = sl_req_val(&r, VAR(x, SL_RV_W));
  int before[2], after[2];
  for (int a = 0; a < 2; a++) {
    before[a] = sl_req_val(&r, MUL(x, REF(x, w), REF(x, ind[a])));
    after[a] = sl_req_val(&r, MUL(x, REF(x, before[a]), REF(x, wt)));
    sl_req_agg(&r, SL_AGG_SUM, after[a], -1, -1);
  }
  for (size_t j = 0; j < q; j++)
    for (int a = 0; a < 2; a++) {
      int d = sl_req_val(&r, SUB(x, VAR(x, SL_RV_C0 + (int)j), PAR(x, np + 2 * j + a)));
      sl_req_agg(&r, SL_AGG_SUM, before[a], d, -1);
      sl_req_agg(&r, SL_AGG_SUM, before[a], d, d);
      sl_req_agg(&r, SL_AGG_SUM, after[a], d, -1);
      sl_req_agg(&r, SL_AGG_SUM, after[a], d, d);
    }
  if ((rc = run(p, &r, par, np + 2 * q, &o, e))) goto done;
  for (size_t j = 0; j < q; j++) {
    sl_balance_col *c = &out->col[j];
    if (range[2 * j] == range[2 * j + 1]) {   /* one value in every row: balanced */
      for (int b = 0; b < 2; b++)
        for (int a = 0; a < 2; a++) { c->mean[b][a] = range[2 * j]; c->var[b][a] = 0; }
      c->smd[0] = c->smd[1] = 0;
      continue;
    }
    for (int a = 0; a < 2; a++) {
      const double *oa = o + 2 + 8 * j + 4 * a;
      double centre = par[np + 2 * j + a];
      moments(centre, sw[a], oa[0], oa[1], &c->mean[0][a], &c->var[0][a]);
      moments(centre, o[a], oa[2], oa[3], &c->mean[1][a], &c->var[1][a]);
    }
    for (int b = 0; b < 2; b++) c->smd[b] = smd(c->mean[b], c->var[b]);
  }
done:
  free(par); free(range); free(o);
  sl_req_free(&r);
  return rc;
}

int sl_diag_balance(const sl_est_spec *s, sl_balance *out, sl_error *e) {
  memset(out, 0, sizeof *out);
  place p;
  int rc = open_place(s, &p, e);
  if (rc) return rc;
  out->dropped = p.dropped;
  rc = balance(s, &p, out, e);
  close_place(&p);
  if (rc) sl_balance_free(out);
  return rc;
}

void sl_balance_free(sl_balance *b) {
  for (size_t j = 0; b->col && j < b->q; j++) free(b->col[j].name);
  free(b->col);
  memset(b, 0, sizeof *b);
}

/* ---- overlap ---- */

/* Doubles as unsigned integers in the same order, and back. */
static uint64_t key_of(double v) {
  uint64_t u;
  memcpy(&u, &v, sizeof u);
  return u >> 63 ? ~u : u | UINT64_C(1) << 63;
}
static double value_of(uint64_t k) {
  uint64_t u = k >> 63 ? k & ~(UINT64_C(1) << 63) : ~k;
  double v;
  memcpy(&v, &u, sizeof v);
  return v;
}

/* A rank of an arm's propensities being searched: its value lies in
** [lo, hi), below which lie `below` and `upto` of the arm's rows. */
typedef struct rank {
  int arm, done;
  double k, lo, hi, below, upto, x;
} rank;

/* An interval searched in a round (ranks in the same one share it): the
** aggregates of its MIN and MAX and of the counts below its cuts. */
typedef struct group {
  int arm;
  double lo, hi, below, upto, kmin, kmax;
  size_t ncut, agg;
  double cut[CUTS];
} group;

static int by_value(const void *a, const void *b) {
  double x = *(const double *)a, y = *(const double *)b;
  return (x > y) - (x < y);
}

/* G's cuts, sorted and inside (lo, hi): m - 1 of them, or fewer where the
** doubles run out. */
static void place_cuts(group *G, size_t m) {
  size_t r = (size_t)(G->upto - G->below), guesses = r > SMALL ? GUESSES : 0, n = 0;
  uint64_t even = m - guesses, klo = key_of(G->lo), span = key_of(G->hi) - klo;
  double cut[CUTS + GUESSES];
  for (uint64_t c = 1; c < even; c++) cut[n++] = value_of(klo + span / even * c + span % even * c / even);
  if (guesses) {   /* -1, -1/2, 1/2 and 1 standard deviation of the rank's place */
    static const double z[GUESSES] = {-1, -0.5, 0.5, 1};
    double w = G->hi - G->lo, f = ((G->kmin + G->kmax) / 2 - G->below - 0.5) / (double)r;
    double at = G->lo + f * w, sd = w * sqrt(fmax(f * (1 - f), 1 / (double)r) / (double)r);
    for (size_t j = 0; j < GUESSES; j++) cut[n++] = at + sd * z[j];
  }
  qsort(cut, n, sizeof *cut, by_value);
  G->ncut = 0;
  for (size_t i = 0; i < n; i++)
    if (cut[i] > G->lo && cut[i] < G->hi && (G->ncut == 0 || cut[i] > G->cut[G->ncut - 1]))
      G->cut[G->ncut++] = cut[i];
}

/* A request rewound to its first values (the propensity model's). */
typedef struct mark { size_t n, nval, nagg; } mark;
static mark mark_of(const sl_req *r) { return (mark){r->rx.n, r->rx.nval, r->nagg}; }
static void rewind_to(sl_req *r, mark m) { r->rx.n = m.n; r->rx.nval = m.nval; r->nagg = m.nagg; }

/* The propensities ps, each arm's moved beyond the other's, psa[a]: ps in
** arm a, ps + 2 in the other (a * x + b * 2 is x when a = 1 and b = 0), so
** that "psa[a] < c" counts arm a's rows below c <= 1. */
typedef struct props { int ps, ind[2], psa[2]; } props;

/* One round: each open rank's interval, its MIN and MAX over the arm's
** rows inside (ps plus 2 outside it, or minus 2), and the arm's rows
** below each cut. */
static int round_of(const place *p, sl_req *r, mark base, const props *v, double *par,
                    size_t np, rank *rk, size_t nr, double **o, sl_error *e) {
  group g[RANKS];
  size_t ng = 0, ncutting = 0, gi[RANKS] = {0};
  for (size_t i = 0; i < nr; i++) {
    if (rk[i].done) continue;
    size_t k = 0;
    while (k < ng && !(g[k].arm == rk[i].arm && g[k].lo == rk[i].lo && g[k].hi == rk[i].hi)) k++;
    if (k == ng) {
      g[ng++] = (group){rk[i].arm, rk[i].lo, rk[i].hi, rk[i].below, rk[i].upto, rk[i].k, rk[i].k,
                        0, 0, {0}};
      ncutting += rk[i].upto - rk[i].below > 2;
    }
    g[k].kmin = fmin(g[k].kmin, rk[i].k);
    g[k].kmax = fmax(g[k].kmax, rk[i].k);
    gi[i] = k;
  }
  size_t m = ncutting ? CUTS / ncutting : 0;
  if (m < CUTS_MIN) m = CUTS_MIN;
  rewind_to(r, base);
  sl_rx *x = &r->rx;
  size_t npar = np;
  for (size_t k = 0; k < ng; k++) {
    group *G = &g[k];
    size_t plo = npar++, phi = npar++;
    par[plo] = G->lo; par[phi] = G->hi;
    int psa = v->psa[G->arm];
    int in = sl_req_val(r, SUB(x, LT(x, REF(x, psa), PAR(x, phi)), LT(x, REF(x, psa), PAR(x, plo))));
    int out = SUB(x, NUM(x, 1), REF(x, in));
    G->agg = r->nagg;
    sl_req_agg(r, SL_AGG_MIN, sl_req_val(r, ADD(x, REF(x, v->ps), MUL(x, out, NUM(x, 2)))), -1, -1);
    out = SUB(x, NUM(x, 1), REF(x, in));
    sl_req_agg(r, SL_AGG_MAX, sl_req_val(r, SUB(x, REF(x, v->ps), MUL(x, out, NUM(x, 2)))), -1, -1);
    if (G->upto - G->below <= 2) continue;
    place_cuts(G, m);
    for (size_t c = 0; c < G->ncut; c++) {
      par[npar] = G->cut[c];
      sl_req_agg(r, SL_AGG_SUM, sl_req_val(r, LT(x, REF(x, psa), PAR(x, npar))), -1, -1);
      npar++;
    }
  }
  int rc = run(p, r, par, npar, o, e);
  for (size_t i = 0; rc == SL_OK && i < nr; i++) {
    if (rk[i].done) continue;
    rank *R = &rk[i];
    const group *G = &g[gi[i]];
    double mn = (*o)[G->agg], mx = (*o)[G->agg + 1];
    if (!(mn >= 0 && mn <= 1 && mx >= 0 && mx <= 1 && mn <= mx))
      return sl_error_set(e, SL_EARG, 0, 0, "the propensities' order statistics: the rows counted "
                          "below a value changed between two queries of the same rows");
    if (mn == mx || R->upto - R->below <= 2) {
      R->x = R->k == R->below + 1 ? mn : mx;
      R->done = 1;
      continue;
    }
    /* the part between cuts that holds the rank */
    double lo = G->lo, below = G->below, hi = G->hi, upto = G->upto;
    for (size_t c = 0; c < G->ncut; c++) {
      double n = (*o)[G->agg + 2 + c];
      if (n < R->k) { lo = G->cut[c]; below = n; }
      else { hi = G->cut[c]; upto = n; break; }
    }
    R->lo = lo; R->below = below; R->hi = hi; R->upto = upto;
  }
  return rc;
}

/* The ranks' values by rounds of counting, from the arm's extremes and
** the histogram's counts below the edges e[1 .. bins) (cum, bins + 1
** numbers an arm). */
static int order_stats(const place *p, sl_req *r, mark base, const props *v, double *par,
                       size_t np, const sl_overlap *ov, const double *e_, const double *cum,
                       rank *rk, size_t nr, double **o, sl_error *e) {
  size_t open = 0, bins = ov->bins;
  for (size_t i = 0; i < nr; i++) {
    rank *R = &rk[i];
    int a = R->arm;
    R->done = R->k <= 1 || R->k >= ov->count[a] || ov->min[a] == ov->max[a];
    R->x = R->k >= ov->count[a] ? ov->max[a] : ov->min[a];
    R->lo = ov->min[a]; R->hi = nextafter(ov->max[a], INFINITY);
    R->below = 0; R->upto = ov->count[a];
    for (size_t k = 1; k < bins; k++) {   /* the histogram's bin that holds it */
      double n = cum[(bins + 1) * (size_t)a + k];
      if (!(e_[k] > R->lo && e_[k] < R->hi)) continue;
      if (n < R->k) { R->lo = e_[k]; R->below = n; }
      else { R->hi = e_[k]; R->upto = n; break; }
    }
    open += !R->done;
  }
  for (int round = 0; open; round++) {
    if (round == ROUNDS_MAX)
      return sl_error_set(e, SL_EARG, 0, 0, "the propensities' order statistics did not settle in "
                          "%d rounds: the rows' sums are not repeatable", ROUNDS_MAX);
    int rc = round_of(p, r, base, v, par, np, rk, nr, o, e);
    if (rc) return rc;
    open = 0;
    for (size_t i = 0; i < nr; i++) open += !rk[i].done;
  }
  return SL_OK;
}

/* The quartiles of each arm by linear interpolation between order
** statistics lo + 1 and lo + 2 at h = (n - 1) p, lo = floor(h) (the
** largest when lo + 1 reaches n).  A place that sorts (a frame) gives
** them as percentiles of psa[a], whose arm a holds the smallest values;
** otherwise each order statistic is found by counting. */
static int quartiles(const place *p, sl_req *r, mark base, const props *v, double *par,
                     size_t np, sl_overlap *ov, const double *edge, const double *cum,
                     double **o, sl_error *e) {
  static const double pct[3] = {0.25, 0.5, 0.75};
  double n = ov->count[0] + ov->count[1];
  if (p->S.quantiles) {
    for (int a = 0; a < 2; a++) {
      double at[3], q[3];
      for (int j = 0; j < 3; j++) at[j] = n > 1 ? 100 * (ov->count[a] - 1) * pct[j] / (n - 1) : 0;
      rewind_to(r, base);
      int rc = p->S.quantiles(p->S.ctx, &r->rx, v->psa[a], par, at, 3, q, e);
      if (rc) return rc;
      ov->q1[a] = q[0]; ov->median[a] = q[1]; ov->q3[a] = q[2];
    }
    return SL_OK;
  }
  rank rk[RANKS];
  double h[6];
  size_t nr = 0;
  for (int a = 0; a < 2; a++)
    for (int j = 0; j < 3; j++) {
      h[3 * a + j] = (ov->count[a] - 1) * pct[j];
      double lo = floor(h[3 * a + j]);
      rk[nr++] = (rank){a, 0, lo + 1, 0, 0, 0, 0, 0};
      rk[nr++] = (rank){a, 0, lo + 2, 0, 0, 0, 0, 0};
    }
  int rc = order_stats(p, r, base, v, par, np, ov, edge, cum, rk, nr, o, e);
  for (int a = 0; rc == SL_OK && a < 2; a++) {
    double *q[3] = {&ov->q1[a], &ov->median[a], &ov->q3[a]};
    for (int j = 0; j < 3; j++) {
      const rank *r1 = &rk[6 * a + 2 * j], *r2 = r1 + 1;
      double hh = h[3 * a + j], lo = r1->k - 1;
      *q[j] = r1->k >= ov->count[a] ? ov->max[a] : r1->x + (hh - lo) * (r2->x - r1->x);
    }
  }
  return rc;
}

static int overlap(const sl_est_spec *s, const place *p, size_t bins, sl_overlap *out, sl_error *e) {
  const sl_summer *S = &p->S;
  size_t np = sl_sum_ipw_npar(S->q);
  out->n = S->n;
  out->bins = bins;
  out->hist = calloc(2 * bins, sizeof *out->hist);
  double *par = malloc((np + RANKS * (2 + CUTS)) * sizeof *par);
  double *cum = calloc(2 * (bins + 1), sizeof *cum), *edge = malloc((bins + 1) * sizeof *edge);
  double *o = NULL;
  sl_req r;
  sl_req_init(&r);
  sl_rx *x = &r.rx;
  props v;
  int rc = SL_OK, wt;
  if (!out->hist || !par || !cum || !edge) { rc = nomem(e); goto done; }
  if ((rc = sl_sum_ipw_values(s, S, &r, par, &v.ps, &wt, out->warnings, e))) goto done;
  if (wt == (int)r.rx.nval - 1 && v.ps < wt) r.rx.nval--;   /* the weight is not needed */
  arms(&r, v.ind);
  for (int a = 0; a < 2; a++)
    v.psa[a] = sl_req_val(&r, ADD(x, REF(x, v.ps), MUL(x, REF(x, v.ind[1 - a]), NUM(x, 2))));
  mark base = mark_of(&r);
  /* the arms' rows and extremes, the rows outside [0.01, 0.99], and the
  ** rows below each inner edge of the bins and of them the treated, EDGES
  ** edges a request: edge k is k / bins, less SNAP */
  for (size_t k = 1; k < bins; k++) edge[k] = (double)k / (double)bins * (1 - SNAP);
  size_t first = 1;
  do {
    size_t last = first + EDGES - 1 < bins - 1 ? first + EDGES - 1 : bins - 1;
    rewind_to(&r, base);
    if (first == 1) {
      int ext = sl_req_val(&r, ADD(x, LT(x, REF(x, v.ps), NUM(x, 0.01 * (1 - SNAP))),
                                   LT(x, NUM(x, 0.99 * (1 + SNAP)), REF(x, v.ps))));
      sl_req_agg(&r, SL_AGG_SUM, v.ind[0], -1, -1);
      sl_req_agg(&r, SL_AGG_SUM, v.ind[1], -1, -1);
      sl_req_agg(&r, SL_AGG_SUM, ext, -1, -1);
      for (int a = 0; a < 2; a++) {
        sl_req_agg(&r, SL_AGG_MIN, v.psa[a], -1, -1);
        int other = MUL(x, REF(x, v.ind[1 - a]), NUM(x, 2));
        sl_req_agg(&r, SL_AGG_MAX, sl_req_val(&r, SUB(x, REF(x, v.ps), other)), -1, -1);
      }
    }
    size_t head = r.nagg;
    for (size_t k = first; k <= last; k++) {
      int below = sl_req_val(&r, LT(x, REF(x, v.ps), NUM(x, edge[k])));
      sl_req_agg(&r, SL_AGG_SUM, below, -1, -1);
      sl_req_agg(&r, SL_AGG_SUM, below, v.ind[1], -1);
    }
    if ((rc = run(p, &r, par, np, &o, e))) goto done;
    if (first == 1) {
      for (int a = 0; a < 2; a++) {
        out->count[a] = o[a];
        out->min[a] = o[3 + 2 * a];
        out->max[a] = o[4 + 2 * a];
      }
      out->extreme = (size_t)o[2];
    }
    for (size_t k = first; k <= last; k++) {
      const double *ok = o + head + 2 * (k - first);
      cum[bins + 1 + k] = ok[1];
      cum[k] = ok[0] - ok[1];
    }
    first += EDGES;
  } while (first < bins);
  for (int a = 0; a < 2; a++) cum[(bins + 1) * (size_t)a + bins] = out->count[a];
  for (size_t k = 0; k < bins; k++)
    for (int a = 0; a < 2; a++) {
      const double *c = cum + (bins + 1) * (size_t)a;
      out->hist[2 * k + a] = c[k + 1] - c[k];
    }
  rc = quartiles(p, &r, base, &v, par, np, out, edge, cum, &o, e);
done:
  free(par); free(cum); free(edge); free(o);
  sl_req_free(&r);
  return rc;
}

int sl_diag_overlap(const sl_est_spec *s, size_t bins, sl_overlap *out, sl_error *e) {
  memset(out, 0, sizeof *out);
  if (bins < 1 || bins > SL_OVERLAP_BINS_MAX)
    return sl_error_set(e, SL_EARG, 0, 0, "bins = %zu must be a whole number from 1 to %d", bins,
                        SL_OVERLAP_BINS_MAX);
  place p;
  int rc = open_place(s, &p, e);
  if (rc) return rc;
  out->dropped = p.dropped;
  rc = overlap(s, &p, bins, out, e);
  close_place(&p);
  if (rc) sl_overlap_free(out);
  return rc;
}

void sl_overlap_free(sl_overlap *o) {
  free(o->hist);
  memset(o, 0, sizeof *o);
}
