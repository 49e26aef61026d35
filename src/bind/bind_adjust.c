/*
** bind_adjust.c: trails, separation and adjustment sets as graph methods.
*/
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include "bind.h"
#include "notation.h"
#include "separation.h"
#include "adjust.h"

volatile int sl_bind_stop;

#define TRAIL_LIMIT 10000
#define SET_LIMIT 10000


/* Push an option field of the table at idx (or nil). */
static int opt_field(lua_State *L, int idx, const char *name) {
  if (lua_isnoneornil(L, idx)) { lua_pushnil(L); return LUA_TNIL; }
  return lua_getfield(L, idx, name);
}

/* The limit option of the options table at 4 (its value stays pushed at
** index 5, so later option fields keep their stack positions): a whole
** number of at least 1. */
static lua_Integer opt_limit(lua_State *L, const char *fname, lua_Integer def) {
  if (opt_field(L, 4, "limit") == LUA_TNIL) return def;
  lua_Integer limit = 0;
  int ok = lua_type(L, -1) == LUA_TNUMBER;
  if (ok && lua_isinteger(L, -1)) limit = lua_tointeger(L, -1);
  else if (ok) {
    lua_Number x = lua_tonumber(L, -1);
    ok = x == x && x >= 1 && x < 9.2e18 && x == (lua_Number)(lua_Integer)x;
    if (ok) limit = (lua_Integer)x;
  }
  if (!ok || limit < 1)
    sl_bind_opt_error(L, fname, "limit = %s must be a whole number of at least 1", sl_bind_value_text(L, 5));
  return limit;
}

/* A node set given as an option (a name or a list of names): ids in a
** userdata pushed on the stack; errors name the function and the option. */
static int32_t *opt_set(lua_State *L, const sl_graph *g, int idx, const char *fname,
                        const char *opt, size_t *n) {
  int t = lua_type(L, idx);
  size_t len = t == LUA_TSTRING ? 1 : t == LUA_TTABLE ? (size_t)luaL_len(L, idx) : 0;
  if (t != LUA_TNIL && t != LUA_TSTRING && t != LUA_TTABLE)
    sl_bind_opt_error(L, fname, "%s = must be a node name or a list of names, got %s", opt, sl_bind_value_text(L, idx));
  if (len > sl_graph_nnodes(g) * 4 + 16)
    sl_bind_opt_error(L, fname, "%s = holds more names than the graph could", opt);
  int32_t *v = lua_newuserdatauv(L, (len ? len : 1) * sizeof *v, 0);
  for (size_t i = 0; i < len; i++) {
    if (t == LUA_TTABLE) lua_geti(L, idx, (lua_Integer)i + 1); else lua_pushvalue(L, idx);
    if (lua_type(L, -1) != LUA_TSTRING)
      sl_bind_opt_error(L, fname, "%s = item %d is %s, not a node name", opt, (int)i + 1, sl_bind_value_text(L, -1));
    size_t nl;
    const char *name = lua_tolstring(L, -1, &nl);
    sl_error e;
    v[i] = sl_graph_lookup(g, name, nl, &e);
    if (v[i] < 0) sl_bind_opt_error(L, fname, "%s: %s", opt, e.msg);
    lua_pop(L, 1);
  }
  *n = len;
  return v;
}

/* The set at stack index idx as ids and as marks; both live in userdata
** pushed on the stack.  opt names the option it came from (NULL: the
** argument at idx). */
static unsigned char *marks_at(lua_State *L, const sl_graph *g, int idx, int32_t **ids,
                               size_t *n, const char *fname, const char *opt) {
  *ids = opt ? opt_set(L, g, idx, fname, opt, n) : sl_bind_checkset(L, g, idx, n, 1);
  size_t nn = sl_graph_nnodes(g);
  unsigned char *m = lua_newuserdatauv(L, nn ? nn : 1, 0);
  memset(m, 0, nn);
  for (size_t i = 0; i < *n; i++) m[(*ids)[i]] = 1;
  return m;
}

/* Scratch marks in a userdata pushed on the stack. */
static unsigned char *scratch(lua_State *L, const sl_graph *g) {
  size_t nn = sl_graph_nnodes(g);
  unsigned char *m = lua_newuserdatauv(L, nn ? nn : 1, 0);
  memset(m, 0, nn ? nn : 1);
  return m;
}

/* Z and its ancestors as marks (a userdata pushed on the stack). */
static unsigned char *ancestors_of(lua_State *L, const sl_graph *g, const unsigned char *z,
                                   const int32_t *ids, size_t n) {
  size_t nn = sl_graph_nnodes(g);
  unsigned char *a = scratch(L, g);
  if (sl_graph_ancestors(g, ids, n, a, NULL)) luaL_error(L, "out of memory");
  for (size_t v = 0; v < nn; v++) a[v] |= z[v];
  return a;
}

typedef struct trail_ctx {
  lua_State *L;
  const sl_graph *g;
  sl_mark z, an_z;
  lua_Integer count, limit;
  int truncated;
} trail_ctx;

static int collect(void *ctx, const sl_trail *t) {
  trail_ctx *c = ctx;
  if (c->count >= c->limit) { c->truncated = 1; return 1; }
  sl_bind_push_trail(c->L, c->g, t, c->z, c->an_z);
  lua_rawseti(c->L, -2, ++c->count);
  return 0;
}

static int count_only(void *ctx, const sl_trail *t) {
  (void)t;
  ((trail_ctx *)ctx)->count++;
  return 0;
}

/* The treatment and outcome arguments, checked to be disjoint. */
static void check_xy(lua_State *L, const sl_graph *g, int32_t **x, size_t *nx,
                     int32_t **y, size_t *ny) {
  *x = sl_bind_checkset(L, g, 2, nx, 0);
  *y = sl_bind_checkset(L, g, 3, ny, 0);
  if (*nx == 0) luaL_argerror(L, 2, "the treatment set is empty");
  if (*ny == 0) luaL_argerror(L, 3, "the outcome set is empty");
  for (size_t i = 0; i < *nx; i++)
    for (size_t j = 0; j < *ny; j++)
      if ((*x)[i] == (*y)[j])
        luaL_error(L, "'%s' is both a treatment and an outcome", sl_graph_name(g, (*x)[i]));
}

static int raise_plain(lua_State *L, const sl_error *e) {
  return sl_bind_raise(L, e, NULL, NULL, 0);
}

/* Causal trails first, then back-door, then the rest; shorter first. */
static const char *sort_trails =
  "local t = ...\n"
  "local order = {causal = 1, backdoor = 2, noncausal = 3}\n"
  "table.sort(t, function(a, b)\n"
  "  if a.kind ~= b.kind then return order[a.kind] < order[b.kind] end\n"
  "  if #a.nodes ~= #b.nodes then return #a.nodes < #b.nodes end\n"
  "  return a.text < b.text end)\n";

/* g:trails(x, y, {given=, limit=}) */
static int l_trails(lua_State *L) {
  sl_graph *g = sl_bind_checkgraph(L, 1);
  int32_t *x, *y, *zi;
  size_t nx, ny, nz;
  static const char *const known[] = {"given", "limit"};
  lua_settop(L, 4);
  sl_bind_check_options(L, 4, "trails", known, 2);
  lua_Integer limit = opt_limit(L, "trails", TRAIL_LIMIT);
  opt_field(L, 4, "given");                         /* index 6 */
  unsigned char *z = marks_at(L, g, 6, &zi, &nz, "trails", "given");
  check_xy(L, g, &x, &nx, &y, &ny);
  unsigned char *an = ancestors_of(L, g, z, zi, nz);
  sl_bind_newlist(L, 0);
  trail_ctx c = {L, g, z, an, 0, limit, 0};
  sl_error e;
  sl_bind_stop = 0;
  int rc = sl_trails_each(g, x, nx, y, ny, collect, &c, &sl_bind_stop, &e);
  if (rc && !c.truncated) return raise_plain(L, &e);
  int list = lua_gettop(L);
  luaL_loadstring(L, sort_trails);
  lua_pushvalue(L, list);
  lua_call(L, 1, 0);
  luaL_setmetatable(L, "sluice.trails");
  if (c.truncated) {
    lua_pushinteger(L, limit);
    lua_setfield(L, -2, "truncated");
  }
  return 1;
}

/* g:count_trails(x, y) */
static int l_count_trails(lua_State *L) {
  sl_graph *g = sl_bind_checkgraph(L, 1);
  int32_t *x, *y;
  size_t nx, ny;
  lua_settop(L, 3);   /* a missing outcome is nil, not the set pushed for x */
  check_xy(L, g, &x, &nx, &y, &ny);
  trail_ctx c = {L, g, NULL, NULL, 0, 0, 0};
  sl_error e;
  sl_bind_stop = 0;
  if (sl_trails_each(g, x, nx, y, ny, count_only, &c, &sl_bind_stop, &e)) return raise_plain(L, &e);
  lua_pushinteger(L, c.count);
  return 1;
}

/* g:separated(x, y, given) */
static int l_separated(lua_State *L) {
  sl_graph *g = sl_bind_checkgraph(L, 1);
  int32_t *x, *y, *zi;
  size_t nx, ny, nz;
  lua_settop(L, 4);
  unsigned char *z = marks_at(L, g, 4, &zi, &nz, NULL, NULL);
  check_xy(L, g, &x, &nx, &y, &ny);
  unsigned char *an = ancestors_of(L, g, z, zi, nz);
  sl_sep_ws *w = sl_sep_alloc(g);
  if (!w) return luaL_error(L, "out of memory");
  sl_error e;
  sl_trail wit;
  int sep = 1, rc = sl_separated(w, x, nx, y, ny, zi, nz, &sep, &wit, &e);
  if (rc == SL_OK) {
    lua_pushboolean(L, sep);
    if (!sep) sl_bind_push_trail(L, g, &wit, z, an);
  }
  sl_sep_free(w);
  if (rc) return raise_plain(L, &e);
  return sep ? 1 : 2;
}

/* An sl_effect owned by a userdata, so that an error frees it. */
static int effect_gc(lua_State *L) {
  sl_effect *q = lua_touserdata(L, 1);
  if (q->g) sl_effect_free(q);
  return 0;
}

static sl_effect *push_effect(lua_State *L, const sl_graph *g, const int32_t *x, size_t nx,
                              const int32_t *y, size_t ny) {
  sl_effect *q = lua_newuserdatauv(L, sizeof *q, 0);
  memset(q, 0, sizeof *q);
  if (luaL_newmetatable(L, "sluice.effect")) {
    lua_pushcfunction(L, effect_gc);
    lua_setfield(L, -2, "__gc");
  }
  lua_setmetatable(L, -2);
  sl_error e;
  if (sl_effect_init(q, g, x, nx, y, ny, &e)) raise_plain(L, &e);
  return q;
}

typedef int (*criterion)(const sl_effect *, const int32_t *, size_t, int *,
                         sl_reasons *, size_t, sl_error *);

/* g:admissible(x, y, set) and g:backdoor(x, y, set) */
static int check_set(lua_State *L, criterion fn) {
  sl_graph *g = sl_bind_checkgraph(L, 1);
  int32_t *x, *y, *zi;
  size_t nx, ny, nz;
  lua_settop(L, 4);
  int setidx = 4;
  unsigned char *z = marks_at(L, g, 4, &zi, &nz, NULL, NULL);
  check_xy(L, g, &x, &nx, &y, &ny);
  unsigned char *an = ancestors_of(L, g, z, zi, nz);
  sl_effect *q = push_effect(L, g, x, nx, y, ny);
  sl_reasons *rs = sl_bind_push_reason_box(L);
  sl_error e;
  int ok = 0;
  if (fn(q, zi, nz, &ok, rs, 5, &e)) return raise_plain(L, &e);
  lua_pushboolean(L, ok);
  if (ok) return 1;
  sl_bind_push_reasons(L, g, rs, z, an, NULL, NULL);
  int r = lua_gettop(L);
  if (lua_isnil(L, setidx)) {
    lua_newtable(L);
    sl_bind_explain(L, 1, r + 1, r);
    lua_pop(L, 1);
  } else sl_bind_explain(L, 1, setidx, r);
  return 2;
}
static int l_admissible(lua_State *L) { return check_set(L, sl_admissible); }
static int l_backdoor(lua_State *L) { return check_set(L, sl_backdoor); }

/* g:adjust(x, y, {forbid=, require=, limit=}) */
static int l_adjust(lua_State *L) {
  sl_graph *g = sl_bind_checkgraph(L, 1);
  static const char *const known[] = {"forbid", "require", "limit"};
  lua_settop(L, 4);
  sl_bind_check_options(L, 4, "adjust", known, 3);
  lua_Integer limit = opt_limit(L, "adjust", SET_LIMIT);
  int32_t *fi, *ri, *x, *y;
  size_t nf, nr, nx, ny;
  opt_field(L, 4, "forbid");                                /* index 6 */
  unsigned char *forbid = marks_at(L, g, 6, &fi, &nf, "adjust", "forbid");
  opt_field(L, 4, "require");                               /* index 9 */
  unsigned char *require = marks_at(L, g, 9, &ri, &nr, "adjust", "require");
  check_xy(L, g, &x, &nx, &y, &ny);
  sl_effect *q = push_effect(L, g, x, nx, y, ny);
  sl_reasons *why = sl_bind_push_reason_box(L);
  sl_error e;
  int none = 0;
  sl_bind_newlist(L, 0);
  int list = lua_gettop(L);
  sl_bind_sets c = {L, g, 0, limit, 0};
  sl_bind_stop = 0;
  int rc = sl_adjust_each(q, nf ? forbid : NULL, nr ? require : NULL, sl_bind_on_set, &c, &none,
                          why, &sl_bind_stop, &e);
  if (rc && !c.truncated) return raise_plain(L, &e);
  if (none) {
    unsigned char *empty = scratch(L, g);
    sl_bind_push_reasons(L, g, why, empty, empty, NULL, NULL);
    lua_newtable(L);                  /* marks the wording "no set can block" */
    lua_pushboolean(L, 1);
    lua_setfield(L, -2, "none_context");
    sl_bind_explain(L, 1, lua_gettop(L), lua_gettop(L) - 1);
    lua_pop(L, 1);
    lua_setfield(L, list, "none");
    lua_pop(L, 1);
  }
  sl_bind_sort_sets(L, list);
  luaL_setmetatable(L, "sluice.sets");
  if (c.truncated) { lua_pushinteger(L, limit); lua_setfield(L, list, "truncated"); }
  return 1;
}

/* A malloc'd id array owned by a userdata. */
static int ids_gc(lua_State *L) {
  int32_t **p = lua_touserdata(L, 1);
  free(*p);
  *p = NULL;
  return 0;
}

static int32_t **push_ids_box(lua_State *L) {
  int32_t **p = lua_newuserdatauv(L, sizeof *p, 0);
  *p = NULL;
  if (luaL_newmetatable(L, "sluice.idbox")) {
    lua_pushcfunction(L, ids_gc);
    lua_setfield(L, -2, "__gc");
  }
  lua_setmetatable(L, -2);
  return p;
}

/* g:optimal(x, y).  The reasons of optimal.c's own kinds are built here
** (a trade-off carries its rival set); the others go through
** push_reasons one at a time, so the order of rs is kept. */
static int l_optimal(lua_State *L) {
  sl_graph *g = sl_bind_checkgraph(L, 1);
  int32_t *x, *y;
  size_t nx, ny, no = 0;
  lua_settop(L, 3);
  check_xy(L, g, &x, &nx, &y, &ny);
  sl_effect *q = push_effect(L, g, x, nx, y, ny);
  sl_reasons *rs = sl_bind_push_reason_box(L);
  int32_t **o = push_ids_box(L);
  sl_error e;
  int ok = 0;
  if (sl_optimal(q, o, &no, &ok, rs, &e)) return raise_plain(L, &e);
  if (ok) { sl_bind_push_set(L, g, *o, no); return 1; }
  unsigned char *z = scratch(L, g);
  for (size_t i = 0; i < no; i++) z[(*o)[i]] = 1;
  unsigned char *an = ancestors_of(L, g, z, *o, no);
  lua_pushnil(L);
  int at = lua_gettop(L);
  lua_createtable(L, (int)rs->n, 0);
  int list = lua_gettop(L), k = 0;
  for (size_t i = 0; i < rs->n; i++) {
    const sl_reason *r = &rs->r[i];
    if (r->kind < SL_WHY_NO_VALID_SET) {
      sl_reasons one = {(sl_reason *)r, 1, 1};
      sl_bind_push_reasons(L, g, &one, z, an, NULL, NULL);
      lua_rawgeti(L, -1, 1);
      lua_remove(L, -2);
    } else if (r->kind == SL_WHY_RIVAL) {
      continue;   /* read with its trade-off */
    } else {
      lua_createtable(L, 0, 5);
      lua_pushstring(L, sl_bind_reason_kind(r->kind));
      lua_setfield(L, -2, "kind");
      if (r->node >= 0) { lua_pushstring(L, sl_graph_name(g, r->node)); lua_setfield(L, -2, "node"); }
      if (r->via >= 0) { lua_pushstring(L, sl_graph_name(g, r->via)); lua_setfield(L, -2, "via"); }
      if (r->kind == SL_WHY_TRADEOFF && i + 1 < rs->n && rs->r[i + 1].kind == SL_WHY_RIVAL) {
        const sl_reason *rv = &rs->r[i + 1];
        unsigned char *rz = scratch(L, g);
        for (size_t j = 0; j < rv->npath; j++) rz[rv->path[j]] = 1;
        unsigned char *ran = ancestors_of(L, g, rz, rv->path, rv->npath);
        sl_trail t = {r->path, r->steps, r->npath - 1};
        sl_bind_push_trail(L, g, &t, rz, ran);
        lua_setfield(L, -4, "trail");
        lua_pop(L, 2);
        sl_bind_push_set(L, g, rv->path, rv->npath);
        lua_setfield(L, -2, "rival");
      }
      luaL_setmetatable(L, "sluice.reason");
    }
    lua_rawseti(L, list, ++k);
  }
  luaL_setmetatable(L, "sluice.reasons");
  sl_bind_push_set(L, g, *o, no);
  sl_bind_explain(L, 1, at + 2, at + 1);
  lua_pop(L, 1);
  return 2;
}

/* g:cheapest(x, y, costs) */
static int l_cheapest(lua_State *L) {
  sl_graph *g = sl_bind_checkgraph(L, 1);
  size_t nn = sl_graph_nnodes(g);
  double *cost = NULL;
  lua_settop(L, 4);
  if (!lua_isnil(L, 4)) {
    if (!lua_istable(L, 4))
      sl_bind_opt_error(L, "cheapest", "costs must be a table of node name = cost, got %s", sl_bind_value_text(L, 4));
    cost = lua_newuserdatauv(L, (nn ? nn : 1) * sizeof *cost, 0);
    for (size_t v = 0; v < nn; v++) cost[v] = 1;
    lua_pushnil(L);
    while (lua_next(L, 4)) {
      if (lua_type(L, -2) != LUA_TSTRING)
        sl_bind_opt_error(L, "cheapest", "costs are keyed by node name, not by %s", sl_bind_value_text(L, -2));
      size_t len;
      const char *nm = lua_tolstring(L, -2, &len);
      sl_error e;
      int32_t v = sl_graph_lookup(g, nm, len, &e);
      if (v < 0) sl_bind_opt_error(L, "cheapest", "costs: %s", e.msg);
      lua_Number c = lua_tonumber(L, -1);
      if (lua_type(L, -1) != LUA_TNUMBER || !(c >= 0) || c > 1e15)
        sl_bind_opt_error(L, "cheapest", "the cost of '%s' = %s must be a number from 0 to 1e15",
                  nm, sl_bind_value_text(L, -1));
      cost[v] = c;
      lua_pop(L, 1);
    }
  }
  int32_t *x, *y;
  size_t nx, ny, ns = 0;
  check_xy(L, g, &x, &nx, &y, &ny);
  sl_effect *q = push_effect(L, g, x, nx, y, ny);
  int32_t **s = push_ids_box(L);
  sl_error e;
  int ok = 0;
  double total = 0;
  if (sl_cheapest(q, cost, s, &ns, &total, &ok, &e)) return raise_plain(L, &e);
  if (!ok) {
    lua_pushnil(L);
    lua_pushliteral(L, "no valid adjustment set exists (g:adjust shows the open trail)");
    return 2;
  }
  sl_bind_push_set(L, g, *s, ns);
  lua_pushnumber(L, total);
  return 2;
}

static const luaL_Reg methods[] = {
  {"trails", l_trails}, {"count_trails", l_count_trails}, {"separated", l_separated},
  {"admissible", l_admissible}, {"backdoor", l_backdoor}, {"adjust", l_adjust},
  {"optimal", l_optimal}, {"cheapest", l_cheapest},
  {NULL, NULL}
};

int sl_open_adjust(lua_State *L) {
  sl_bind_graph_methods(L, methods);
  return 0;
}
