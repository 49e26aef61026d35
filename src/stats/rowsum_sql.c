/*
** rowsum_sql.c: a lazy table's answer to a request for sums (rowsum.h):
** one SQL query of nested SELECTs, so that the engine computes each value
** once per row:
**
**   SELECT r_, SUM(u0 * u3), MIN(u5), ...                 aggregates
**   FROM (SELECT sN.*, ... AS u5 FROM                      values, stage N
**         ... (SELECT s0.*, rp.column1 AS r_,               replicates: their
**                     rp.column2 AS p0, ..., <w> AS v3      parameters and weights
**              FROM (SELECT <t> AS v0, <y> AS v1, ...       variables
**                    FROM <table> WHERE <complete>) AS s0
**              CROSS JOIN (VALUES (?, ?, ...), ...) AS rp) ...)
**   GROUP BY r_ ORDER BY r_
**
** Each subquery is closed by the engine's fence (sl_db_fence: OFFSET 0),
** so that it is not pulled up with its expressions copied into every sum
** that reads a value; each stage passes on only the columns read later.
** A value refers only to values of earlier stages, since a SELECT cannot
** read its own aliases.  Numbers of sluice's own are written as literals;
** every user value (a level, a parameter) is bound.  Only standard SQL:
** arithmetic, CASE, EXP, LN, SUM, MIN, MAX, VALUES, GROUP BY.
*/
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include "db_internal.h"
#include "poisson_weight.h"
#include "rowsum.h"

/* 1 and 0 as doubles: PostgreSQL reads 1.0 as NUMERIC, whose arithmetic
** row by row is slow (the cast of a constant is folded once). */
#define ONE "CAST(1 AS DOUBLE PRECISION)"
#define ZERO "CAST(0 AS DOUBLE PRECISION)"

/* Aggregates in one query (PostgreSQL allows 1664 columns). */
#define AGG_PER_QUERY 1000
/* Beyond this the exponential's result is 0 or 1 to double precision, and
** PostgreSQL's EXP raises an error on underflow: both places cut here. */
#define EXP_CUT 700

typedef struct qbuild {
  sl_db_buf b;
  sl_db_param *par;
  size_t np, cap;
  const sl_db *db;
} qbuild;

static int push_param(qbuild *q, sl_db_param p) {
  if (q->np == q->cap) {
    size_t cap = q->cap ? 2 * q->cap : 64;
    sl_db_param *n = realloc(q->par, cap * sizeof *n);
    if (!n) { q->b.bad = 1; return 0; }
    q->par = n; q->cap = cap;
  }
  q->par[q->np++] = p;
  char ph[16];
  sl_db_placeholder(q->db, (int)q->np, ph);
  sl_db_buf_add(&q->b, "%s", ph);
  return 1;
}

static void literal(sl_db_buf *b, double v) {
  sl_db_buf_add(b, "CAST(%.17e AS DOUBLE PRECISION)", v);
}

static void emit(sl_db_buf *b, const sl_rx *x, int k) {
  const sl_rx_node *d = &x->node[k];
  static const char *const ops[] = {"+", "-", "*", "/"};
  switch (d->op) {
    case SL_RX_NUM: literal(b, d->x); return;
    case SL_RX_VAR: sl_db_buf_add(b, "v%d", d->a); return;
    case SL_RX_PAR: sl_db_buf_add(b, "p%d", d->a); return;
    case SL_RX_VAL: sl_db_buf_add(b, "u%d", d->a); return;
    case SL_RX_ADD: case SL_RX_SUB: case SL_RX_MUL: case SL_RX_DIV:
      sl_db_buf_add(b, "(");
      emit(b, x, d->a);
      sl_db_buf_add(b, " %s ", ops[d->op - SL_RX_ADD]);
      emit(b, x, d->b);
      sl_db_buf_add(b, ")");
      return;
    case SL_RX_LT:
      sl_db_buf_add(b, "(CASE WHEN ");
      emit(b, x, d->a);
      sl_db_buf_add(b, " < ");
      emit(b, x, d->b);
      sl_db_buf_add(b, " THEN " ONE " ELSE " ZERO " END)");
      return;
    default: break;
  }
  /* expit and log(1 + exp): the operand is written four times, so it is
  ** best a value's name */
  int expit = d->op == SL_RX_EXPIT;
  sl_db_buf_add(b, "(CASE WHEN ");
  emit(b, x, d->a);
  sl_db_buf_add(b, " > %d THEN ", EXP_CUT);
  if (expit) sl_db_buf_add(b, ONE); else emit(b, x, d->a);
  sl_db_buf_add(b, " WHEN ");
  emit(b, x, d->a);
  sl_db_buf_add(b, " >= 0 THEN ");
  if (expit) { sl_db_buf_add(b, ONE " / (" ONE " + EXP(-"); emit(b, x, d->a); sl_db_buf_add(b, "))"); }
  else {
    emit(b, x, d->a);
    sl_db_buf_add(b, " + LN(" ONE " + EXP(-");
    emit(b, x, d->a);
    sl_db_buf_add(b, "))");
  }
  sl_db_buf_add(b, " WHEN ");
  emit(b, x, d->a);
  sl_db_buf_add(b, " > -%d THEN ", EXP_CUT);
  if (expit) {
    sl_db_buf_add(b, "EXP(");
    emit(b, x, d->a);
    sl_db_buf_add(b, ") / (" ONE " + EXP(");
    emit(b, x, d->a);
    sl_db_buf_add(b, "))");
  } else { sl_db_buf_add(b, "LN(" ONE " + EXP("); emit(b, x, d->a); sl_db_buf_add(b, "))"); }
  sl_db_buf_add(b, " ELSE " ZERO " END)");
}

/* The stage of each value: 1 + the latest stage of the values it reads. */
static int stage_of(const sl_rx *x, int k, const int *stage) {
  const sl_rx_node *d = &x->node[k];
  if (d->op == SL_RX_VAL) return stage[d->a];
  if (d->op < SL_RX_ADD) return 0;
  int a = stage_of(x, d->a, stage), b = d->b >= 0 ? stage_of(x, d->b, stage) : 0;
  return a > b ? a : b;
}

/* The variables' SELECT over the complete rows. */
static void add_variables(qbuild *q, const sl_db_vars *v) {
  size_t slot = 0;
  sl_db_buf_add(&q->b, "SELECT ");
  for (size_t k = 0; k < v->nvar; k++) {
    if (k == SL_RV_BOOT) continue;
    if (k) sl_db_buf_add(&q->b, ", ");
    for (const char *c = v->var[k]; *c; c++) {
      if (*c == SL_DB_SLOT) { if (slot < v->nvpar) push_param(q, v->vpar[slot++]); }
      else sl_db_buf_add(&q->b, "%c", *c);
    }
    sl_db_buf_add(&q->b, " AS v%zu", k);
  }
  if (v->key) sl_db_buf_add(&q->b, ", %s AS vkey", v->key);
  if (v->cluster) sl_db_buf_add(&q->b, ", %s AS vcl", v->cluster);
  sl_db_buf_add(&q->b, " FROM %s WHERE %s", sl_db_from(v->t), v->cond);
}

/* The replicates' level over the variables: each replicate's number r_,
** its parameters p0.. and the row's weight in it, v3. */
static void add_replicates(qbuild *q, const sl_db_vars *v, const sl_sum_req *r) {
  sl_db_buf_add(&q->b, "SELECT s.*, rp.column1 AS r_");
  for (size_t j = 0; j < r->npar; j++) sl_db_buf_add(&q->b, ", rp.column%zu AS p%zu", j + 2, j);
  if (r->nrep > 1 || r->rep[0] != 0) {   /* the Poisson weights' hash, drawn a level up */
    sl_db_buf_add(&q->b, ", ");
    sl_pois_sql_hash(&q->b, "s.vkey", "rp.column1", v->seed);
    sl_db_buf_add(&q->b, " AS h_");
  }
  sl_db_buf_add(&q->b, " FROM (");
  add_variables(q, v);
  sl_db_buf_add(&q->b, ") AS s CROSS JOIN (VALUES ");
  for (size_t i = 0; i < r->nrep; i++) {
    sl_db_buf_add(&q->b, i ? ", (" : "(");
    push_param(q, (sl_db_param){1, 0, r->rep[i], NULL});
    for (size_t j = 0; j < r->npar; j++) {
      sl_db_buf_add(&q->b, ", ");
      push_param(q, (sl_db_param){0, r->par[i * r->npar + j], 0, NULL});
    }
    sl_db_buf_add(&q->b, ")");
  }
  sl_db_buf_add(&q->b, ") AS rp");
}

/* The replicates' level with each row's weight in its replicate, v3: 1 in
** replicate 0, else the Poisson draw from the hash. */
static char *weighted(const sl_db *db, const sl_sum_req *r, char *sql, sl_error *e) {
  sl_db_buf w = {0};
  sl_db_buf_add(&w, "SELECT sw.*, ");
  if (r->nrep == 1 && r->rep[0] == 0) sl_db_buf_add(&w, ONE);
  else {
    sl_db_buf_add(&w, "CASE WHEN sw.r_ = 0 THEN " ONE " ELSE CAST(");
    sl_pois_sql_draw(&w, "sw.h_");
    sl_db_buf_add(&w, " AS DOUBLE PRECISION) END");
  }
  sl_db_buf_add(&w, " AS v%d FROM (%s%s) AS sw", SL_RV_BOOT, sql, sl_db_fence(db));
  free(sql);
  return sl_db_buf_done(&w, e);
}

/* The rows with every value: the replicates' level wrapped in one SELECT
** per stage.  Returns the SQL (to free) with its parameters in q. */
/* The last stage that reads each variable, parameter and value (top + 1:
** the aggregates), so that a stage passes on only what is read later. */
typedef struct uses { int *var, *par, *val; } uses;
static void mark(const sl_rx *x, int k, int s, uses *u) {
  const sl_rx_node *d = &x->node[k];
  int *at = d->op == SL_RX_VAR ? &u->var[d->a] : d->op == SL_RX_PAR ? &u->par[d->a]
          : d->op == SL_RX_VAL ? &u->val[d->a] : NULL;
  if (at) { if (*at < s) *at = s; return; }
  if (d->op == SL_RX_NUM) return;
  mark(x, d->a, s, u);
  if (d->b >= 0) mark(x, d->b, s, u);
}

/* The rows with every value: the replicates' level wrapped in one SELECT
** per stage, each passing on the columns that later stages or the
** aggregates (every value that nothing reads is dropped) still read. */
static char *rows_sql(qbuild *q, const sl_db_vars *v, const sl_sum_req *r, sl_error *e) {
  const sl_rx *x = r->rx;
  size_t nv = v->nvar > SL_RV_BOOT ? v->nvar : SL_RV_BOOT + 1, nval = x->nval;
  int *stage = malloc((nval + 1) * sizeof *stage), top = 0;
  uses u = {calloc(nv, sizeof(int)), calloc(r->npar + 1, sizeof(int)), calloc(nval + 1, sizeof(int))};
  char *sql = NULL;
  if (!stage || !u.var || !u.par || !u.val) { sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory"); goto done; }
  for (size_t k = 0; k < nval; k++) {
    stage[k] = 1 + stage_of(x, x->root[k], stage);
    if (stage[k] > top) top = stage[k];
  }
  for (size_t k = 0; k < nval; k++) mark(x, x->root[k], stage[k], &u);
  for (size_t a = 0; a < r->nagg; a++) {   /* the aggregates read at top + 1 */
    const sl_agg *g = &r->agg[a];
    u.val[g->a] = top + 1;
    if (g->b >= 0) u.val[g->b] = top + 1;
    if (g->c >= 0) u.val[g->c] = top + 1;
  }
  if (r->nagg == 0)   /* the clusters' request: every value may be read */
    for (size_t k = 0; k < nval; k++) u.val[k] = top + 1;
  add_replicates(q, v, r);
  sql = sl_db_buf_done(&q->b, e);
  if (sql) sql = weighted(q->db, r, sql, e);
  for (int s = 1; sql && s <= top; s++) {
    sl_db_buf w = {0};
    sl_db_buf_add(&w, "SELECT r_%s", v->cluster ? ", vcl" : "");
    for (size_t k = 0; k < nv; k++) if (u.var[k] > s) sl_db_buf_add(&w, ", v%zu", k);
    for (size_t k = 0; k < r->npar; k++) if (u.par[k] > s) sl_db_buf_add(&w, ", p%zu", k);
    for (size_t k = 0; k < nval; k++)
      if (stage[k] < s && u.val[k] > s) sl_db_buf_add(&w, ", u%zu", k);
    for (size_t k = 0; k < nval; k++)
      if (stage[k] == s && u.val[k] > s) {
        sl_db_buf_add(&w, ", ");
        emit(&w, x, x->root[k]);
        sl_db_buf_add(&w, " AS u%zu", k);
      }
    sl_db_buf_add(&w, " FROM (%s%s) AS s%d", sql, sl_db_fence(q->db), s - 1);
    free(sql);
    sql = sl_db_buf_done(&w, e);
  }
done:
  free(stage); free(u.var); free(u.par); free(u.val);
  return sql;
}

/* Result rows: replicate number, then the aggregates. */
typedef struct take { const sl_sum_req *r; double *out; size_t first, k; } take;
static int take_rows(void *ctx, const sl_db_row *row, size_t i, sl_error *e) {
  take *t = ctx;
  (void)i; (void)e;
  double rv = sl_db_cell(row, 0);
  for (size_t a = 0; a < t->r->nrep; a++)
    if ((double)t->r->rep[a] == rv)
      for (size_t j = 0; j < t->k; j++)
        t->out[a * t->r->nagg + t->first + j] = sl_db_cell(row, (int)j + 1);
  return SL_OK;
}

static int db_sums(void *ctx, const sl_sum_req *r, double *out, sl_error *e) {
  const sl_db_vars *v = ctx;
  for (size_t a = 0; a < r->nrep; a++)   /* no rows: sums 0, extremes NaN */
    for (size_t j = 0; j < r->nagg; j++) out[a * r->nagg + j] = r->agg[j].kind == SL_AGG_SUM ? 0 : NAN;
  if (r->nrep > 1 || r->rep[0] != 0) {
    if (!v->key)
      return sl_error_set(e, SL_EARG, 0, 0, "the Poisson bootstrap needs the rows' key: "
                          "db:table(name, {key = \"column\"})");
  }
  int rc = SL_OK;
  for (size_t first = 0; rc == SL_OK && first < r->nagg; first += AGG_PER_QUERY) {
    size_t k = r->nagg - first < AGG_PER_QUERY ? r->nagg - first : AGG_PER_QUERY;
    qbuild q = {.db = sl_db_of(v->t)};
    char *rows = rows_sql(&q, v, r, e);
    if (!rows) { free(q.par); return e->code; }
    sl_db_buf b = {0};
    sl_db_buf_add(&b, r->nrep == 1 ? "SELECT MIN(r_)" : "SELECT r_");
    for (size_t j = first; j < first + k; j++) {
      const sl_agg *g = &r->agg[j];
      if (g->kind == SL_AGG_SUM) {
        sl_db_buf_add(&b, ", SUM(u%d", g->a);
        if (g->b >= 0) sl_db_buf_add(&b, " * u%d", g->b);
        if (g->c >= 0) sl_db_buf_add(&b, " * u%d", g->c);
        sl_db_buf_add(&b, ")");
      } else sl_db_buf_add(&b, ", %s(u%d)", g->kind == SL_AGG_MIN ? "MIN" : "MAX", g->a);
    }
    /* one replicate: a plain aggregate (a GROUP BY may sort every row) */
    if (r->nrep == 1) sl_db_buf_add(&b, " FROM (%s%s) AS z", rows, sl_db_fence(q.db));
    else sl_db_buf_add(&b, " FROM (%s%s) AS z GROUP BY r_ ORDER BY r_", rows, sl_db_fence(q.db));
    free(rows);
    char *sql = sl_db_buf_done(&b, e);
    take t = {r, out, first, k};
    rc = sql ? sl_db_rows(v->t, sql, q.par, q.np, take_rows, &t, e) : e->code;
    free(sql);
    free(q.par);
  }
  for (size_t i = 0; rc == SL_OK && i < r->nrep * r->nagg; i++)   /* SUM over no rows is NULL */
    if (isnan(out[i]) && r->agg[i % r->nagg].kind == SL_AGG_SUM) out[i] = 0;
  return rc;
}

static int take_two(void *ctx, const sl_db_row *row, size_t i, sl_error *e) {
  double *v = ctx;
  (void)i; (void)e;
  v[0] = sl_db_cell(row, 0);
  v[1] = sl_db_cell(row, 1);
  return SL_DB_STOP;
}

static int db_cluster_ss(void *ctx, const sl_rx *x, int val, const double *par, size_t npar,
                         double *ss, size_t *groups, sl_error *e) {
  const sl_db_vars *v = ctx;
  int rep0 = 0;
  sl_sum_req r = {x, NULL, 0, par, npar, 1, &rep0};
  qbuild q = {.db = sl_db_of(v->t)};
  char *rows = rows_sql(&q, v, &r, e);
  if (!rows) { free(q.par); return e->code; }
  sl_db_buf b = {0};
  sl_db_buf_add(&b, "SELECT SUM(g_ * g_), COUNT(*) FROM (SELECT SUM(u%d) AS g_ FROM (%s%s) AS z "
                "GROUP BY vcl) AS c", val, rows, sl_db_fence(q.db));
  free(rows);
  char *sql = sl_db_buf_done(&b, e);
  double two[2] = {NAN, NAN};
  int rc = sql ? sl_db_rows(v->t, sql, q.par, q.np, take_two, two, e) : e->code;
  free(sql);
  free(q.par);
  *ss = two[0];
  *groups = isnan(two[1]) ? 0 : (size_t)two[1];
  return rc;
}

void sl_summer_db(sl_summer *s, sl_db_vars *v) {
  memset(s, 0, sizeof *s);
  s->ctx = v;
  s->sums = db_sums;
  s->cluster_ss = db_cluster_ss;
  s->q = v->nvar - SL_RV_C0;
  s->has_cluster = v->cluster != NULL;
}
