/*
** bind_stats.c: models, estimators and pictures in Lua.  These are the
** raw primitives (sluice._ols, _estimate, ...); lua/sluice/estimate.lua
** gives them their public form (ols{}, logit{}, estimate{}) with argument
** checking and printing; balance{} and overlap{} are in bind_diag.c.
*/
#include <math.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>
#include "bind.h"
#include "bind_frame.h"
#include "regress.h"
#include "db_regress.h"
#include "estimate.h"
#include "plot.h"
#include <gsl/gsl_cdf.h>

/* A column index by name, or an argument error with a suggestion. */
static int column(lua_State *L, const sl_frame *f, int arg, const char *name) {
  sl_error e;
  int j = sl_frame_lookup(f, name, &e);
  if (j < 0) luaL_argerror(L, arg, e.msg);
  return j;
}

/* The list at stack index idx as column indices (in a userdata pushed). */
static int *columns(lua_State *L, const sl_frame *f, int idx, size_t *n) {
  *n = lua_isnoneornil(L, idx) ? 0 : (size_t)luaL_len(L, idx);
  int *c = lua_newuserdatauv(L, (*n ? *n : 1) * sizeof *c, 0);
  for (size_t i = 0; i < *n; i++) {
    lua_geti(L, idx, (lua_Integer)i + 1);
    if (lua_type(L, -1) != LUA_TSTRING) luaL_argerror(L, idx, "column names are strings");
    c[i] = column(L, f, idx, lua_tostring(L, -1));
    lua_pop(L, 1);
  }
  return c;
}

static int missing_cell(const sl_column *c, size_t r) {
  return c->type == SL_NUMERIC ? isnan(c->x[r]) : c->code[r] < 0;
}

/* The design of a model: terms, and X with an intercept and dummies for
** every level but the first.  Rows with a missing value are dropped. */
typedef struct design {
  size_t n, p, dropped;
  double *X, *y;
  const char **names;
  size_t *rows;   /* n: the frame row of each design row */
} design;

static int design_gc(lua_State *L) {
  design *d = lua_touserdata(L, 1);
  free(d->X); free(d->y); free(d->names); free(d->rows);
  memset(d, 0, sizeof *d);
  return 0;
}

static design *build_design(lua_State *L, const sl_frame *f, int ycol, const int *xc,
                            size_t nx) {
  design *d = lua_newuserdatauv(L, sizeof *d, 0);
  memset(d, 0, sizeof *d);
  if (luaL_newmetatable(L, "sluice.design")) {
    lua_pushcfunction(L, design_gc);
    lua_setfield(L, -2, "__gc");
  }
  lua_setmetatable(L, -2);
  size_t p = 1;
  for (size_t i = 0; i < nx; i++) {
    const sl_column *c = &f->col[xc[i]];
    p += c->type == SL_NUMERIC ? 1 : (c->nlevels ? c->nlevels - 1 : 0);
    if (xc[i] == ycol) luaL_error(L, "'%s' is both the response and a regressor", c->name);
  }
  if (f->col[ycol].type != SL_NUMERIC)
    luaL_error(L, "the response '%s' has text values", f->col[ycol].name);
  unsigned char *keep = lua_newuserdatauv(L, f->nrow ? f->nrow : 1, 0);
  size_t n = 0;
  for (size_t r = 0; r < f->nrow; r++) {
    int ok = !missing_cell(&f->col[ycol], r);
    for (size_t i = 0; ok && i < nx; i++) ok = !missing_cell(&f->col[xc[i]], r);
    keep[r] = (unsigned char)ok;
    n += (size_t)ok;
  }
  d->n = n; d->p = p; d->dropped = f->nrow - n;
  if (n == 0) luaL_error(L, "no rows are left after dropping those with missing values");
  d->X = malloc(n * p * sizeof *d->X);
  d->y = malloc(n * sizeof *d->y);
  d->names = calloc(p, sizeof *d->names);
  d->rows = malloc(n * sizeof *d->rows);
  if (!d->X || !d->y || !d->names || !d->rows) luaL_error(L, "out of memory");
  /* term names live in a Lua table kept on the stack */
  lua_createtable(L, (int)p, 0);
  lua_pushliteral(L, "(intercept)");
  lua_rawseti(L, -2, 1);
  size_t k = 1;
  for (size_t i = 0; i < nx; i++) {
    const sl_column *c = &f->col[xc[i]];
    if (c->type == SL_NUMERIC) { lua_pushstring(L, c->name); lua_rawseti(L, -2, (lua_Integer)++k); }
    else for (size_t l = 1; l < c->nlevels; l++) {
      lua_pushfstring(L, "%s=%s", c->name, c->levels[l]);
      lua_rawseti(L, -2, (lua_Integer)++k);
    }
  }
  for (size_t j = 0; j < p; j++) {
    lua_rawgeti(L, -1, (lua_Integer)j + 1);
    d->names[j] = lua_tostring(L, -1);   /* anchored by the table */
    lua_pop(L, 1);
  }
  size_t row = 0;
  for (size_t r = 0; r < f->nrow; r++) {
    if (!keep[r]) continue;
    double *x = d->X + row * p;
    size_t j = 0;
    x[j++] = 1;
    for (size_t i = 0; i < nx; i++) {
      const sl_column *c = &f->col[xc[i]];
      if (c->type == SL_NUMERIC) x[j++] = c->x[r];
      else for (size_t l = 1; l < c->nlevels; l++) x[j++] = c->code[r] == (int32_t)l;
    }
    d->rows[row] = r;
    d->y[row++] = f->col[ycol].x[r];
  }
  return d;
}

/* The weights of the design rows from column wcol, in a userdata pushed;
** a missing, infinite or negative weight anywhere in the column, or no
** positive weight among the design rows, is an error naming the column
** and the row. */
static double *design_weights(lua_State *L, const sl_frame *f, int wcol, const design *d) {
  const sl_column *c = &f->col[wcol];
  if (c->type != SL_NUMERIC) luaL_error(L, "weights: '%s' has text values", c->name);
  for (size_t r = 0; r < f->nrow; r++) {
    double v = c->x[r];
    if (isnan(v)) luaL_error(L, "weights: row %d of '%s' is missing", (int)(r + 1), c->name);
    if (!isfinite(v) || v < 0) {
      char num[32];
      snprintf(num, sizeof num, "%g", v);
      luaL_error(L, "weights: row %d of '%s' is %s (%s); a weight must be finite and "
                 "non-negative", (int)(r + 1), c->name, v < 0 ? "negative" : "infinite", num);
    }
  }
  double *w = lua_newuserdatauv(L, d->n * sizeof *w, 0);
  int any = 0;
  for (size_t i = 0; i < d->n; i++) { w[i] = c->x[d->rows[i]]; any |= w[i] > 0; }
  if (!any) luaL_error(L, "weights: every weight in '%s' is 0%s", c->name,
                       d->dropped ? " among the rows without missing values" : "");
  return w;
}

typedef struct keyed { double v; size_t i; } keyed;

static int keyed_cmp(const void *a, const void *b) {
  double x = ((const keyed *)a)->v, y = ((const keyed *)b)->v;
  return x < y ? -1 : x > y;
}

/* Each design row's cluster, 0..*ng-1 (numbered in the order of the
** column's values or levels), in a userdata pushed; a missing value in
** the column is an error naming the row. */
static size_t *design_clusters(lua_State *L, const sl_frame *f, int ccol, const design *d,
                               size_t *ng) {
  const sl_column *c = &f->col[ccol];
  for (size_t r = 0; r < f->nrow; r++)
    if (missing_cell(c, r)) luaL_error(L, "cluster: row %d of '%s' is missing", (int)(r + 1), c->name);
  size_t *g = lua_newuserdatauv(L, (d->n ? d->n : 1) * sizeof *g, 0);
  keyed *k = lua_newuserdatauv(L, (d->n ? d->n : 1) * sizeof *k, 0);
  for (size_t i = 0; i < d->n; i++) {
    size_t r = d->rows[i];
    k[i].v = c->type == SL_NUMERIC ? c->x[r] : (double)c->code[r];
    k[i].i = i;
  }
  qsort(k, d->n, sizeof *k, keyed_cmp);
  *ng = 0;
  for (size_t i = 0; i < d->n; i++) {
    if (i > 0 && k[i].v != k[i - 1].v) (*ng)++;
    g[k[i].i] = *ng;
  }
  if (d->n) (*ng)++;
  lua_pop(L, 1);
  return g;
}

/* Push a table keyed by term name. */
static void push_by_term(lua_State *L, const design *d, const double *v) {
  lua_createtable(L, 0, (int)d->p);
  for (size_t j = 0; j < d->p; j++) {
    lua_pushnumber(L, v[j]);
    lua_setfield(L, -2, d->names[j]);
  }
}

/* A table keyed by term: the values v_j transformed by fn (exp), or as
** they are when fn is NULL. */
static void push_by_term_fn(lua_State *L, const design *d, const double *v, double (*fn)(double)) {
  lua_createtable(L, 0, (int)d->p);
  for (size_t j = 0; j < d->p; j++) {
    lua_pushnumber(L, fn ? fn(v[j]) : v[j]);
    lua_setfield(L, -2, d->names[j]);
  }
}

static const char *opt_string(lua_State *L, int idx, const char *k, const char *def);
static int push_fit(lua_State *L, const design *d, sl_fit *fp, int logistic, double level,
                    int weighted, int clustered, int terms, const char *warn);


/* The kind of standard error named s (ols.lua has checked it). */
static sl_vcov_kind vcov_kind(const char *s) {
  return strcmp(s, "HC0") == 0 ? SL_VCOV_HC0 : strcmp(s, "HC1") == 0 ? SL_VCOV_HC1
       : strcmp(s, "HC3") == 0 ? SL_VCOV_HC3 : strcmp(s, "cluster") == 0 ? SL_VCOV_CLUSTER
       : SL_VCOV_CLASSICAL;
}

/* sluice._fit(frame, y, {x...}, "ols" | "logit" [, {se=, cluster=, weights=,
** level=}]) -> a table of results: the chosen standard errors (se), with
** their p-values and intervals at level (t with fit.df degrees of freedom
** for least squares, normal for logit). */
static int l_fit(lua_State *L) {
  sl_frame *f = sl_bind_checkframe(L, 1);
  int ycol = column(L, f, 2, luaL_checkstring(L, 2));
  luaL_checktype(L, 3, LUA_TTABLE);
  const char *kind = luaL_checkstring(L, 4);
  int has_opts = !lua_isnoneornil(L, 5);
  if (has_opts) luaL_checktype(L, 5, LUA_TTABLE);
  else { lua_settop(L, 4); lua_newtable(L); }
  size_t nx;
  int *xc = columns(L, f, 3, &nx);
  design *d = build_design(L, f, ycol, xc, nx);
  int terms = lua_gettop(L);
  sl_fit fit;
  memset(&fit, 0, sizeof fit);
  sl_error e;
  char warn[512] = "";
  int logistic = strcmp(kind, "logit") == 0;
  if (logistic) {
    for (size_t i = 0; i < d->n; i++)
      if (d->y[i] != 0 && d->y[i] != 1)
        return luaL_error(L, "logit needs a 0/1 response; '%s' takes the value %f",
                          f->col[ycol].name, d->y[i]);
  }
  sl_fit_opts o;
  memset(&o, 0, sizeof o);
  o.se = vcov_kind(opt_string(L, 5, "se", "classical"));
  const char *wname = opt_string(L, 5, "weights", NULL);
  if (wname) o.w = design_weights(L, f, column(L, f, 5, wname), d);
  const char *cname = opt_string(L, 5, "cluster", NULL);
  if (cname) o.cluster = design_clusters(L, f, column(L, f, 5, cname), d, &o.nclusters);
  if (o.se == SL_VCOV_CLUSTER && !o.cluster) return luaL_error(L, "se = \"cluster\" needs cluster =");
  lua_getfield(L, 5, "level");
  double level = lua_isnil(L, -1) ? 0.95 : lua_tonumber(L, -1);
  lua_pop(L, 1);
  if (!(level > 0 && level < 1)) return luaL_error(L, "level = must lie strictly between 0 and 1");
  int rc = logistic ? sl_logit_opts(d->X, d->y, d->n, d->p, d->names, &o, 0, 0, &fit, warn,
                                    sizeof warn, &e)
                    : sl_ols_opts(d->X, d->y, d->n, d->p, d->names, &o, &fit, &e);
  if (rc) return sl_bind_raise(L, &e, kind, NULL, 0);
  return push_fit(L, d, &fit, logistic, level, o.w != NULL, o.se == SL_VCOV_CLUSTER, terms, warn);
}

/* The result table of a fit (ols or logit, of a frame or in a database):
** the chosen SEs with their p-values and intervals at level, and the fit's
** other numbers; frees the fit. */
static int push_fit(lua_State *L, const design *d, sl_fit *fp, int logistic, double level,
                    int weighted, int clustered, int terms, const char *warn) {
  sl_fit fit = *fp;
  double *lo = lua_newuserdatauv(L, 2 * d->p * sizeof *lo, 0), *hi = lo + d->p;
  lua_createtable(L, 0, 32);
  lua_pushvalue(L, terms);
  lua_setfield(L, -2, "terms");
  push_by_term(L, d, fit.coef); lua_setfield(L, -2, "coef");
  push_by_term(L, d, fit.se_chosen); lua_setfield(L, -2, "se");
  push_by_term(L, d, fit.se); lua_setfield(L, -2, "se_classical");
  push_by_term(L, d, fit.robust_se); lua_setfield(L, -2, "robust_se");
  /* two-sided p-values and intervals: t with fit.df degrees of freedom
  ** (ols), normal (logit, or no degrees of freedom left) */
  int normal = logistic || !(fit.df > 0);
  double q = normal ? gsl_cdf_ugaussian_Pinv(0.5 + level / 2)
                    : gsl_cdf_tdist_Pinv(0.5 + level / 2, fit.df);
  lua_createtable(L, 0, (int)d->p);
  for (size_t j = 0; j < d->p; j++) {
    double se = fit.se_chosen[j], z = fabs(fit.coef[j] / se), pv;
    pv = normal ? 2 * gsl_cdf_ugaussian_Q(z) : 2 * gsl_cdf_tdist_Q(z, fit.df);
    lo[j] = fit.coef[j] - q * se;
    hi[j] = fit.coef[j] + q * se;
    lua_pushnumber(L, pv);
    lua_setfield(L, -2, d->names[j]);
  }
  lua_setfield(L, -2, "p");
  push_by_term(L, d, lo); lua_setfield(L, -2, "lo");
  push_by_term(L, d, hi); lua_setfield(L, -2, "hi");
  if (logistic) {   /* odds ratios: exp of the coefficient and of its interval's ends */
    push_by_term_fn(L, d, fit.coef, exp); lua_setfield(L, -2, "odds_ratio");
    push_by_term_fn(L, d, lo, exp); lua_setfield(L, -2, "or_lo");
    push_by_term_fn(L, d, hi, exp); lua_setfield(L, -2, "or_hi");
  }
  static const char *const kinds[] = {"classical", "HC0", "HC1", "HC3", "cluster"};
  lua_pushstring(L, kinds[fit.se_kind]); lua_setfield(L, -2, "se_method");
  lua_pushnumber(L, level); lua_setfield(L, -2, "level");
  if (!normal) { lua_pushnumber(L, fit.df); lua_setfield(L, -2, "df"); }
  if (weighted) {
    lua_pushnumber(L, fit.wsum); lua_setfield(L, -2, "weight_sum");
    lua_pushnumber(L, fit.ess); lua_setfield(L, -2, "ess");
  }
  if (clustered) {
    lua_pushinteger(L, (lua_Integer)fit.nclusters); lua_setfield(L, -2, "clusters");
  }
  lua_pushinteger(L, (lua_Integer)d->n); lua_setfield(L, -2, "n");
  lua_pushinteger(L, (lua_Integer)d->dropped); lua_setfield(L, -2, "dropped");
  if (logistic) {
    lua_pushnumber(L, fit.loglik); lua_setfield(L, -2, "loglik");
    lua_pushnumber(L, fit.deviance); lua_setfield(L, -2, "deviance");
    lua_pushinteger(L, fit.iterations); lua_setfield(L, -2, "iterations");
    lua_pushboolean(L, fit.converged); lua_setfield(L, -2, "converged");
  } else {
    lua_pushnumber(L, fit.r2); lua_setfield(L, -2, "r2");
    lua_pushnumber(L, fit.adj_r2); lua_setfield(L, -2, "adj_r2");
    lua_pushnumber(L, fit.sigma); lua_setfield(L, -2, "sigma");
  }
  lua_pushstring(L, warn); lua_setfield(L, -2, "warning");
  sl_fit_free(fp);
  return 1;
}

/* sluice._fit_db(lazy, y, {x...}, "ols" | "logit" [, {se=, level=}]): as
** _fit, summed inside the database (src/stats/db_regress.c); models.lua
** has refused the options a database fit lacks. */
static int l_fit_db(lua_State *L) {
  sl_db_table *t = sl_bind_checklazy(L, 1);
  int ycol = sl_bind_db_column(L, t, 2);
  luaL_checktype(L, 3, LUA_TTABLE);
  int logistic = strcmp(luaL_checkstring(L, 4), "logit") == 0;
  if (lua_isnoneornil(L, 5)) { lua_settop(L, 4); lua_newtable(L); }
  luaL_checktype(L, 5, LUA_TTABLE);
  size_t nx = (size_t)luaL_len(L, 3);
  if (nx > SL_DB_FIT_MAX_X) luaL_error(L, "%d regressors at most in a database fit", SL_DB_FIT_MAX_X);
  int xc[SL_DB_FIT_MAX_X];
  design d;
  memset(&d, 0, sizeof d);
  d.p = nx + 1;
  d.names = lua_newuserdatauv(L, d.p * sizeof *d.names, 0);
  lua_createtable(L, (int)d.p, 0);   /* the terms, anchoring the names */
  lua_pushliteral(L, "(intercept)");
  lua_rawseti(L, -2, 1);
  for (size_t k = 0; k < nx; k++) {
    lua_geti(L, 3, (lua_Integer)k + 1);
    xc[k] = sl_bind_db_column(L, t, lua_gettop(L));
    lua_rawseti(L, -2, (lua_Integer)k + 2);
  }
  int terms = lua_gettop(L);
  for (size_t j = 0; j < d.p; j++) {
    lua_rawgeti(L, terms, (lua_Integer)j + 1);
    d.names[j] = lua_tostring(L, -1);
    lua_pop(L, 1);
  }
  sl_vcov_kind se = vcov_kind(opt_string(L, 5, "se", "classical"));
  lua_getfield(L, 5, "level");
  double level = lua_isnil(L, -1) ? 0.95 : lua_tonumber(L, -1);
  lua_pop(L, 1);
  if (!(level > 0 && level < 1)) return luaL_error(L, "level = must lie strictly between 0 and 1");
  sl_fit fit;
  sl_error e;
  char warn[512] = "";
  uint64_t dropped = 0;
  sl_bind_stop = 0;
  int rc = logistic ? sl_db_logit(t, ycol, xc, nx, se, d.names, 0, 0, &fit, &dropped, warn,
                                  sizeof warn, &e)
                    : sl_db_ols(t, ycol, xc, nx, se, d.names, &fit, &dropped, &e);
  if (rc) return sl_bind_raise(L, &e, logistic ? "logit" : "ols", NULL, 0);
  d.n = fit.n;
  d.dropped = (size_t)dropped;
  return push_fit(L, &d, &fit, logistic, level, 0, 0, terms, warn);
}

/* Strings at the fields of the options table at idx. */
static const char *opt_string(lua_State *L, int idx, const char *k, const char *def) {
  lua_getfield(L, idx, k);
  const char *s = lua_isnil(L, -1) ? def : lua_tostring(L, -1);
  lua_pop(L, 1);
  return s;
}
/* A finite number at a field (estimate.lua checks first; this keeps NaN
** and out-of-range casts away from the library whoever calls). */
static double opt_number(lua_State *L, int idx, const char *k, double def) {
  lua_getfield(L, idx, k);
  int isnum = 1;
  double v = lua_isnil(L, -1) ? def : lua_tonumberx(L, -1, &isnum);
  if (!isnum || !isfinite(v)) luaL_error(L, "estimate: %s = must be a finite number", k);
  lua_pop(L, 1);
  return v;
}

/* A whole number from lo to hi at a field, or def. */
static lua_Integer opt_whole(lua_State *L, int idx, const char *k, lua_Integer def,
                             lua_Integer lo, lua_Integer hi) {
  lua_getfield(L, idx, k);
  int isnum = 1;
  lua_Integer v = lua_isnil(L, -1) ? def : lua_tointegerx(L, -1, &isnum);
  if (!isnum || v < lo || v > hi)
    luaL_error(L, "estimate: %s = must be a whole number from %I to %I", k, lo, hi);
  lua_pop(L, 1);
  return v;
}

/* Progress on stderr when it is a terminal: a bar of 30 cells. */
static void progress(void *ctx, size_t done, size_t total) {
  (void)ctx;
  int cells = total ? (int)(30 * done / total) : 30;
  fprintf(stderr, "\rbootstrap [%.*s%*s] %zu/%zu", cells, "##############################",
          30 - cells, "", done, total);
  if (done >= total) fputs("\r\033[K", stderr);
  fflush(stderr);
}

/* A frame of a lazy table's columns and no rows, for looking up names;
** freed with the userdata it is pushed in. */
static int schema_gc(lua_State *L) {
  sl_frame **f = lua_touserdata(L, 1);
  sl_frame_free(*f);
  *f = NULL;
  return 0;
}
static sl_frame *push_schema(lua_State *L, const sl_db_table *t) {
  sl_frame **box = lua_newuserdatauv(L, sizeof *box, 0);
  *box = NULL;
  lua_createtable(L, 0, 1);
  lua_pushcfunction(L, schema_gc);
  lua_setfield(L, -2, "__gc");
  lua_setmetatable(L, -2);
  sl_error e;
  if (!(*box = sl_db_schema(t, &e))) sl_bind_raise(L, &e, "estimate", NULL, 0);
  return *box;
}

/* Read the spec from (frame or lazy table, treatment, outcome, {set...},
** opts); a lazy table's columns are looked up in a frame of its names. */
void sl_bind_read_spec(lua_State *L, sl_est_spec *s) {
  memset(s, 0, sizeof *s);
  const char *mt = luaL_getmetafield(L, 1, "__name") ? lua_tostring(L, -1) : NULL;
  int lazy = mt && strcmp(mt, "sluice.lazy") == 0;
  if (mt) lua_pop(L, 1);
  sl_frame *f;
  if (lazy) {
    s->table = sl_bind_checklazy(L, 1);
    f = push_schema(L, s->table);   /* left on the stack: alive for this call */
  } else {
    f = sl_bind_checkframe(L, 1);
    s->data = f;
  }
  s->treatment = column(L, f, 2, luaL_checkstring(L, 2));
  s->outcome = lua_isnil(L, 3) ? -1 : column(L, f, 3, luaL_checkstring(L, 3));
  luaL_checktype(L, 4, LUA_TTABLE);
  luaL_checktype(L, 5, LUA_TTABLE);
  size_t n;
  s->set = columns(L, f, 4, &n);
  s->nset = n;
  const char *m = opt_string(L, 5, "method", "standardize");
  s->method = strcmp(m, "ipw") == 0 ? SL_IPW : strcmp(m, "aipw") == 0 ? SL_AIPW : SL_STANDARDIZE;
  const char *est = opt_string(L, 5, "estimand", "ATE");
  s->estimand = strcmp(est, "ATT") == 0 ? SL_ATT : strcmp(est, "ATC") == 0 ? SL_ATC : SL_ATE;
  const char *sc = opt_string(L, 5, "scale", "difference");
  s->scale = strcmp(sc, "ratio") == 0 ? SL_RATIO : strcmp(sc, "odds ratio") == 0 ? SL_ODDS_RATIO
           : SL_DIFFERENCE;
  const char *se = opt_string(L, 5, "se", "sandwich");
  s->se_kind = strcmp(se, "ps known") == 0 ? SL_SE_PS_KNOWN : SL_SE_SANDWICH;
  s->treated = opt_string(L, 5, "treated", NULL);
  lua_getfield(L, 5, "weights");
  s->weights = lua_isnil(L, -1) ? 0 : 1 + column(L, f, 5, luaL_checkstring(L, -1));
  lua_pop(L, 1);
  lua_getfield(L, 5, "cluster");
  s->cluster = lua_isnil(L, -1) ? 0 : 1 + column(L, f, 5, luaL_checkstring(L, -1));
  lua_pop(L, 1);
  const char *ci = opt_string(L, 5, "interval", "");
  s->interval = strcmp(ci, "percentile") == 0 ? SL_CI_PERCENTILE : strcmp(ci, "bca") == 0 ? SL_CI_BCA
              : strcmp(ci, "normal") == 0 ? SL_CI_NORMAL : SL_CI_DEFAULT;
  lua_getfield(L, 5, "interactions");
  s->interactions = lua_isnil(L, -1) ? 1 : lua_toboolean(L, -1);
  lua_pop(L, 1);
  s->contrast = opt_number(L, 5, "contrast", 1);
  lua_getfield(L, 5, "stabilized");
  s->stabilized = lua_toboolean(L, -1);
  lua_pop(L, 1);
  s->trunc_lo = opt_number(L, 5, "trunc_lo", 0);
  s->trunc_hi = opt_number(L, 5, "trunc_hi", 100);
  s->boot = (size_t)opt_whole(L, 5, "boot", 0, 0, 1000000);
  s->level = opt_number(L, 5, "level", 0.95);
  s->seed = (uint64_t)opt_whole(L, 5, "seed", 1, LUA_MININTEGER, LUA_MAXINTEGER);
  s->threads = (int)opt_whole(L, 5, "threads", 0, 0, 1024);
  lua_getfield(L, 5, "progress");
  if (lua_toboolean(L, -1) && isatty(2)) s->progress = progress;
  lua_pop(L, 1);
  s->stop = &sl_bind_stop;
  sl_bind_stop = 0;
}

#define SETNUM(k, v) (lua_pushnumber(L, (v)), lua_setfield(L, -2, (k)))

/* The result table of an estimate. */
static void push_result(lua_State *L, const sl_est_spec *sp, const sl_est_result *rp) {
  const sl_est_spec s = *sp;
  const sl_est_result r = *rp;
  static const char *const sources[] = {"none", "sandwich", "ps known", "route", "bootstrap"};
  static const char *const intervals[] = {"", "percentile", "bca", "normal"};
  lua_createtable(L, 0, 32);
  SETNUM("estimate", r.estimate);
  if (r.has_se) { SETNUM("se", r.se); SETNUM("lo", r.lo); SETNUM("hi", r.hi);
                  SETNUM("lo_normal", r.lo_normal); SETNUM("hi_normal", r.hi_normal); }
  lua_pushstring(L, sources[r.se_source]); lua_setfield(L, -2, "se_method");
  lua_pushstring(L, intervals[r.interval]); lua_setfield(L, -2, "interval");
  if (!isnan(r.se_analytic)) {
    SETNUM("se_analytic", r.se_analytic);
    lua_pushboolean(L, r.se_log); lua_setfield(L, -2, "se_log_scale");
  }
  if (!isnan(r.lo_pct)) { SETNUM("lo_percentile", r.lo_pct); SETNUM("hi_percentile", r.hi_pct); }
  if (!isnan(r.lo_bca)) { SETNUM("lo_bca", r.lo_bca); SETNUM("hi_bca", r.hi_bca);
                          SETNUM("bca_accel", r.accel); SETNUM("bca_z0", r.bias_z0); }
  SETNUM("mu1", r.mu1); SETNUM("mu0", r.mu0);
  lua_pushinteger(L, (lua_Integer)r.n); lua_setfield(L, -2, "n");
  lua_pushinteger(L, (lua_Integer)r.dropped); lua_setfield(L, -2, "dropped");
  if (s.cluster) { lua_pushinteger(L, (lua_Integer)r.nclusters); lua_setfield(L, -2, "clusters"); }
  if (s.weights) SETNUM("ess_weights", r.ess_weights);
  if (r.treated_level[0]) {
    lua_pushstring(L, r.treated_level); lua_setfield(L, -2, "treated_level");
    lua_pushstring(L, r.control_level); lua_setfield(L, -2, "control_level");
  }
  if (s.boot) {
    lua_pushinteger(L, (lua_Integer)r.boot_done); lua_setfield(L, -2, "boot");
    lua_pushinteger(L, (lua_Integer)r.boot_failed); lua_setfield(L, -2, "boot_failed");
  }
  if (s.method == SL_IPW || s.method == SL_AIPW) {
    SETNUM("ess", r.ess); SETNUM("ess_treated", r.ess1); SETNUM("ess_control", r.ess0);
    SETNUM("ps_min", r.ps_min); SETNUM("ps_max", r.ps_max);
  }
  lua_pushboolean(L, r.binary_outcome); lua_setfield(L, -2, "binary_outcome");
  lua_pushboolean(L, r.binary_treatment); lua_setfield(L, -2, "binary_treatment");
  lua_pushstring(L, r.warnings); lua_setfield(L, -2, "warnings");
}

/* sluice._estimate(frame, treatment, outcome, {set}, opts) */
static int l_estimate(lua_State *L) {
  sl_est_spec s;
  sl_bind_read_spec(L, &s);
  sl_est_result r;
  sl_error e;
  if (sl_estimate(&s, &r, &e)) return sl_bind_raise(L, &e, "estimate", NULL, 0);
  push_result(L, &s, &r);
  return 1;
}

/* A list of k numbers at field name of the table on top. */
static void set_list(lua_State *L, const char *name, const double *v, size_t k) {
  lua_createtable(L, (int)k, 0);
  for (size_t j = 0; j < k; j++) { lua_pushnumber(L, v[j]); lua_rawseti(L, -2, (lua_Integer)j + 1); }
  lua_setfield(L, -2, name);
}

/* sluice._estimate_route(frame, treatment, outcome, {set}, opts, {aux})
** for method = "frontdoor" (aux: the mediators, earliest first) and
** "iv" (aux: the excluded instruments). */
static int l_estimate_route(lua_State *L) {
  sl_est_spec s;
  sl_bind_read_spec(L, &s);
  if (s.table) return luaL_error(L, "estimate: the front-door and IV routes run on data frames; "
                                 "fetch the rows with t:fetch()");
  const char *m = opt_string(L, 5, "method", "");
  if (strcmp(m, "frontdoor") == 0) s.method = SL_FRONTDOOR;
  else if (strcmp(m, "iv") == 0) s.method = SL_IV;
  else return luaL_error(L, "estimate: method = \"%s\" is not a route (frontdoor, iv)", m);
  luaL_checktype(L, 6, LUA_TTABLE);
  size_t na;
  s.aux = columns(L, s.data, 6, &na);
  s.naux = na;
  sl_est_result r;
  sl_error e;
  if (sl_estimate(&s, &r, &e)) return sl_bind_raise(L, &e, "estimate", NULL, 0);
  push_result(L, &s, &r);
  const sl_route_info *ri = &r.route;
  if (s.method == SL_FRONTDOOR) {
    set_list(L, "mediator_coef", ri->a, ri->k);
    set_list(L, "outcome_coef", ri->b, ri->k);
    lua_createtable(L, (int)ri->k, 0);
    for (size_t j = 0; j < ri->k; j++) { lua_pushboolean(L, ri->binary[j]); lua_rawseti(L, -2, (lua_Integer)j + 1); }
    lua_setfield(L, -2, "mediator_binary");
    lua_pushboolean(L, ri->product); lua_setfield(L, -2, "product");
    if (!isnan(ri->se_delta)) SETNUM("se_delta", ri->se_delta);
  } else {
    set_list(L, "first_coef", ri->a, ri->k);
    if (r.has_se || !isnan(ri->se_classical)) {
      SETNUM("se_classical", ri->se_classical); SETNUM("se_hc0", ri->se_hc0);
      SETNUM("se_hc1", ri->se_hc1);
    }
    SETNUM("first_f", ri->first_f); SETNUM("first_df1", ri->first_df1);
    SETNUM("first_df2", ri->first_df2); SETNUM("first_p", ri->first_p);
    SETNUM("first_r2_partial", ri->first_r2_partial);
    if (ri->has_wald) {
      SETNUM("wald", ri->wald); SETNUM("wald_itt", ri->wald_itt);
      SETNUM("wald_uptake", ri->wald_uptake);
    }
  }
  return 1;
}

/* sluice._forest(path, title, xlabel, labels, est, lo, hi, ref, reflabel) */
static int l_forest(lua_State *L) {
  luaL_checktype(L, 4, LUA_TTABLE);
  size_t n = (size_t)luaL_len(L, 4), n1, n2, n3;
  const char **labels = lua_newuserdatauv(L, (n ? n : 1) * sizeof *labels, 0);
  for (size_t i = 0; i < n; i++) {
    lua_geti(L, 4, (lua_Integer)i + 1);
    labels[i] = lua_tostring(L, -1);
    lua_pop(L, 1);   /* the list keeps the strings alive */
    if (!labels[i]) luaL_argerror(L, 4, "labels are strings");
  }
  double *est = sl_bind_numbers(L, 5, &n1), *lo = sl_bind_numbers(L, 6, &n2),
         *hi = sl_bind_numbers(L, 7, &n3);
  if (n1 != n || n2 != n || n3 != n) luaL_argerror(L, 5, "one estimate and interval per label");
  sl_error e;
  if (sl_plot_forest(luaL_checkstring(L, 1), luaL_checkstring(L, 2), luaL_checkstring(L, 3),
                     labels, est, lo, hi, n, luaL_optnumber(L, 8, NAN), luaL_optstring(L, 9, NULL), &e))
    return sl_bind_raise(L, &e, NULL, NULL, 0);
  lua_pushvalue(L, 1);
  return 1;
}

static const luaL_Reg funcs[] = {
  {"_fit", l_fit}, {"_fit_db", l_fit_db}, {"_estimate", l_estimate}, {"_estimate_route", l_estimate_route},
  {"_forest", l_forest},
  {NULL, NULL}
};

int sl_open_stats(lua_State *L) {
  luaL_setfuncs(L, funcs, 0);
  return 0;
}
