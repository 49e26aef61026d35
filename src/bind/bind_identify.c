/*
** bind_identify.c: g:identify(x, y, {given =}) and, on its result,
** r:latex() and r:evaluate(f, {at =, weights =}).  The result is a plain
** table (identified, formula, hedge, why, adjustment, frontdoor); the
** formula's tree stays in a userdata that a weak registry table ties to
** it.  The words (why, tostring) come from lua/sluice/identify.lua through
** the hooks.
*/
#include <stdlib.h>
#include <string.h>
#include "bind.h"
#include "bind_frame.h"
#include "identify.h"
#include "adjust.h"
#include "evaluate.h"

#define ID_MT    "sluice.identified"
#define DIST_MT  "sluice.distribution"
#define META     "sluice.identify.meta"   /* registry: weak table r -> box */
#define ADJUST_SCAN 1000                  /* minimal sets looked at for r.adjustment */

typedef struct id_box { sl_identification r; int live; } id_box;

static int box_gc(lua_State *L) {
  id_box *b = lua_touserdata(L, 1);
  if (b->live) sl_identification_free(&b->r);
  b->live = 0;
  return 0;
}

/* Raise "fname: message" (the caller's line first). */
static int fail(lua_State *L, const char *fname, const char *msg) {
  sl_error e;
  memset(&e, 0, sizeof e);
  e.code = SL_EARG;
  snprintf(e.msg, sizeof e.msg, "%s", msg);
  return sl_bind_raise(L, &e, fname, NULL, 0);
}

/* The weak table of the module's boxes, pushed. */
static void meta_table(lua_State *L) {
  if (luaL_getsubtable(L, LUA_REGISTRYINDEX, META)) return;
  lua_createtable(L, 0, 1);
  lua_pushliteral(L, "k");
  lua_setfield(L, -2, "__mode");
  lua_setmetatable(L, -2);
}

/* Push a list of variable names. */
static void push_vars(lua_State *L, const sl_graph *g, const sl_identification *r,
                      const int32_t *v, size_t n) {
  sl_bind_newlist(L, (int)n);
  const char **names = malloc((n ? n : 1) * sizeof *names);
  if (!names) luaL_error(L, "out of memory");
  for (size_t i = 0; i < n; i++) names[i] = sl_graph_name(g, r->var_node[v[i]]);
  for (size_t i = 1; i < n; i++)          /* name order, as every set prints */
    for (size_t j = i; j > 0 && strcmp(names[j], names[j - 1]) < 0; j--) {
      const char *t = names[j]; names[j] = names[j - 1]; names[j - 1] = t;
    }
  for (size_t i = 0; i < n; i++) { lua_pushstring(L, names[i]); lua_rawseti(L, -2, (lua_Integer)i + 1); }
  free(names);
}

/* Call hooks[name] with the values at the top n slots; leaves nothing. */
static void call_hook(lua_State *L, const char *name, int n) {
  lua_getfield(L, LUA_REGISTRYINDEX, SL_HOOKS);
  if (lua_getfield(L, -1, name) != LUA_TFUNCTION) { lua_pop(L, 2 + n); return; }
  lua_remove(L, -2);
  lua_insert(L, -(n + 1));
  lua_call(L, n, 0);
}

typedef struct best_set { int32_t *v; size_t n; int found; lua_Integer seen; const sl_graph *g; } best_set;

/* Names of two sets compared (size first). */
static int smaller(const sl_graph *g, const int32_t *a, size_t na, const int32_t *b, size_t nb) {
  if (na != nb) return na < nb;
  for (size_t i = 0; i < na; i++) {
    int c = strcmp(sl_graph_name(g, a[i]), sl_graph_name(g, b[i]));
    if (c) return c < 0;
  }
  return 0;
}

static int on_adjust(void *ctx, const int32_t *set, size_t n) {
  best_set *b = ctx;
  if (!b->found || smaller(b->g, set, n, b->v, b->n)) {
    int32_t *c = realloc(b->v, (n ? n : 1) * sizeof *c);
    if (!c) return 1;
    if (n) memcpy(c, set, n * sizeof *c);
    b->v = c;
    b->n = n;
    b->found = 1;
  }
  return ++b->seen >= ADJUST_SCAN;
}

/* r.adjustment: the smallest minimal adjustment set (by size, then names). */
static void set_adjustment(lua_State *L, const sl_graph *g, const int32_t *x, size_t nx,
                           const int32_t *y, size_t ny) {
  sl_effect q;
  sl_error e;
  if (sl_effect_init(&q, g, x, nx, y, ny, &e)) return;
  best_set b = {NULL, 0, 0, 0, g};
  int none = 0;
  sl_bind_stop = 0;
  sl_adjust_each(&q, NULL, NULL, on_adjust, &b, &none, NULL, &sl_bind_stop, &e);
  sl_effect_free(&q);
  if (b.found && !none) {
    sl_bind_newlist(L, (int)b.n);
    for (size_t i = 0; i < b.n; i++) {
      lua_pushstring(L, sl_graph_name(g, b.v[i]));
      lua_rawseti(L, -2, (lua_Integer)i + 1);
    }
    lua_setfield(L, -2, "adjustment");
  }
  free(b.v);
}

/* The given option: a node name or a list of names (ids in a userdata). */
static int32_t *given_set(lua_State *L, const sl_graph *g, size_t *n) {
  *n = 0;
  if (lua_isnil(L, 4)) return NULL;
  if (!lua_istable(L, 4))
    fail(L, "identify", lua_pushfstring(L, "the options are a table such as {given = ...}, got %s",
                                        luaL_typename(L, 4)));
  lua_pushnil(L);
  while (lua_next(L, 4)) {
    lua_pop(L, 1);
    if (lua_type(L, -1) != LUA_TSTRING || strcmp(lua_tostring(L, -1), "given") != 0) {
      const char *k = lua_type(L, -1) == LUA_TSTRING ? lua_tostring(L, -1) : sl_bind_value_text(L, -1);
      static const char *const known[] = {"given"};
      const char *near = sl_closest(k, known, 1);
      fail(L, "identify", near ? lua_pushfstring(L, "unknown option '%s'; did you mean 'given'?", k)
                               : lua_pushfstring(L, "unknown option '%s' (options: given)", k));
    }
  }
  lua_getfield(L, 4, "given");
  int t = lua_type(L, -1);
  if (t == LUA_TNIL) { lua_pop(L, 1); return NULL; }
  if (t != LUA_TSTRING && t != LUA_TTABLE)
    fail(L, "identify", lua_pushfstring(L, "given = must be a node name or a list of names, got %s",
                                        luaL_typename(L, -1)));
  size_t len = t == LUA_TSTRING ? 1 : (size_t)luaL_len(L, -1);
  if (len > sl_graph_nnodes(g) * 4 + 16) fail(L, "identify", "given = holds more names than the graph could");
  int32_t *v = lua_newuserdatauv(L, (len ? len : 1) * sizeof *v, 0);
  for (size_t i = 0; i < len; i++) {
    if (t == LUA_TTABLE) lua_geti(L, -2, (lua_Integer)i + 1); else lua_pushvalue(L, -2);
    if (lua_type(L, -1) != LUA_TSTRING)
      fail(L, "identify", lua_pushfstring(L, "given = item %d is a %s, not a node name", (int)i + 1,
                                          luaL_typename(L, -1)));
    size_t nl;
    const char *name = lua_tolstring(L, -1, &nl);
    sl_error e;
    if ((v[i] = sl_graph_lookup(g, name, nl, &e)) < 0)
      fail(L, "identify", lua_pushfstring(L, "given: %s", e.msg));
    lua_pop(L, 1);
  }
  *n = len;
  return v;
}

/* g:identify(x, y, {given = z}) */
static int l_identify(lua_State *L) {
  sl_graph *g = sl_bind_checkgraph(L, 1);
  lua_settop(L, 4);
  size_t nx, ny, nz;
  int32_t *x = sl_bind_checkset(L, g, 2, &nx, 0);
  int32_t *y = sl_bind_checkset(L, g, 3, &ny, 0);
  int32_t *z = given_set(L, g, &nz);
  if (nx == 0) luaL_argerror(L, 2, "the treatment set is empty");
  if (ny == 0) luaL_argerror(L, 3, "the outcome set is empty");
  for (size_t i = 0; i < nx; i++)
    if (sl_graph_is_hidden(g, x[i]))
      luaL_argerror(L, 2, lua_pushfstring(L, "'%s' is hidden: a treatment must be observed (it is never measured)",
                                          sl_graph_name(g, x[i])));
  for (size_t i = 0; i < ny; i++)
    if (sl_graph_is_hidden(g, y[i]))
      luaL_argerror(L, 3, lua_pushfstring(L, "'%s' is hidden: an outcome must be observed",
                                          sl_graph_name(g, y[i])));
  for (size_t i = 0; i < nz; i++) {
    if (sl_graph_is_hidden(g, z[i]))
      fail(L, "identify", lua_pushfstring(L, "given = '%s' is hidden: only observed nodes can be conditioned on",
                                          sl_graph_name(g, z[i])));
    for (size_t j = 0; j < nx; j++)
      if (z[i] == x[j]) fail(L, "identify", lua_pushfstring(L, "given = '%s' is also a treatment", sl_graph_name(g, z[i])));
    for (size_t j = 0; j < ny; j++)
      if (z[i] == y[j]) fail(L, "identify", lua_pushfstring(L, "given = '%s' is also an outcome", sl_graph_name(g, z[i])));
  }
  for (size_t i = 0; i < nx; i++)
    for (size_t j = 0; j < ny; j++)
      if (x[i] == y[j]) luaL_error(L, "'%s' is both a treatment and an outcome", sl_graph_name(g, x[i]));
  id_box *b = lua_newuserdatauv(L, sizeof *b, 1);
  memset(b, 0, sizeof *b);
  if (luaL_newmetatable(L, "sluice.identify.box")) {
    lua_pushcfunction(L, box_gc);
    lua_setfield(L, -2, "__gc");
  }
  lua_setmetatable(L, -2);
  lua_pushvalue(L, 1);
  lua_setiuservalue(L, -2, 1);             /* the graph outlives the box */
  int box = lua_gettop(L);
  sl_error e;
  sl_bind_stop = 0;
  if (sl_identify(g, x, nx, y, ny, z, nz, &b->r, &sl_bind_stop, &e))
    return sl_bind_raise(L, &e, "identify", NULL, 0);
  b->live = 1;
  const sl_identification *r = &b->r;
  lua_createtable(L, 0, 10);
  int rt = lua_gettop(L);
  lua_pushboolean(L, r->identified);
  lua_setfield(L, rt, "identified");
  char *text = sl_identification_text(r, g, 0);
  if (!text) return luaL_error(L, "identify: the formula is too long to print (over %d bytes)", (int)SL_ID_MAX_TEXT);
  lua_pushstring(L, text);
  free(text);
  lua_setfield(L, rt, "formula");
  push_vars(L, g, r, r->x, r->nx);
  lua_setfield(L, rt, "treatment");
  push_vars(L, g, r, r->y, r->ny);
  lua_setfield(L, rt, "outcome");
  push_vars(L, g, r, r->z, r->nz);
  lua_setfield(L, rt, "given");
  if (!r->identified) {
    lua_createtable(L, 0, 2);
    push_vars(L, g, r, r->hedge_f, r->nf);
    lua_setfield(L, -2, "f");
    push_vars(L, g, r, r->hedge_f2, r->nf2);
    lua_setfield(L, -2, "f2");
    push_vars(L, g, r, r->hedge_x, r->nhx);
    lua_setfield(L, -2, "treatment");
    push_vars(L, g, r, r->hedge_y, r->nhy);
    lua_setfield(L, -2, "outcome");
    lua_setfield(L, rt, "hedge");
  } else if (nz == 0) {
    set_adjustment(L, g, x, nx, y, ny);
  }
  luaL_setmetatable(L, ID_MT);
  meta_table(L);
  lua_pushvalue(L, rt);
  lua_pushvalue(L, box);
  lua_rawset(L, -3);
  lua_pop(L, 1);
  lua_pushvalue(L, 1);
  lua_pushvalue(L, rt);
  call_hook(L, "identify_finish", 2);     /* r.why, r.frontdoor */
  lua_settop(L, rt);
  return 1;
}

/* The box of a result at arg, or an argument error. */
static id_box *check_result(lua_State *L, int arg, const sl_graph **g) {
  meta_table(L);
  lua_pushvalue(L, arg);
  if (lua_rawget(L, -2) != LUA_TUSERDATA)
    luaL_argerror(L, arg, "a result of g:identify expected");
  id_box *b = lua_touserdata(L, -1);
  lua_getiuservalue(L, -1, 1);
  *g = sl_bind_checkgraph(L, lua_gettop(L));
  lua_pop(L, 3);
  return b;
}

/* r:latex() */
static int l_latex(lua_State *L) {
  const sl_graph *g;
  id_box *b = check_result(L, 1, &g);
  char *text = sl_identification_text(&b->r, g, 1);
  if (!text) return luaL_error(L, "latex: the formula is too long to print");
  lua_pushstring(L, text);
  free(text);
  return 1;
}

/* The eval workspace, owned by a userdata so that an error frees it. */
static int eval_gc(lua_State *L) {
  sl_eval **p = lua_touserdata(L, 1);
  sl_eval_free(*p);
  *p = NULL;
  return 0;
}

/* The level index of the value at the top of the stack for variable v. */
static int32_t at_level(lua_State *L, sl_eval *w, int32_t v, const char *name) {
  int t = lua_type(L, -1);
  long k = -1;
  if (t == LUA_TNUMBER || t == LUA_TSTRING) {
    size_t nl = sl_eval_nlevels(w, v);
    int is_number = 0;
    double num;
    if (nl) sl_eval_level(w, v, 0, &is_number, &num);
    if (is_number) {
      int ok;
      lua_Number x = lua_tonumberx(L, -1, &ok);
      if (ok) k = sl_eval_find(w, v, NULL, (double)x);
    } else {
      const char *s = t == LUA_TNUMBER ? luaL_tolstring(L, -1, NULL) : lua_tostring(L, -1);
      k = sl_eval_find(w, v, s, 0);
      if (t == LUA_TNUMBER) lua_pop(L, 1);
    }
  }
  if (k >= 0) return (int32_t)k;
  luaL_Buffer lb;
  luaL_buffinit(L, &lb);
  size_t nl = sl_eval_nlevels(w, v);
  for (size_t i = 0; i < nl && i < 20; i++) {
    int is_number;
    double num;
    if (i) luaL_addstring(&lb, ", ");
    luaL_addstring(&lb, sl_eval_level(w, v, i, &is_number, &num));
  }
  if (nl > 20) luaL_addstring(&lb, ", ...");
  luaL_pushresult(&lb);
  const char *shown = t == LUA_TSTRING ? lua_pushfstring(L, "\"%s\"", lua_tostring(L, -2))
                      : t == LUA_TNUMBER ? luaL_tolstring(L, -2, NULL)
                      : lua_pushfstring(L, "a %s", luaL_typename(L, -2));
  return fail(L, "evaluate", lua_pushfstring(L, "at: %s = %s is not a value of column '%s' (its values: %s)",
                                             name, shown, name, lua_tostring(L, -2)));
}

/* r:evaluate(f, {at = {x = v, ...}, weights = "column"}) */
static int l_evaluate(lua_State *L) {
  const sl_graph *g;
  lua_settop(L, 3);
  id_box *b = check_result(L, 1, &g);
  const sl_identification *r = &b->r;
  if (!r->identified)
    return fail(L, "evaluate", "the effect is not identified (see r.why): there is no formula to evaluate");
  sl_frame *f = sl_bind_checkframe(L, 2);
  if (!lua_istable(L, 3))
    return fail(L, "evaluate", lua_pushfstring(L, "the options are a table such as {at = {%s = value}}, got %s",
                                               sl_graph_name(g, r->var_node[r->x[0]]), luaL_typename(L, 3)));
  lua_pushnil(L);
  while (lua_next(L, 3)) {
    lua_pop(L, 1);
    const char *k = lua_type(L, -1) == LUA_TSTRING ? lua_tostring(L, -1) : sl_bind_value_text(L, -1);
    if (strcmp(k, "at") && strcmp(k, "weights")) {
      static const char *const known[] = {"at", "weights"};
      const char *near = sl_closest(k, known, 2);
      fail(L, "evaluate", near ? lua_pushfstring(L, "unknown option '%s'; did you mean '%s'?", k, near)
                               : lua_pushfstring(L, "unknown option '%s' (options: at, weights)", k));
    }
  }
  /* a wrong at = is named before the data are looked at */
  if (lua_getfield(L, 3, "at") != LUA_TTABLE)
    fail(L, "evaluate", lua_pushfstring(L, "at = must be a table such as {%s = value}, got %s",
                                        sl_graph_name(g, r->var_node[r->x[0]]), sl_bind_value_text(L, -1)));
  lua_pop(L, 1);
  size_t nv = r->nvar;
  const char **names = lua_newuserdatauv(L, (nv ? nv : 1) * sizeof *names, 0);
  int *col = lua_newuserdatauv(L, (nv ? nv : 1) * sizeof *col, 0);
  unsigned char *used = lua_newuserdatauv(L, nv ? nv : 1, 0);
  int32_t *val = lua_newuserdatauv(L, (nv ? nv : 1) * sizeof *val, 0);
  memset(used, 0, nv ? nv : 1);
  sl_eval_used(r->expr, used);
  for (size_t i = 0; i < r->nx; i++) used[r->x[i]] = 1;
  for (size_t i = 0; i < r->ny; i++) used[r->y[i]] = 1;
  for (size_t i = 0; i < r->nz; i++) used[r->z[i]] = 1;
  for (size_t v = 0; v < nv; v++) {
    names[v] = sl_graph_name(g, r->var_node[v]);
    col[v] = -1;
    val[v] = 0;
    if (!used[v]) continue;
    sl_error e;
    if ((col[v] = sl_frame_lookup(f, names[v], &e)) < 0)
      fail(L, "evaluate", lua_pushfstring(L, "the formula needs the variable '%s': %s", names[v], e.msg));
  }
  int wcol = -1;
  if (lua_getfield(L, 3, "weights") != LUA_TNIL) {
    if (lua_type(L, -1) != LUA_TSTRING)
      fail(L, "evaluate", lua_pushfstring(L, "weights = must be a column name, got %s", luaL_typename(L, -1)));
    sl_error e;
    if ((wcol = sl_frame_lookup(f, lua_tostring(L, -1), &e)) < 0)
      fail(L, "evaluate", lua_pushfstring(L, "weights = %s", e.msg));
  }
  lua_pop(L, 1);
  sl_eval **wp = lua_newuserdatauv(L, sizeof *wp, 0);
  *wp = NULL;
  lua_createtable(L, 0, 1);
  lua_pushcfunction(L, eval_gc);
  lua_setfield(L, -2, "__gc");
  lua_setmetatable(L, -2);
  sl_error e;
  sl_bind_stop = 0;
  if (!(*wp = sl_eval_alloc(r->expr, nv, f, col, names, wcol, &sl_bind_stop, &e)))
    return sl_bind_raise(L, &e, "evaluate", NULL, 0);
  sl_eval *w = *wp;
  /* at: a value for every treatment and condition, nothing else */
  if (lua_getfield(L, 3, "at") != LUA_TTABLE)
    fail(L, "evaluate", lua_pushfstring(L, "at = must be a table such as {%s = value}, got %s",
                                        names[r->x[0]], luaL_typename(L, -1)));
  int at = lua_gettop(L);
  for (int s = 0; s < 2; s++) {
    const int32_t *v = s ? r->z : r->x;
    size_t n = s ? r->nz : r->nx;
    for (size_t i = 0; i < n; i++) {
      if (lua_getfield(L, at, names[v[i]]) == LUA_TNIL)
        fail(L, "evaluate", lua_pushfstring(L, "at = gives no value for '%s' (%s)", names[v[i]],
                                            s ? "a condition of the effect" : "a treatment"));
      val[v[i]] = at_level(L, w, v[i], names[v[i]]);
      lua_pop(L, 1);
    }
  }
  lua_pushnil(L);
  while (lua_next(L, at)) {
    lua_pop(L, 1);
    const char *k = lua_type(L, -1) == LUA_TSTRING ? lua_tostring(L, -1) : sl_bind_value_text(L, -1);
    int ok = 0;
    for (size_t i = 0; i < r->nx && !ok; i++) ok = strcmp(k, names[r->x[i]]) == 0;
    for (size_t i = 0; i < r->nz && !ok; i++) ok = strcmp(k, names[r->z[i]]) == 0;
    if (!ok)
      fail(L, "evaluate", lua_pushfstring(L, "at: '%s' is neither a treatment nor a condition of the effect", k));
  }
  /* one value per joint level of the outcomes */
  lua_createtable(L, 0, 4);
  int out = lua_gettop(L);
  sl_bind_newlist(L, 0);
  int keys = lua_gettop(L);
  lua_Integer nkeys = 0;
  for (size_t i = 0; i < r->ny; i++) val[r->y[i]] = 0;
  /* a key for several outcomes lists their values in name order */
  size_t *yorder = lua_newuserdatauv(L, (r->ny ? r->ny : 1) * sizeof *yorder, 0);
  lua_insert(L, out);
  out++;
  keys++;
  for (size_t i = 0; i < r->ny; i++) yorder[i] = i;
  for (size_t i = 1; i < r->ny; i++)
    for (size_t j = i; j > 0 && strcmp(names[r->y[yorder[j]]], names[r->y[yorder[j - 1]]]) < 0; j--) {
      size_t t = yorder[j]; yorder[j] = yorder[j - 1]; yorder[j - 1] = t;
    }
  for (;;) {
    double p;
    const sl_idx *gap;
    if (sl_eval_run(w, val, &p, &gap, &e)) {
      if (gap) {
        char *t = sl_idx_text(r, g, gap, 0);
        if (t) {
          size_t k = strlen(e.msg);
          snprintf(e.msg + k, sizeof e.msg - k, " (needed by %s)", t);
          free(t);
        }
      }
      return sl_bind_raise(L, &e, "evaluate", NULL, 0);
    }
    /* the key: the level (a number for a numeric column), or "a, b" */
    if (r->ny == 1) {
      int is_number;
      double num;
      const char *t = sl_eval_level(w, r->y[0], (size_t)val[r->y[0]], &is_number, &num);
      if (is_number && num == (double)(lua_Integer)num) lua_pushinteger(L, (lua_Integer)num);
      else if (is_number) lua_pushnumber(L, num);
      else lua_pushstring(L, t);
    } else {
      luaL_Buffer lb;
      luaL_buffinit(L, &lb);
      for (size_t i = 0; i < r->ny; i++) {
        int is_number;
        double num;
        int32_t v = r->y[yorder[i]];
        if (i) luaL_addstring(&lb, ", ");
        luaL_addstring(&lb, sl_eval_level(w, v, (size_t)val[v], &is_number, &num));
      }
      luaL_pushresult(&lb);
    }
    lua_pushvalue(L, -1);
    lua_rawseti(L, keys, ++nkeys);
    lua_pushnumber(L, p);
    lua_rawset(L, out);
    size_t i = 0;
    for (; i < r->ny; i++) {
      if ((size_t)++val[r->y[i]] < sl_eval_nlevels(w, r->y[i])) break;
      val[r->y[i]] = 0;
    }
    if (i == r->ny) break;
  }
  lua_pushvalue(L, out);
  luaL_setmetatable(L, DIST_MT);
  lua_pop(L, 1);
  /* what the table is, for its printing */
  lua_createtable(L, 0, 3);
  int meta = lua_gettop(L);
  lua_pushvalue(L, keys);
  lua_setfield(L, meta, "keys");
  lua_getfield(L, 1, "outcome");
  lua_setfield(L, meta, "outcome");
  lua_getfield(L, 1, "treatment");
  lua_setfield(L, meta, "treatment");
  lua_getfield(L, 1, "given");
  lua_setfield(L, meta, "given");
  lua_pushvalue(L, at);
  lua_setfield(L, meta, "at");
  meta_table(L);
  lua_pushvalue(L, out);
  lua_pushvalue(L, meta);
  lua_rawset(L, -3);
  lua_settop(L, out);
  return 1;
}

/* tostring through hooks[name](value, meta), else a fallback. */
static int hook_tostring(lua_State *L, const char *name) {
  lua_settop(L, 1);
  lua_getfield(L, LUA_REGISTRYINDEX, SL_HOOKS);
  if (lua_getfield(L, -1, name) == LUA_TFUNCTION) {
    lua_pushvalue(L, 1);
    meta_table(L);
    lua_pushvalue(L, 1);
    lua_rawget(L, -2);
    lua_remove(L, -2);
    lua_call(L, 2, 1);
    if (lua_type(L, -1) == LUA_TSTRING) return 1;
  }
  lua_settop(L, 1);
  if (lua_getfield(L, 1, "formula") == LUA_TSTRING) return 1;
  lua_pushliteral(L, "(a distribution)");
  return 1;
}
static int id_tostring(lua_State *L) { return hook_tostring(L, "identify_text"); }
static int dist_tostring(lua_State *L) { return hook_tostring(L, "distribution_text"); }

static const luaL_Reg result_methods[] = {
  {"latex", l_latex}, {"evaluate", l_evaluate}, {NULL, NULL}
};

int sl_open_identify(lua_State *L) {
  luaL_newmetatable(L, ID_MT);
  luaL_newlib(L, result_methods);
  lua_setfield(L, -2, "__index");
  lua_pushcfunction(L, id_tostring);
  lua_setfield(L, -2, "__tostring");
  lua_pop(L, 1);
  sl_bind_printable(L, DIST_MT, dist_tostring);
  static const luaL_Reg methods[] = {{"identify", l_identify}, {NULL, NULL}};
  sl_bind_graph_methods(L, methods);
  return 0;
}
