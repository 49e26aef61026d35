/*
** bind_sem.c: linear structural models in Lua (userdata "sluice.sem").
** The graph the model lives on is kept as the userdata's user value.
*/
#include <math.h>
#include <stdlib.h>
#include <string.h>
#include "bind.h"
#include "bind_frame.h"
#include "notation.h"
#include "sem.h"

#define SL_SEM_MT "sluice.sem"
#define MC_DRAWS_MAX 100000000

typedef struct sem_box { sl_sem m; int ok; } sem_box;

static sem_box *check_sem(lua_State *L, int arg) {
  sem_box *b = luaL_checkudata(L, arg, SL_SEM_MT);
  if (!b->ok) luaL_argerror(L, arg, "an unfinished model");
  return b;
}

static int sem_gc(lua_State *L) {
  sem_box *b = luaL_checkudata(L, 1, SL_SEM_MT);
  if (b->ok) sl_sem_free(&b->m);
  b->ok = 0;
  return 0;
}

/* The number at idx when it is a finite number (not a string). */
static int finite_at(lua_State *L, int idx, double *x) {
  if (lua_type(L, idx) != LUA_TNUMBER) return 0;
  *x = lua_tonumber(L, idx);
  return isfinite(*x);
}

/* The whole number at idx, from lo to hi (integral floats count). */
static int whole_at(lua_State *L, int idx, lua_Integer lo, lua_Integer hi, lua_Integer *out) {
  if (lua_type(L, idx) != LUA_TNUMBER) return 0;
  if (lua_isinteger(L, idx)) *out = lua_tointeger(L, idx);
  else {
    lua_Number x = lua_tonumber(L, idx);
    if (!(x >= -9.2e18 && x <= 9.2e18) || x != (lua_Number)(lua_Integer)x) return 0;
    *out = (lua_Integer)x;
  }
  return *out >= lo && *out <= hi;
}

/* Parse an edge key ("a -> b" or "a <-> b") against g: ids and kind. */
static void edge_key(lua_State *L, const sl_graph *g, const char *key, int want,
                     int32_t *from, int32_t *to) {
  sl_error e;
  sl_graph *k = sl_graph_parse(key, strlen(key), &e);
  size_t nd = k ? sl_graph_ndirected(k) : 0, nb = k ? sl_graph_nbidirected(k) : 0;
  if (!k || nd + nb != 1 || (want == SL_DIRECTED ? nd != 1 : nb != 1)) {
    if (k) sl_graph_free(k);
    luaL_error(L, "sem: '%s' is not an edge: write it as \"a %s b\"", key,
               want == SL_DIRECTED ? "->" : "<->");
  }
  sl_edge ed;
  sl_graph_edges(k, &ed);
  const char *fa = sl_graph_name(k, ed.from), *ta = sl_graph_name(k, ed.to);
  int32_t f = sl_graph_lookup(g, fa, strlen(fa), &e);
  int32_t t = f < 0 ? -1 : sl_graph_lookup(g, ta, strlen(ta), &e);
  if (f < 0 || t < 0) { sl_graph_free(k); luaL_error(L, "sem: in '%s': %s", key, e.msg); }
  size_t cnt;
  const int32_t *adj = want == SL_DIRECTED ? sl_graph_children(g, f, &cnt) : sl_graph_siblings(g, f, &cnt);
  size_t i = 0;
  while (i < cnt && adj[i] != t) i++;
  sl_graph_free(k);
  if (i == cnt) luaL_error(L, "sem: the graph has no edge %s", key);
  *from = f; *to = t;
}

/* A node id from a name, with the suggestion error. */
static int32_t node(lua_State *L, const sl_graph *g, const char *name, const char *what) {
  sl_error e;
  int32_t v = sl_graph_lookup(g, name, strlen(name), &e);
  if (v < 0) luaL_error(L, "sem: %s: %s", what, e.msg);
  return v;
}

/* Iterate over the table opts[field] of name = number pairs. */
static void node_numbers(lua_State *L, const sl_graph *g, int opts, const char *field,
                         double *out, int positive, const char *fname) {
  if (lua_isnoneornil(L, opts)) return;
  if (lua_getfield(L, opts, field) == LUA_TNIL) { lua_pop(L, 1); return; }
  if (!lua_istable(L, -1))
    luaL_error(L, "%s: %s = must be a table of node = number, got %s", fname, field,
               sl_bind_value_text(L, -1));
  lua_pushnil(L);
  while (lua_next(L, -2)) {
    if (lua_type(L, -2) != LUA_TSTRING)
      luaL_error(L, "%s: %s = is keyed by node names, not by %s", fname, field, sl_bind_value_text(L, -2));
    int32_t v = node(L, g, lua_tostring(L, -2), field);
    double x = 0;
    if (!finite_at(L, -1, &x))
      luaL_error(L, "%s: %s of '%s' = %s must be a finite number", fname, field,
                 sl_graph_name(g, v), sl_bind_value_text(L, -1));
    if (positive && !(x > 0))
      luaL_error(L, "%s: the %s of '%s' must be positive, got %s", fname, field,
                 sl_graph_name(g, v), sl_bind_value_text(L, -1));
    out[v] = x;
    lua_pop(L, 1);
  }
  lua_pop(L, 1);
}

/* Fill the model arrays from (g, coefs, opts) at stack 1..3. */
static void build(lua_State *L, sem_box *box) {
  sl_graph *g = sl_bind_checkgraph(L, 1);
  luaL_checktype(L, 2, LUA_TTABLE);
  if (!lua_isnoneornil(L, 3)) luaL_checktype(L, 3, LUA_TTABLE);
  size_t n = sl_graph_nnodes(g);
  double *B = lua_newuserdatauv(L, (n ? n * n : 1) * sizeof *B, 0);
  double *om = lua_newuserdatauv(L, (n ? n * n : 1) * sizeof *om, 0);
  double *a = lua_newuserdatauv(L, (n ? n : 1) * sizeof *a, 0);
  double *sd = lua_newuserdatauv(L, (n ? n : 1) * sizeof *sd, 0);
  double *cut = lua_newuserdatauv(L, (n ? n : 1) * sizeof *cut, 0);
  unsigned char *have = lua_newuserdatauv(L, n ? n * n : 1, 0);
  memset(B, 0, n * n * sizeof *B); memset(om, 0, n * n * sizeof *om); memset(have, 0, n * n);
  for (size_t i = 0; i < n; i++) { a[i] = 0; sd[i] = 1; cut[i] = NAN; }
  static const char *const known[] = {"default", "intercept", "sd", "cov", "binary", "binarize"};
  sl_bind_check_options(L, 3, "sem", known, sizeof known / sizeof *known);
  /* coefficients */
  int def = !lua_isnoneornil(L, 3) && lua_getfield(L, 3, "default") != LUA_TNIL;
  double defval = 0;
  if (def && !finite_at(L, -1, &defval))
    luaL_error(L, "sem: default = %s must be a finite number (the coefficient of each edge "
               "not listed)", sl_bind_value_text(L, -1));
  if (!lua_isnoneornil(L, 3)) lua_pop(L, 1);
  lua_pushnil(L);
  while (lua_next(L, 2)) {
    if (lua_type(L, -2) != LUA_TSTRING) luaL_error(L, "sem: coefficients are keyed by edges such as [\"a -> b\"]");
    int32_t f, t;
    edge_key(L, g, lua_tostring(L, -2), SL_DIRECTED, &f, &t);
    double c = 0;
    const char *key = lua_tostring(L, -2);
    if (!finite_at(L, -1, &c))
      luaL_error(L, "sem: the coefficient of %s = %s must be a finite number", key,
                 sl_bind_value_text(L, -1));
    B[(size_t)t * n + (size_t)f] = c;
    have[(size_t)t * n + (size_t)f] = 1;
    lua_pop(L, 1);
  }
  for (size_t v = 0; v < n; v++) {   /* every edge needs a coefficient */
    size_t k;
    const int32_t *ch = sl_graph_children(g, (int32_t)v, &k);
    for (size_t i = 0; i < k; i++)
      if (!have[(size_t)ch[i] * n + v]) {
        if (def) { B[(size_t)ch[i] * n + v] = defval; continue; }
        sl_buf nb;
        sl_buf_init(&nb);
        sl_name_write(sl_graph_name(g, (int32_t)v), &nb);
        sl_buf_adds(&nb, " -> ");
        sl_name_write(sl_graph_name(g, ch[i]), &nb);
        lua_pushstring(L, nb.data ? nb.data : "?");
        sl_buf_free(&nb);
        luaL_error(L, "sem: no coefficient for the edge %s (or give opts.default)", lua_tostring(L, -1));
      }
  }
  node_numbers(L, g, 3, "intercept", a, 0, "sem");
  node_numbers(L, g, 3, "sd", sd, 1, "sem");
  node_numbers(L, g, 3, "binarize", cut, 0, "sem");
  for (size_t i = 0; i < n; i++) om[i * n + i] = sd[i] * sd[i];
  /* covariances of <-> pairs: each needs one */
  if (!lua_isnoneornil(L, 3) && lua_getfield(L, 3, "cov") != LUA_TNIL) {
    if (!lua_istable(L, -1)) luaL_error(L, "sem: cov = must be a table of [\"a <-> b\"] = covariance");
    int ct = lua_gettop(L);
    lua_pushnil(L);
    while (lua_next(L, ct)) {
      if (lua_type(L, -2) != LUA_TSTRING) luaL_error(L, "sem: cov is keyed by edges such as [\"a <-> b\"]");
      int32_t f, t;
      edge_key(L, g, lua_tostring(L, -2), SL_BIDIRECTED, &f, &t);
      double c = 0;
      const char *key = lua_tostring(L, -2);
      if (!finite_at(L, -1, &c))
        luaL_error(L, "sem: the covariance of %s = %s must be a finite number", key,
                   sl_bind_value_text(L, -1));
      om[(size_t)f * n + (size_t)t] = om[(size_t)t * n + (size_t)f] = c;
      have[(size_t)f * n + (size_t)t] = have[(size_t)t * n + (size_t)f] = 2;
      lua_pop(L, 1);
    }
  }
  if (!lua_isnoneornil(L, 3)) lua_pop(L, 1);
  for (size_t v = 0; v < n; v++) {
    size_t k;
    const int32_t *sb = sl_graph_siblings(g, (int32_t)v, &k);
    for (size_t i = 0; i < k; i++)
      if (have[v * n + (size_t)sb[i]] != 2)
        luaL_error(L, "sem: no covariance for %s <-> %s: give cov = {[\"%s <-> %s\"] = value}",
                   sl_graph_name(g, (int32_t)v), sl_graph_name(g, sb[i]),
                   sl_graph_name(g, (int32_t)v), sl_graph_name(g, sb[i]));
  }
  /* binary nodes through a logistic link */
  unsigned char *logi = lua_newuserdatauv(L, n ? n : 1, 0);
  memset(logi, 0, n ? n : 1);
  if (!lua_isnoneornil(L, 3) && lua_getfield(L, 3, "binary") != LUA_TNIL) {
    int bt = lua_gettop(L);
    if (lua_type(L, bt) == LUA_TSTRING) logi[node(L, g, lua_tostring(L, bt), "binary")] = 1;
    else if (!lua_istable(L, bt))
      luaL_error(L, "sem: binary = must be a node name or a list of names, got %s", sl_bind_value_text(L, bt));
    else {
      lua_pushnil(L);
      while (lua_next(L, bt)) {   /* {"a", "b"} or {a = true} */
        int listed = lua_type(L, -2) == LUA_TNUMBER && lua_type(L, -1) == LUA_TSTRING;
        int keyed = lua_type(L, -2) == LUA_TSTRING && lua_type(L, -1) == LUA_TBOOLEAN;
        if (!listed && !keyed)
          luaL_error(L, "sem: binary = must list node names, such as {\"a\", \"b\"}");
        if (listed || lua_toboolean(L, -1))
          logi[node(L, g, lua_tostring(L, listed ? -1 : -2), "binary")] = 1;
        lua_pop(L, 1);
      }
    }
  }
  if (!lua_isnoneornil(L, 3)) lua_pop(L, 1);
  const char **names = lua_newuserdatauv(L, (n ? n : 1) * sizeof *names, 0);
  unsigned char *obs = lua_newuserdatauv(L, n ? n : 1, 0);
  int32_t *order = lua_newuserdatauv(L, (n ? n : 1) * sizeof *order, 0);
  for (size_t v = 0; v < n; v++) { names[v] = sl_graph_name(g, (int32_t)v); obs[v] = !sl_graph_is_hidden(g, (int32_t)v); }
  sl_graph_order(g, order);
  sl_error e;
  if (sl_sem_init(&box->m, n, names, obs, B, a, om, cut, logi, order, &e) != SL_OK)
    luaL_error(L, "sem: %s", e.msg);
  box->ok = 1;
}

/* sem(g, coefs, opts) */
static int l_sem(lua_State *L) {
  sl_bind_checkgraph(L, 1);
  lua_settop(L, 3);
  sem_box *box = lua_newuserdatauv(L, sizeof *box, 1);
  memset(box, 0, sizeof *box);
  luaL_setmetatable(L, SL_SEM_MT);
  int at = lua_gettop(L);
  build(L, box);
  lua_settop(L, at);
  lua_pushvalue(L, 1);
  lua_setiuservalue(L, at, 1);
  /* keep the arguments for simulate's binarize, which rebuilds */
  return 1;
}

/* The graph and a node id of the model from an argument name. */
static int32_t model_node(lua_State *L, int arg, int uidx) {
  lua_getiuservalue(L, uidx, 1);
  sl_graph *g = sl_bind_checkgraph(L, -1);
  lua_pop(L, 1);
  const char *nm = luaL_checkstring(L, arg);
  sl_error e;
  int32_t v = sl_graph_lookup(g, nm, strlen(nm), &e);
  if (v < 0) luaL_argerror(L, arg, e.msg);
  if (sl_graph_is_hidden(g, v)) luaL_argerror(L, arg, "a hidden node has no data");
  return v;
}

/* {draws=, seed=} at idx: draws (0 when absent) and seed. */
static size_t mc_opts(lua_State *L, int idx, uint64_t *seed, const char *fname) {
  static const char *const known[] = {"draws", "seed"};
  *seed = 1;
  if (lua_isnoneornil(L, idx)) return 0;
  sl_bind_check_options(L, idx, fname, known, 2);
  lua_Integer v = 0;
  if (lua_getfield(L, idx, "seed") != LUA_TNIL) {
    if (!whole_at(L, -1, LUA_MININTEGER, LUA_MAXINTEGER, &v))
      luaL_error(L, "%s: seed = %s must be a whole number", fname, sl_bind_value_text(L, -1));
    *seed = (uint64_t)v;
  }
  lua_pop(L, 1);
  v = 0;
  if (lua_getfield(L, idx, "draws") != LUA_TNIL && !whole_at(L, -1, 2, MC_DRAWS_MAX, &v))
    luaL_error(L, "%s: draws = %s must be a whole number from 2 to %d", fname,
               sl_bind_value_text(L, -1), MC_DRAWS_MAX);
  lua_pop(L, 1);
  return (size_t)v;
}

static const char *not_exact =
  "the model has binary or binarized nodes, so the exact linear value does not hold; "
  "give {draws = 100000} for a Monte Carlo value and its standard error";

/* m:effect(x, y, {draws=, seed=}) */
static int l_effect(lua_State *L) {
  sem_box *b = check_sem(L, 1);
  lua_settop(L, 4);
  int32_t x = model_node(L, 2, 1), y = model_node(L, 3, 1);
  uint64_t seed;
  size_t draws = mc_opts(L, 4, &seed, "effect");
  sl_error e;
  double v, se;
  if (b->m.exact && !draws) {
    if (sl_sem_effect(&b->m, x, y, &v, &e)) return sl_bind_raise(L, &e, "effect", NULL, 0);
    lua_pushnumber(L, v);
    return 1;
  }
  if (!draws) return luaL_error(L, "effect: %s", not_exact);
  if (sl_sem_effect_mc(&b->m, x, y, draws, seed, &v, &se, &e)) return sl_bind_raise(L, &e, "effect", NULL, 0);
  lua_pushnumber(L, v);
  lua_pushnumber(L, se);
  return 2;
}

/* m:limit(x, y, set, {draws=, seed=}) */
static int l_limit(lua_State *L) {
  sem_box *b = check_sem(L, 1);
  lua_settop(L, 5);
  int32_t x = model_node(L, 2, 1), y = model_node(L, 3, 1);
  lua_getiuservalue(L, 1, 1);
  sl_graph *g = sl_bind_checkgraph(L, -1);
  lua_pop(L, 1);
  size_t k;
  int32_t *ids = sl_bind_checkset(L, g, 4, &k, 1);
  int *set = lua_newuserdatauv(L, (k ? k : 1) * sizeof *set, 0);
  for (size_t i = 0; i < k; i++) {
    if (ids[i] == x || ids[i] == y) luaL_argerror(L, 4, "the set may not hold the treatment or the outcome");
    if (sl_graph_is_hidden(g, ids[i])) luaL_argerror(L, 4, "a hidden node has no data");
    set[i] = ids[i];
  }
  uint64_t seed;
  size_t draws = mc_opts(L, 5, &seed, "limit");
  sl_error e;
  double v, se;
  if (b->m.exact && !draws) {
    if (sl_sem_limit(&b->m, x, y, set, k, &v, &e)) return sl_bind_raise(L, &e, "limit", NULL, 0);
    lua_pushnumber(L, v);
    return 1;
  }
  if (!draws) return luaL_error(L, "limit: %s", not_exact);
  if (sl_sem_limit_mc(&b->m, x, y, set, k, draws, seed, &v, &se, &e))
    return sl_bind_raise(L, &e, "limit", NULL, 0);
  lua_pushnumber(L, v);
  lua_pushnumber(L, se);
  return 2;
}

/* m:cov(): a table of tables keyed by the observed names. */
static int l_cov(lua_State *L) {
  sem_box *b = check_sem(L, 1);
  size_t n = b->m.n;
  double *s = lua_newuserdatauv(L, (n ? n * n : 1) * sizeof *s, 0);
  sl_error e;
  if (sl_sem_cov(&b->m, s, &e)) return sl_bind_raise(L, &e, "cov", NULL, 0);
  lua_newtable(L);
  lua_newtable(L);                       /* .names in order */
  int k = 0;
  for (size_t i = 0; i < n; i++)
    if (b->m.observed[i]) { lua_pushstring(L, b->m.names[i]); lua_rawseti(L, -2, ++k); }
  lua_setfield(L, -2, "names");
  for (size_t i = 0; i < n; i++) {
    if (!b->m.observed[i]) continue;
    lua_newtable(L);
    for (size_t j = 0; j < n; j++) {
      if (!b->m.observed[j]) continue;
      lua_pushnumber(L, s[i * n + j]);
      lua_setfield(L, -2, b->m.names[j]);
    }
    lua_setfield(L, -2, b->m.names[i]);
  }
  luaL_setmetatable(L, "sluice.matrix");
  return 1;
}

#define SIM_ROWS_MAX 1000000000   /* rows in one simulated frame */
#define SIM_THREADS_MAX 1024       /* more are accepted and run as 64 */

/* m:simulate(n, {seed=, threads=, binarize=}) */
static int l_simulate(lua_State *L) {
  static const char *const known[] = {"seed", "threads", "binarize"};
  sem_box *b = check_sem(L, 1);
  lua_settop(L, 3);
  lua_Integer rows = 0, v = 0;
  if (!whole_at(L, 2, 1, SIM_ROWS_MAX, &rows))
    luaL_error(L, "simulate: n = %s must be a whole number of at least 1 (at most 10^9)",
               sl_bind_value_text(L, 2));
  uint64_t seed = 1;
  int threads = 0, draw_exact = 1;
  double *draw_cut = NULL;
  sl_bind_check_options(L, 3, "simulate", known, 3);
  if (!lua_isnil(L, 3)) {
    if (lua_getfield(L, 3, "seed") != LUA_TNIL) {
      if (!whole_at(L, -1, LUA_MININTEGER, LUA_MAXINTEGER, &v))
        luaL_error(L, "simulate: seed = %s must be a whole number", sl_bind_value_text(L, -1));
      seed = (uint64_t)v;
    }
    if (lua_getfield(L, 3, "threads") != LUA_TNIL) {
      if (!whole_at(L, -1, 0, SIM_THREADS_MAX, &v))
        luaL_error(L, "simulate: threads = %s must be a whole number from 0 (all cores) to %d",
                   sl_bind_value_text(L, -1), SIM_THREADS_MAX);
      threads = (int)v;
    }
    lua_pop(L, 2);
    if (lua_getfield(L, 3, "binarize") != LUA_TNIL) {
      /* binarizing this draw only: the cuts go into a copy, which the
      ** model uses for the draw below and then drops (models are values) */
      if (!lua_istable(L, -1))
        luaL_error(L, "simulate: binarize = must be a table of node = cut, got %s", sl_bind_value_text(L, -1));
      lua_getiuservalue(L, 1, 1);
      sl_graph *g = sl_bind_checkgraph(L, -1);
      lua_pop(L, 1);
      double *cut = lua_newuserdatauv(L, (b->m.n ? b->m.n : 1) * sizeof *cut, 0);
      memcpy(cut, b->m.cut, b->m.n * sizeof *cut);
      lua_pushnil(L);
      while (lua_next(L, -3)) {
        if (lua_type(L, -2) != LUA_TSTRING)
          luaL_error(L, "simulate: binarize = is keyed by node names, not by %s", sl_bind_value_text(L, -2));
        const char *nm = lua_tostring(L, -2);
        sl_error e;
        int32_t id = sl_graph_lookup(g, nm, strlen(nm), &e);
        if (id < 0) luaL_error(L, "simulate: binarize: %s", e.msg);
        double x = 0;
        if (!finite_at(L, -1, &x))
          luaL_error(L, "simulate: binarize: the cut of '%s' = %s must be a finite number", nm,
                     sl_bind_value_text(L, -1));
        cut[id] = x;
        lua_pop(L, 1);
      }
      for (size_t i = 0; i < b->m.n; i++)
        if (!(isnan(cut[i]) && isnan(b->m.cut[i])) && cut[i] != b->m.cut[i]) draw_exact = 0;
      draw_cut = cut;   /* stays on the stack, so alive, until the draw is done */
    }
  }
  sl_error e;
  double *own_cut = b->m.cut;
  int own_exact = b->m.exact;
  b->m.cut = draw_cut ? draw_cut : own_cut;
  b->m.exact = own_exact && draw_exact;
  sl_frame *f = sl_sem_simulate(&b->m, (size_t)rows, seed, threads, &e);
  b->m.cut = own_cut;   /* restored before any error can leave this function */
  b->m.exact = own_exact;
  if (!f) return sl_bind_raise(L, &e, "simulate", NULL, 0);
  sl_bind_pushframe(L, f);
  return 1;
}

/* Equations, one per node in causal order. */
static int l_tostring(lua_State *L) {
  sem_box *b = check_sem(L, 1);
  const sl_sem *m = &b->m;
  size_t n = m->n;
  sl_buf out;
  sl_buf_init(&out);
  sl_buf_addf(&out, "linear structural model on %zu nodes%s\n", n,
              m->exact ? "" : " (with binary or binarized nodes)");
  for (size_t k = 0; k < n; k++) {
    size_t i = (size_t)m->order[k];
    sl_buf_adds(&out, "  ");
    sl_name_write(m->names[i], &out);
    sl_buf_adds(&out, " = ");
    int terms = 0;
    if (m->a[i] != 0) { sl_buf_addf(&out, "%g", m->a[i]); terms++; }
    for (size_t j = 0; j < n; j++) {
      double c = m->B[i * n + j];
      if (c == 0) continue;
      sl_buf_addf(&out, terms ? (c < 0 ? " - %g " : " + %g ") : (c < 0 ? "-%g " : "%g "), fabs(c));
      sl_name_write(m->names[j], &out);
      terms++;
    }
    if (m->logistic[i]) sl_buf_adds(&out, terms ? "  (binary: logistic link)" : "0  (binary: logistic link)");
    else sl_buf_addf(&out, "%se (sd %g)", terms ? " + " : "", sqrt(m->omega[i * n + i]));
    if (!isnan(m->cut[i])) sl_buf_addf(&out, ", then 1 if above %g else 0", m->cut[i]);
    if (!m->observed[i]) sl_buf_adds(&out, "   [hidden]");
    sl_buf_adds(&out, "\n");
  }
  if (out.len) out.data[--out.len] = '\0';
  lua_pushstring(L, out.data ? out.data : "");
  sl_buf_free(&out);
  return 1;
}

/* m.graph: the graph of the model. */
static int l_graph(lua_State *L) {
  check_sem(L, 1);
  lua_getiuservalue(L, 1, 1);
  return 1;
}

/* m:exact(): whether the closed forms hold. */
static int l_exact(lua_State *L) {
  lua_pushboolean(L, check_sem(L, 1)->m.exact);
  return 1;
}

static const luaL_Reg methods[] = {
  {"effect", l_effect}, {"limit", l_limit}, {"cov", l_cov}, {"simulate", l_simulate},
  {"graph", l_graph}, {"exact", l_exact},
  {NULL, NULL}
};

int sl_open_sem(lua_State *L) {
  luaL_newmetatable(L, SL_SEM_MT);
  lua_pushcfunction(L, sem_gc); lua_setfield(L, -2, "__gc");
  lua_pushcfunction(L, l_tostring); lua_setfield(L, -2, "__tostring");
  luaL_newlib(L, methods);
  lua_setfield(L, -2, "__index");
  lua_pop(L, 1);
  luaL_newmetatable(L, "sluice.matrix");
  lua_pop(L, 1);
  lua_pushcfunction(L, l_sem);
  lua_setfield(L, -2, "sem");
  return 0;
}
