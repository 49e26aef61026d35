/*
** estimate_db.c: standardization, IPW and AIPW of a lazy table, inside the
** database.  The roles are checked as for a frame (on a frame of the
** table's columns and no rows), the data's facts come from small queries
** (the rows left after dropping missing values, the treatment's values,
** whether the outcome is 0/1, a text covariate's levels, the weights'
** range, the clusters), and the estimator of sumest.c runs on the sums of
** rowsum_sql.c.  Its bootstrap is the Poisson bootstrap: each row weighted
** by a Poisson(1) draw from its key, the seed and the replicate (Hanley
** and MacGibbon 2006; Chamandy et al. 2012), replicates in batches of
** BATCH, so that sluice keeps O(p^2 x BATCH) numbers whatever the rows.
*/
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include "db_internal.h"
#include "estimate_internal.h"
#include "sumest.h"

#define BATCH 50
/* Levels of a text covariate (each a dummy column) at most. */
#define LEVELS_MAX 100

typedef struct dprep {
  sl_est_spec spec;            /* the caller's, with the schema as data */
  const sl_est_spec *s;
  const sl_db_table *t;
  sl_frame *schema;
  sl_db_vars v;
  size_t nvar, cap;            /* cap: variables allocated */
  size_t slots;                /* parameters allocated in v.vpar */
  char **names;                /* term names */
  size_t nnames;
  const char **onames, **pnames;
  sl_est_info I;
  uint64_t total;
} dprep;

static void dprep_free(dprep *d) {
  for (size_t k = 0; k < d->nvar; k++) free(d->v.var[k]);
  free(d->v.var);
  for (size_t k = 0; k < d->v.nvpar; k++) free((char *)d->v.vpar[k].text);
  free(d->v.vpar);
  free(d->v.cond); free(d->v.key); free(d->v.cluster);
  for (size_t k = 0; k < d->nnames; k++) free(d->names[k]);
  free(d->names); free(d->onames); free(d->pnames);
  sl_frame_free(d->schema);
}

/* ---- small queries ---- */

/* The distinct values of column j over the complete rows, at most max + 1
** of them: numbers sorted, or texts sorted bytewise (as a frame's levels). */
typedef struct distinct { int num; size_t n, max; double x[LEVELS_MAX + 2]; char *txt[LEVELS_MAX + 2]; } distinct;
static int take_distinct(void *ctx, const sl_db_row *r, size_t i, sl_error *e) {
  distinct *d = ctx;
  (void)e;
  if (i > d->max) return SL_DB_STOP;
  if (d->num) d->x[d->n++] = sl_db_cell(r, 0);
  else {
    size_t len;
    const char *s = r->db->ops->text(r, 0, &len);
    char *c = malloc(len + 1);
    if (!c) return sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
    memcpy(c, s, len);
    c[len] = 0;
    d->txt[d->n++] = c;
  }
  return SL_OK;
}
static int cmp_num(const void *a, const void *b) {
  double x = *(const double *)a, y = *(const double *)b;
  return (x > y) - (x < y);
}
static int cmp_txt(const void *a, const void *b) {
  return strcmp(*(char *const *)a, *(char *const *)b);
}
static void distinct_free(distinct *d) { for (size_t k = 0; !d->num && k < d->n; k++) free(d->txt[k]); }
static int distinct_values(const dprep *d, int j, size_t max, distinct *out, sl_error *e) {
  memset(out, 0, sizeof *out);
  out->num = sl_db_coltype(d->t, (size_t)j) == SL_NUMERIC;
  out->max = max;
  sl_db_buf b = {0};
  sl_db_buf_add(&b, "SELECT DISTINCT %s FROM %s WHERE %s LIMIT %zu", sl_db_expr(d->t, (size_t)j),
                sl_db_from(d->t), d->v.cond, max + 1);
  char *sql = sl_db_buf_done(&b, e);
  if (!sql) return e->code;
  int rc = sl_db_rows(d->t, sql, NULL, 0, take_distinct, out, e);
  free(sql);
  if (out->num) qsort(out->x, out->n, sizeof *out->x, cmp_num);
  else qsort(out->txt, out->n, sizeof *out->txt, cmp_txt);
  return rc;
}

/* ---- the variables ---- */

static int add_var(dprep *d, size_t k, const char *sql, sl_error *e) {
  if (k >= d->cap) {
    size_t cap = k + 16;
    char **n = realloc(d->v.var, cap * sizeof *n);
    if (!n) return sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
    for (size_t i = d->cap; i < cap; i++) n[i] = NULL;
    d->v.var = n; d->cap = cap;
  }
  free(d->v.var[k]);
  d->v.var[k] = strdup(sql);
  if (k + 1 > d->nvar) d->nvar = k + 1;
  return d->v.var[k] ? SL_OK : sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
}

/* Bind the next slot: a number, or a copy of a text. */
static int add_slot(dprep *d, double x, const char *text, sl_error *e) {
  if (d->v.nvpar == d->slots) {
    size_t cap = d->slots ? 2 * d->slots : 16;
    sl_db_param *n = realloc(d->v.vpar, cap * sizeof *n);
    if (!n) return sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
    d->v.vpar = n; d->slots = cap;
  }
  char *c = text ? strdup(text) : NULL;
  if (text && !c) return sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
  d->v.vpar[d->v.nvpar++] = (sl_db_param){0, x, 0, c};
  return SL_OK;
}

/* "CASE WHEN <column j> = <slot> THEN 1 ELSE 0 END", as doubles */
static int indicator(dprep *d, size_t k, int j, double x, const char *text, sl_error *e) {
  sl_db_buf b = {0};
  sl_db_buf_add(&b, "CASE WHEN %s = %c THEN CAST(1 AS DOUBLE PRECISION) ELSE CAST(0 AS DOUBLE "
                "PRECISION) END", sl_db_expr(d->t, (size_t)j), SL_DB_SLOT);
  char *sql = sl_db_buf_done(&b, e);
  if (!sql) return e->code;
  int rc = add_var(d, k, sql, e);
  free(sql);
  return rc ? rc : add_slot(d, x, text, e);
}

static char *add_name(dprep *d, const char *a, const char *b) {
  size_t len = strlen(a) + (b ? strlen(b) + 1 : 0) + 1;
  char *s = malloc(len);
  if (!s) return NULL;
  snprintf(s, len, b ? "%s=%s" : "%s", a, b);
  char **n = realloc(d->names, (d->nnames + 1) * sizeof *n);
  if (!n) { free(s); return NULL; }
  d->names = n;
  d->names[d->nnames++] = s;
  return s;
}

/* ---- the facts of the data ---- */

/* The complete rows' condition and counts. */
static int complete_rows(dprep *d, sl_error *e) {
  const sl_est_spec *s = d->s;
  int used[SL_ROUTE_MAX + 8];
  size_t nu = 0;
  sl_db_buf b = {0};
  used[nu++] = s->treatment;
  if (s->outcome >= 0) used[nu++] = s->outcome;
  if (s->weights) used[nu++] = s->weights - 1;
  if (s->cluster) used[nu++] = s->cluster - 1;
  for (size_t k = 0; k < nu; k++)
    sl_db_buf_add(&b, "%s%s IS NOT NULL", k ? " AND " : "", sl_db_expr(d->t, (size_t)used[k]));
  for (size_t k = 0; k < s->nset; k++)
    sl_db_buf_add(&b, " AND %s IS NOT NULL", sl_db_expr(d->t, (size_t)s->set[k]));
  if (!(d->v.cond = sl_db_buf_done(&b, e))) return e->code;
  sl_db_buf q = {0};
  sl_db_buf_add(&q, "SELECT COUNT(*), SUM(CASE WHEN %s THEN 1 ELSE 0 END) FROM %s", d->v.cond,
                sl_db_from(d->t));
  char *sql = sl_db_buf_done(&q, e);
  if (!sql) return e->code;
  double v[2];
  int rc = sl_db_numbers(d->t, sql, NULL, 0, v, 2, e);
  free(sql);
  if (rc) return rc;
  d->total = (uint64_t)v[0];
  d->I.n = isnan(v[1]) ? 0 : (size_t)v[1];
  if (d->I.n == 0)
    return sl_error_set(e, SL_EARG, 0, 0, "no rows are left after dropping the %llu with missing "
                        "values in the treatment, outcome or set", (unsigned long long)d->total);
  return SL_OK;
}

/* The treatment: 0/1 as it is, two other values coded 1 for the treated
** one (bound), or a continuous number. */
static int treatment(dprep *d, sl_error *e) {
  const sl_est_spec *s = d->s;
  int j = s->treatment;
  const char *name = sl_db_colname(d->t, (size_t)j);
  distinct v;
  int rc = distinct_values(d, j, SL_FEW_VALUES, &v, e);
  if (rc) { distinct_free(&v); return rc; }
  size_t ns = v.n;
  d->I.t_values = ns;
  d->I.tname = name;
  int plain = v.num && ns == 2 && v.x[0] == 0 && v.x[1] == 1;
  if (ns == 1) {
    char one[64];
    if (v.num) snprintf(one, sizeof one, "%g", v.x[0]); else snprintf(one, sizeof one, "%s", v.txt[0]);
    rc = sl_error_set(e, SL_EARG, 0, 0, "the treatment '%s' takes the single value %s in the %zu "
                      "complete rows", name, one, d->I.n);
  } else if (ns != 2 || (plain && !s->treated)) {
    if (!v.num)
      rc = sl_error_set(e, SL_EARG, 0, 0, "the treatment '%s' has %s%zu levels: a text treatment "
                        "needs two (f:binarize groups levels)", name,
                        ns > SL_FEW_VALUES ? "more than " : "", ns > SL_FEW_VALUES ? SL_FEW_VALUES : ns);
    else if (s->treated && ns > 2)
      rc = sl_error_set(e, SL_EARG, 0, 0, "treated = applies to a two-level treatment, and '%s' "
                        "takes %s%zu values: use f:binarize", name,
                        ns > SL_FEW_VALUES ? "more than " : "", ns > SL_FEW_VALUES ? SL_FEW_VALUES : ns);
    else rc = add_var(d, SL_RV_T, sl_db_expr(d->t, (size_t)j), e);
    d->I.bin_t = plain;
  } else {
    char txt[2][64];
    double seen[2] = {v.num ? v.x[0] : 0, v.num ? v.x[1] : 1};
    for (int i = 0; i < 2; i++)
      if (v.num) snprintf(txt[i], sizeof txt[i], "%.15g", v.x[i]);
      else snprintf(txt[i], sizeof txt[i], "%s", v.txt[i]);
    int tr;
    rc = sl_est_pick_treated(name, v.num, seen, txt, s->treated, &tr, e);
    if (!rc) rc = indicator(d, SL_RV_T, j, v.num ? v.x[tr] : 0, v.num ? NULL : v.txt[tr], e);
    if (!rc && (!plain || tr == 0)) {
      memcpy(d->I.t_level[0], txt[1 - tr], sizeof txt[0]);
      memcpy(d->I.t_level[1], txt[tr], sizeof txt[0]);
    }
    d->I.bin_t = 1;
  }
  distinct_free(&v);
  return rc;
}

/* The outcome, and whether it takes only 0 and 1; none for the
** diagnostics (a constant 0). */
static int outcome(dprep *d, sl_error *e) {
  if (d->s->outcome < 0) {
    d->I.bin_y = 1;
    return add_var(d, SL_RV_Y, "CAST(0 AS DOUBLE PRECISION)", e);
  }
  const char *y = sl_db_expr(d->t, (size_t)d->s->outcome);
  d->I.yname = sl_db_colname(d->t, (size_t)d->s->outcome);
  int rc = add_var(d, SL_RV_Y, y, e);
  if (rc) return rc;
  sl_db_buf b = {0};
  sl_db_buf_add(&b, "SELECT COUNT(*) FROM %s WHERE %s AND %s <> 0 AND %s <> 1", sl_db_from(d->t),
                d->v.cond, y, y);
  char *sql = sl_db_buf_done(&b, e);
  if (!sql) return e->code;
  double other;
  rc = sl_db_numbers(d->t, sql, NULL, 0, &other, 1, e);
  free(sql);
  d->I.bin_y = other == 0;
  return rc;
}

/* The weights: not negative, not all 0; Kish's ESS of them. */
static int weights(dprep *d, sl_error *e) {
  if (!d->s->weights) return add_var(d, SL_RV_W, "CAST(1 AS DOUBLE PRECISION)", e);
  int j = d->s->weights - 1;
  const char *w = sl_db_expr(d->t, (size_t)j), *name = sl_db_colname(d->t, (size_t)j);
  if (sl_db_coltype(d->t, (size_t)j) != SL_NUMERIC)
    return sl_error_set(e, SL_EARG, 0, 0, "weights = '%s' has text values: weights are numbers", name);
  int rc = add_var(d, SL_RV_W, w, e);
  if (rc) return rc;
  sl_db_buf b = {0};
  sl_db_buf_add(&b, "SELECT MIN(%s), SUM(%s), SUM(%s * %s) FROM %s WHERE %s", w, w, w, w,
                sl_db_from(d->t), d->v.cond);
  char *sql = sl_db_buf_done(&b, e);
  if (!sql) return e->code;
  double v[3];
  rc = sl_db_numbers(d->t, sql, NULL, 0, v, 3, e);
  free(sql);
  if (rc) return rc;
  if (!(v[0] >= 0) || !isfinite(v[1]) || !isfinite(v[2]))
    return sl_error_set(e, SL_EARG, 0, 0, "weights = '%s' takes the value %g: weights must be "
                        "finite and not negative", name, v[0]);
  if (!(v[1] > 0))
    return sl_error_set(e, SL_EARG, 0, 0, "weights = '%s' is 0 in every complete row", name);
  d->I.ess_weights = v[1] * v[1] / v[2];
  return SL_OK;
}

/* The covariates' design columns: numbers as they are, a text column as a
** dummy for each level but the first (bytewise, as a frame's levels). */
static int covariates(dprep *d, sl_error *e) {
  const sl_est_spec *s = d->s;
  const char *tname = d->I.tname;
  size_t k = SL_RV_C0;
  char **cn = NULL;
  size_t ncn = 0;
  int rc = SL_OK;
  for (size_t i = 0; rc == SL_OK && i < s->nset; i++) {
    int j = s->set[i];
    const char *name = sl_db_colname(d->t, (size_t)j);
    if (sl_db_coltype(d->t, (size_t)j) == SL_NUMERIC) {
      rc = add_var(d, k++, sl_db_expr(d->t, (size_t)j), e);
      char **n2 = realloc(cn, (ncn + 1) * sizeof *n2);
      if (!n2) { rc = sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory"); break; }
      cn = n2;
      cn[ncn++] = add_name(d, name, NULL);
      continue;
    }
    distinct v;
    rc = distinct_values(d, j, LEVELS_MAX, &v, e);
    if (!rc && v.n > LEVELS_MAX)
      rc = sl_error_set(e, SL_EARG, 0, 0, "set: '%s' has more than %d levels: too many dummy "
                        "columns for a model in the database", name, LEVELS_MAX);
    for (size_t l = 1; !rc && l < v.n; l++) {
      rc = indicator(d, k++, j, 0, v.txt[l], e);
      char **n2 = rc ? NULL : realloc(cn, (ncn + 1) * sizeof *n2);
      if (!rc && !n2) rc = sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
      if (rc) break;
      cn = n2;
      cn[ncn++] = add_name(d, name, v.txt[l]);
    }
    distinct_free(&v);
  }
  size_t q = ncn;
  d->onames = calloc(2 * q + 2, sizeof *d->onames);
  d->pnames = calloc(q + 1, sizeof *d->pnames);
  if (!rc && (!d->onames || !d->pnames)) rc = sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
  for (size_t m = 0; !rc && m < q; m++) if (!cn[m]) rc = sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
  if (!rc) {
    d->onames[0] = d->pnames[0] = "(intercept)";
    d->onames[1] = tname;
    for (size_t m = 0; m < q; m++) {
      d->onames[2 + m] = d->pnames[1 + m] = cn[m];
      size_t len = strlen(tname) + strlen(cn[m]) + 2;
      char *ti = malloc(len);
      if (ti) snprintf(ti, len, "%s:%s", tname, cn[m]);
      char **n2 = ti ? realloc(d->names, (d->nnames + 1) * sizeof *n2) : NULL;
      if (!n2) { free(ti); rc = sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory"); break; }
      d->names = n2;
      d->names[d->nnames++] = ti;
      d->onames[2 + q + m] = ti;
    }
  }
  free(cn);
  if (!rc && d->nvar < SL_RV_C0) d->nvar = SL_RV_C0;
  d->v.nvar = SL_RV_C0 + q;
  return rc;
}

/* The clusters: how many in the complete rows. */
static int clusters(dprep *d, sl_error *e) {
  if (!d->s->cluster) return SL_OK;
  int j = d->s->cluster - 1;
  const char *c = sl_db_expr(d->t, (size_t)j);
  if (!(d->v.cluster = strdup(c))) return sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
  sl_db_buf b = {0};
  sl_db_buf_add(&b, "SELECT COUNT(DISTINCT %s) FROM %s WHERE %s", c, sl_db_from(d->t), d->v.cond);
  char *sql = sl_db_buf_done(&b, e);
  if (!sql) return e->code;
  double g;
  int rc = sl_db_numbers(d->t, sql, NULL, 0, &g, 1, e);
  free(sql);
  if (rc) return rc;
  d->I.nclusters = (size_t)g;
  if (g < 2)
    return sl_error_set(e, SL_EARG, 0, 0, "cluster = '%s' holds one cluster in the %zu complete "
                        "rows: clustered standard errors need two or more",
                        sl_db_colname(d->t, (size_t)j), d->I.n);
  return SL_OK;
}

/* The rows' key, for the Poisson bootstrap: present and distinct in every
** complete row (rows sharing a key would share their weights). */
static int key(dprep *d, sl_error *e) {
  int k = sl_db_key(d->t);
  if (!d->s->boot) return SL_OK;   /* only the Poisson weights read it */
  if (k < 0)
    return sl_error_set(e, SL_EARG, 0, 0, "boot = on a database table draws Poisson weights "
                        "from each row's key: name a column of whole numbers, one per row, "
                        "with db:table(name, {key = \"column\"})");
  const char *name = sl_db_colname(d->t, (size_t)k);
  char *q = sl_db_quote_ident(name, e);
  if (!q) return e->code;
  size_t len = strlen(q) + 32;
  d->v.key = malloc(len);
  if (d->v.key) snprintf(d->v.key, len, "CAST(%s AS BIGINT)", q);
  free(q);
  if (!d->v.key) return sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
  sl_db_buf b = {0};
  sl_db_buf_add(&b, "SELECT COUNT(*), COUNT(%s), COUNT(DISTINCT %s) FROM %s WHERE %s", d->v.key,
                d->v.key, sl_db_from(d->t), d->v.cond);
  char *sql = sl_db_buf_done(&b, e);
  if (!sql) return e->code;
  double v[3];
  int rc = sl_db_numbers(d->t, sql, NULL, 0, v, 3, e);
  free(sql);
  if (rc) return rc;
  if (v[1] < v[0])
    return sl_error_set(e, SL_EARG, 0, 0, "key = '%s' is missing in %.0f of the %.0f complete rows: "
                        "the Poisson bootstrap needs a key in every row", name, v[0] - v[1], v[0]);
  if (v[2] < v[1])
    return sl_error_set(e, SL_EARG, 0, 0, "key = '%s' repeats: %.0f distinct values in %.0f "
                        "complete rows, and rows that share a key would share their Poisson "
                        "weights", name, v[2], v[1]);
  return SL_OK;
}

/* ---- the estimate ---- */

static int bootstrap(const sl_est_spec *s, const sl_summer *S, const sl_est_info *I, double *warm,
                     double *boot, sl_error *e) {
  sl_point *pts = malloc(BATCH * sizeof *pts);
  int *rep = malloc(BATCH * sizeof *rep), rc = SL_OK;
  if (!pts || !rep) { free(pts); free(rep); return sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory"); }
  for (size_t first = 0; first < s->boot && rc == SL_OK; first += BATCH) {
    size_t nb = s->boot - first < BATCH ? s->boot - first : BATCH;
    for (size_t i = 0; i < nb; i++) rep[i] = (int)(first + i + 1);
    if (s->stop && *s->stop) { rc = sl_error_set(e, SL_ELIMIT, 0, 0, "interrupted"); break; }
    rc = sl_sum_point(s, S, I->bin_t, I->bin_y, rep, nb, 0, warm, pts, NULL, e);
    for (size_t i = 0; rc == SL_OK && i < nb; i++) boot[first + i] = pts[i].est;
    if (s->progress) s->progress(s->progress_ctx, first + nb, s->boot);
  }
  free(pts); free(rep);
  return rc;
}

int sl_db_summer_open(const sl_est_spec *s, sl_summer *S, void **handle, sl_est_info *I,
                      size_t *dropped, sl_error *e) {
  dprep *d = calloc(1, sizeof *d);
  if (!d) return sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
  d->spec = *s;
  d->s = &d->spec;
  d->t = s->table;
  d->v.t = s->table;
  d->v.seed = s->seed;
  int rc = SL_OK;
  if (!(d->schema = sl_db_schema(d->t, e))) { rc = e->code; goto done; }
  d->spec.data = d->schema;
  if ((rc = sl_est_check_roles(d->s, e))) goto done;
  if ((rc = complete_rows(d, e)) || (rc = treatment(d, e)) || (rc = outcome(d, e)) ||
      (rc = weights(d, e)) || (rc = add_var(d, SL_RV_BOOT, "", e)) || (rc = covariates(d, e)) ||
      (rc = clusters(d, e)) || (rc = key(d, e)))
    goto done;
  if ((rc = sl_est_check_kinds(d->s, d->I.bin_t, d->I.bin_y, d->I.tname, e))) goto done;
  *dropped = (size_t)(d->total - d->I.n);
  sl_summer_db(S, &d->v);
  S->n = d->I.n;
  S->onames = d->onames;
  S->pnames = d->pnames;
  *I = d->I;
done:
  if (rc) { sl_db_summer_close(d); d = NULL; }
  *handle = d;
  return rc;
}

void sl_db_summer_close(void *handle) {
  if (!handle) return;
  dprep_free(handle);
  free(handle);
}

int sl_estimate_db(const sl_est_spec *s, sl_est_result *res, sl_error *e) {
  if (s->method != SL_STANDARDIZE && s->method != SL_IPW && s->method != SL_AIPW)
    return sl_error_set(e, SL_EARG, 0, 0, "inside the database: method = standardize, ipw or aipw");
  if (s->trunc_lo > 0 || s->trunc_hi < 100)
    return sl_error_set(e, SL_EARG, 0, 0, "truncate = is not computed inside the database (it needs "
                        "the weights' percentiles); fetch the rows with t:fetch()");
  if (s->outcome < 0) return sl_error_set(e, SL_EARG, 0, 0, "an estimate needs an outcome column");
  sl_summer S;
  sl_est_info I;
  void *h;
  double *boot = NULL, *warm = NULL;
  int rc = sl_db_summer_open(s, &S, &h, &I, &res->dropped, e);
  if (rc) return rc;
  warm = malloc(sl_sum_warm_size(S.q) * sizeof *warm);
  if (!warm) { rc = sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory"); goto done; }
  sl_point pt;
  int rep0 = 0;
  if ((rc = sl_sum_point(s, &S, I.bin_t, I.bin_y, &rep0, 1, 1, warm, &pt, res->warnings, e)))
    goto done;
  if (s->boot) {
    if (!(boot = malloc(s->boot * sizeof *boot))) { rc = sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory"); goto done; }
    if ((rc = bootstrap(s, &S, &I, warm, boot, e))) goto done;
  }
  rc = sl_est_report(s, &pt, &I, boot, res, e);
done:
  free(boot); free(warm);
  sl_db_summer_close(h);
  return rc;
}
