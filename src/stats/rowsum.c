/*
** rowsum.c: row expressions, and a data frame's answer to a request for
** sums (rowsum.h): each row's values evaluated in C, then the aggregates.
*/
#include <math.h>
#include <stdlib.h>
#include <string.h>
#include "estimate_internal.h"
#include "rowsum.h"

void sl_rx_init(sl_rx *x) { memset(x, 0, sizeof *x); }
void sl_rx_free(sl_rx *x) { free(x->node); free(x->root); sl_rx_init(x); }
void sl_rx_clear(sl_rx *x) { x->n = x->nval = 0; x->bad = 0; }

/* Binary operators need both operands, unary ones the first. */
static int add(sl_rx *x, int op, int a, int b, double v) {
  int two = (op >= SL_RX_ADD && op <= SL_RX_DIV) || op == SL_RX_LT;
  if (x->bad || (op >= SL_RX_ADD && (a < 0 || (two && b < 0)))) {
    x->bad = 1;
    return -1;
  }
  if (x->n == x->cap) {
    size_t cap = x->cap ? 2 * x->cap : 64;
    sl_rx_node *nn = realloc(x->node, cap * sizeof *nn);
    if (!nn) { x->bad = 1; return -1; }
    x->node = nn; x->cap = cap;
  }
  x->node[x->n] = (sl_rx_node){op, a, b, v};
  return (int)x->n++;
}

int sl_rx_num(sl_rx *x, double v) { return add(x, SL_RX_NUM, 0, 0, v); }
int sl_rx_var(sl_rx *x, int var) { return add(x, SL_RX_VAR, var, 0, 0); }
int sl_rx_par(sl_rx *x, int j) { return add(x, SL_RX_PAR, j, 0, 0); }
/* Whether node k is the number v. */
static int is_num(const sl_rx *x, int k, double v) {
  return k >= 0 && x->node[k].op == SL_RX_NUM && x->node[k].x == v;
}

/* Constants folded (x * 1, x * 0, x + 0, x - 0, number op number), so
** that setting the treatment to 1 or 0 leaves no dead terms for the
** database to compute row by row.  The values are finite. */
int sl_rx_op2(sl_rx *x, int op, int a, int b) {
  if (!x->bad && a >= 0 && b >= 0 && op >= SL_RX_ADD && op <= SL_RX_DIV) {
    if (x->node[a].op == SL_RX_NUM && x->node[b].op == SL_RX_NUM) {
      double u = x->node[a].x, v = x->node[b].x;
      return sl_rx_num(x, op == SL_RX_ADD ? u + v : op == SL_RX_SUB ? u - v
                          : op == SL_RX_MUL ? u * v : u / v);
    }
    if (op == SL_RX_MUL && (is_num(x, a, 0) || is_num(x, b, 0))) return sl_rx_num(x, 0);
    if ((op == SL_RX_MUL && is_num(x, a, 1)) || (op == SL_RX_ADD && is_num(x, a, 0))) return b;
    if ((op == SL_RX_MUL || op == SL_RX_DIV) && is_num(x, b, 1)) return a;
    if ((op == SL_RX_ADD || op == SL_RX_SUB) && is_num(x, b, 0)) return a;
  }
  return add(x, op, a, b, 0);
}
int sl_rx_op1(sl_rx *x, int op, int a) { return add(x, op, a, -1, 0); }

int sl_rx_value(sl_rx *x, int node) {
  if (x->bad || node < 0) { x->bad = 1; return -1; }
  if (x->nval == x->valcap) {
    size_t cap = x->valcap ? 2 * x->valcap : 32;
    int *nr = realloc(x->root, cap * sizeof *nr);
    if (!nr) { x->bad = 1; return -1; }
    x->root = nr; x->valcap = cap;
  }
  x->root[x->nval] = node;
  return (int)x->nval++;
}

int sl_rx_ref(sl_rx *x, int v) { return v < 0 ? (x->bad = 1, -1) : add(x, SL_RX_VAL, v, 0, 0); }

int sl_rx_linear(sl_rx *x, const int *term, size_t p, int first) {
  int s = -1;
  for (size_t j = 0; j < p; j++) {
    int t = sl_rx_op2(x, SL_RX_MUL, sl_rx_par(x, first + (int)j), term[j]);
    s = s < 0 ? t : sl_rx_op2(x, SL_RX_ADD, s, t);
  }
  return s < 0 ? sl_rx_num(x, 0) : s;
}

/* ---- a frame's answer ---- */

typedef sl_frame_rows frame_ctx;

/* Cut as in SQL (rowsum_sql.c): beyond 700 the result is 0 or 1 (or a). */
static double expit(double a) {
  if (a > 700) return 1;
  if (a < -700) return 0;
  return a >= 0 ? 1 / (1 + exp(-a)) : exp(a) / (1 + exp(a));
}

static double log1pexp(double a) {
  if (a > 700) return a;
  if (a < -700) return 0;
  return a >= 0 ? a + log1p(exp(-a)) : log1p(exp(a));
}

/* Rows evaluated a block at a time: each node's values for the block in
** a buffer (children come before their parents in the node list), so the
** dispatch on a node's kind is paid once per block, not once per row.  The
** sums add the rows in order, as a row at a time would. */
#define BLOCK 256

/* The nodes the values need. */
static unsigned char *reachable(const sl_rx *x) {
  unsigned char *need = calloc(x->n + 1, 1);
  if (!need) return NULL;
  for (size_t v = 0; v < x->nval; v++) need[x->root[v]] = 1;
  for (size_t k = x->n; k-- > 0;) {
    if (!need[k]) continue;
    const sl_rx_node *d = &x->node[k];
    if (d->op == SL_RX_VAL) need[x->root[d->a]] = 1;
    else if (d->op >= SL_RX_ADD) { need[d->a] = 1; if (d->b >= 0) need[d->b] = 1; }
  }
  return need;
}

/* Node k's values for rows [0, nb) of the block into buf[k] (or a pointer
** to the buffer holding them). */
static void eval_block(const sl_rx *x, size_t k, size_t nb, double **col, const double *par,
                       double **buf, double *own) {
  const sl_rx_node *d = &x->node[k];
  double *o = own;
  buf[k] = o;
  switch (d->op) {
    case SL_RX_NUM: for (size_t i = 0; i < nb; i++) o[i] = d->x; return;
    case SL_RX_PAR: for (size_t i = 0; i < nb; i++) o[i] = par[d->a]; return;
    case SL_RX_VAR: buf[k] = col[d->a]; return;
    case SL_RX_VAL: buf[k] = buf[x->root[d->a]]; return;
    default: break;
  }
  const double *a = buf[d->a], *b = d->b >= 0 ? buf[d->b] : NULL;
  switch (d->op) {
    case SL_RX_ADD: for (size_t i = 0; i < nb; i++) o[i] = a[i] + b[i]; break;
    case SL_RX_SUB: for (size_t i = 0; i < nb; i++) o[i] = a[i] - b[i]; break;
    case SL_RX_MUL: for (size_t i = 0; i < nb; i++) o[i] = a[i] * b[i]; break;
    case SL_RX_DIV: for (size_t i = 0; i < nb; i++) o[i] = a[i] / b[i]; break;
    case SL_RX_EXPIT: for (size_t i = 0; i < nb; i++) o[i] = expit(a[i]); break;
    case SL_RX_LOG1PEXP: for (size_t i = 0; i < nb; i++) o[i] = log1pexp(a[i]); break;
    default: for (size_t i = 0; i < nb; i++) o[i] = a[i] < b[i]; break;   /* SL_RX_LT */
  }
}

/* Called with each block of rows in order: buf[x->root[v]] holds value
** v for its nb rows, the first of which is sample row k0. */
typedef void (*block_fn)(void *ctx, const sl_rx *x, double **buf, size_t k0, size_t nb);

/* Walk the sample's rows a block at a time, every value evaluated. */
static int each_block(const frame_ctx *c, const sl_rx *x, const double *par, block_fn fn,
                      void *ctx, sl_error *e) {
  const sl_prep *P = c->P;
  size_t nvar = SL_RV_C0 + P->q;
  double *store = malloc((x->n + nvar + 1) * BLOCK * sizeof *store);
  double **buf = malloc((x->n + 1) * sizeof *buf), **col = malloc(nvar * sizeof *col);
  unsigned char *need = reachable(x);
  if (!store || !buf || !col || !need) {
    free(store); free(buf); free(col); free(need);
    return sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
  }
  for (size_t v = 0; v < nvar; v++) col[v] = store + (x->n + v) * BLOCK;
  for (size_t i = 0; i < BLOCK; i++) col[SL_RV_BOOT][i] = 1;
  for (size_t k0 = 0; k0 < c->n; k0 += BLOCK) {
    size_t nb = c->n - k0 < BLOCK ? c->n - k0 : BLOCK;
    for (size_t i = 0; i < nb; i++) {   /* the block's variables */
      size_t r = c->ix[k0 + i];
      col[SL_RV_T][i] = P->t[r];
      col[SL_RV_Y][i] = P->y[r];
      col[SL_RV_W][i] = P->w ? P->w[r] : 1;
      for (size_t j = 0; j < P->q; j++) col[SL_RV_C0 + j][i] = P->C[r * P->q + j];
    }
    for (size_t k = 0; k < x->n; k++)
      if (need[k]) eval_block(x, k, nb, col, par, buf, store + k * BLOCK);
    fn(ctx, x, buf, k0, nb);
  }
  free(store); free(buf); free(col); free(need);
  return SL_OK;
}

/* The aggregates, added row by row in order. */
typedef struct agg_ctx { const sl_sum_req *q; double *out; } agg_ctx;
static void add_aggs(void *ctx, const sl_rx *x, double **buf, size_t k0, size_t nb) {
  const agg_ctx *a = ctx;
  (void)k0;
  for (size_t j = 0; j < a->q->nagg; j++) {
    const sl_agg *g = &a->q->agg[j];
    const double *u = buf[x->root[g->a]];
    const double *v = g->b >= 0 ? buf[x->root[g->b]] : NULL, *w = g->c >= 0 ? buf[x->root[g->c]] : NULL;
    double acc = a->out[j];
    if (g->kind == SL_AGG_MIN) { for (size_t i = 0; i < nb; i++) if (u[i] < acc) acc = u[i]; }
    else if (g->kind == SL_AGG_MAX) { for (size_t i = 0; i < nb; i++) if (u[i] > acc) acc = u[i]; }
    else if (w) for (size_t i = 0; i < nb; i++) acc += u[i] * v[i] * w[i];
    else if (v) for (size_t i = 0; i < nb; i++) acc += u[i] * v[i];
    else for (size_t i = 0; i < nb; i++) acc += u[i];
    a->out[j] = acc;
  }
}

static int frame_sums(void *ctx, const sl_sum_req *q, double *out, sl_error *e) {
  if (q->nrep != 1 || q->rep[0] != 0)
    return sl_error_set(e, SL_EARG, 0, 0, "a data frame sums the whole sample only");
  for (size_t a = 0; a < q->nagg; a++)
    out[a] = q->agg[a].kind == SL_AGG_MIN ? INFINITY : q->agg[a].kind == SL_AGG_MAX ? -INFINITY : 0;
  agg_ctx a = {q, out};
  return each_block(ctx, q->rx, q->par, add_aggs, &a, e);
}

/* Value v of each row into its cluster's sum, or into all[k]. */
typedef struct take_ctx { const frame_ctx *c; int v; double *sum; } take_ctx;
static void add_cluster(void *ctx, const sl_rx *x, double **buf, size_t k0, size_t nb) {
  const take_ctx *t = ctx;
  const double *u = buf[x->root[t->v]];
  for (size_t i = 0; i < nb; i++) t->sum[t->c->P->cluster[t->c->ix[k0 + i]]] += u[i];
}
static void copy_value(void *ctx, const sl_rx *x, double **buf, size_t k0, size_t nb) {
  const take_ctx *t = ctx;
  memcpy(t->sum + k0, buf[x->root[t->v]], nb * sizeof *t->sum);
}

static int frame_cluster_ss(void *ctx, const sl_rx *x, int v, const double *par, size_t npar,
                            double *ss, size_t *groups, sl_error *e) {
  const frame_ctx *c = ctx;
  size_t G = c->P->nclusters;
  (void)npar;
  take_ctx t = {c, v, calloc(G ? G : 1, sizeof *t.sum)};
  if (!t.sum) return sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
  int rc = each_block(c, x, par, add_cluster, &t, e);
  *ss = 0;
  for (size_t g = 0; g < G; g++) *ss += t.sum[g] * t.sum[g];
  *groups = G;
  free(t.sum);
  return rc;
}

static int frame_quantiles(void *ctx, const sl_rx *x, int v, const double *par, const double *pct,
                           size_t k, double *out, sl_error *e) {
  const frame_ctx *c = ctx;
  take_ctx t = {c, v, malloc((c->n ? c->n : 1) * sizeof *t.sum)};
  if (!t.sum) return sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
  int rc = each_block(c, x, par, copy_value, &t, e);
  for (size_t j = 0; rc == SL_OK && j < k; j++) out[j] = sl_est_quantile(t.sum, c->n, pct[j]);
  free(t.sum);
  return rc;
}

void sl_summer_frame(sl_summer *s, sl_frame_rows *rows) {
  const sl_prep *P = rows->P;
  size_t n = rows->n;
  memset(s, 0, sizeof *s);
  s->ctx = rows;
  s->sums = frame_sums;
  s->cluster_ss = frame_cluster_ss;
  s->quantiles = frame_quantiles;
  s->q = P->q;
  s->onames = P->onames;
  s->pnames = P->pnames;
  s->n = n;
  s->has_cluster = P->cluster != NULL;
}
