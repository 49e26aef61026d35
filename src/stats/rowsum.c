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

static double eval(const sl_rx *x, int k, const double *var, const double *u, const double *par) {
  const sl_rx_node *d = &x->node[k];
  switch (d->op) {
    case SL_RX_NUM: return d->x;
    case SL_RX_VAR: return var[d->a];
    case SL_RX_PAR: return par[d->a];
    case SL_RX_VAL: return u[d->a];
    default: break;
  }
  double a = eval(x, d->a, var, u, par);
  double b = d->b >= 0 ? eval(x, d->b, var, u, par) : 0;
  switch (d->op) {
    case SL_RX_ADD: return a + b;
    case SL_RX_SUB: return a - b;
    case SL_RX_MUL: return a * b;
    case SL_RX_DIV: return a / b;
    case SL_RX_EXPIT: return expit(a);
    case SL_RX_LOG1PEXP: return log1pexp(a);
    default: return a < b;   /* SL_RX_LT */
  }
}

/* The variables and values of sample row k. */
static void row_values(const frame_ctx *c, const sl_rx *x, size_t k, const double *par,
                       double *var, double *u) {
  const sl_prep *P = c->P;
  size_t i = c->ix[k];
  var[SL_RV_T] = P->t[i];
  var[SL_RV_Y] = P->y[i];
  var[SL_RV_W] = P->w ? P->w[i] : 1;
  var[SL_RV_BOOT] = 1;
  memcpy(var + SL_RV_C0, P->C + i * P->q, P->q * sizeof *var);
  for (size_t v = 0; v < x->nval; v++) u[v] = eval(x, x->root[v], var, u, par);
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

static int frame_sums(void *ctx, const sl_sum_req *q, double *out, sl_error *e) {
  const frame_ctx *c = ctx;
  const sl_prep *P = c->P;
  const sl_rx *x = q->rx;
  if (q->nrep != 1 || q->rep[0] != 0)
    return sl_error_set(e, SL_EARG, 0, 0, "a data frame sums the whole sample only");
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
  for (size_t a = 0; a < q->nagg; a++)
    out[a] = q->agg[a].kind == SL_AGG_MIN ? INFINITY : q->agg[a].kind == SL_AGG_MAX ? -INFINITY : 0;
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
      if (need[k]) eval_block(x, k, nb, col, q->par, buf, store + k * BLOCK);
    for (size_t a = 0; a < q->nagg; a++) {
      const sl_agg *g = &q->agg[a];
      const double *u = buf[x->root[g->a]];
      const double *v = g->b >= 0 ? buf[x->root[g->b]] : NULL, *w = g->c >= 0 ? buf[x->root[g->c]] : NULL;
      double acc = out[a];
      if (g->kind == SL_AGG_MIN) { for (size_t i = 0; i < nb; i++) if (u[i] < acc) acc = u[i]; }
      else if (g->kind == SL_AGG_MAX) { for (size_t i = 0; i < nb; i++) if (u[i] > acc) acc = u[i]; }
      else if (w) for (size_t i = 0; i < nb; i++) acc += u[i] * v[i] * w[i];
      else if (v) for (size_t i = 0; i < nb; i++) acc += u[i] * v[i];
      else for (size_t i = 0; i < nb; i++) acc += u[i];
      out[a] = acc;
    }
  }
  free(store); free(buf); free(col); free(need);
  return SL_OK;
}

static int frame_cluster_ss(void *ctx, const sl_rx *x, int v, const double *par, size_t npar,
                            double *ss, size_t *groups, sl_error *e) {
  const frame_ctx *c = ctx;
  const sl_prep *P = c->P;
  (void)npar;
  double *sum = calloc(P->nclusters ? P->nclusters : 1, sizeof *sum);
  double *var = malloc((SL_RV_C0 + P->q) * sizeof *var), *u = malloc((x->nval + 1) * sizeof *u);
  if (!sum || !var || !u) {
    free(sum); free(var); free(u);
    return sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
  }
  for (size_t k = 0; k < c->n; k++) {
    row_values(c, x, k, par, var, u);
    sum[P->cluster[c->ix[k]]] += u[v];
  }
  *ss = 0;
  for (size_t g = 0; g < P->nclusters; g++) *ss += sum[g] * sum[g];
  *groups = P->nclusters;
  free(sum); free(var); free(u);
  return SL_OK;
}

static int frame_quantiles(void *ctx, const sl_rx *x, int v, const double *par, const double *pct,
                           size_t k, double *out, sl_error *e) {
  const frame_ctx *c = ctx;
  double *all = malloc((c->n ? c->n : 1) * sizeof *all);
  double *var = malloc((SL_RV_C0 + c->P->q) * sizeof *var), *u = malloc((x->nval + 1) * sizeof *u);
  if (!all || !var || !u) {
    free(all); free(var); free(u);
    return sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
  }
  for (size_t r = 0; r < c->n; r++) {
    row_values(c, x, r, par, var, u);
    all[r] = u[v];
  }
  for (size_t j = 0; j < k; j++) out[j] = sl_est_quantile(all, c->n, pct[j]);
  free(all); free(var); free(u);
  return SL_OK;
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
