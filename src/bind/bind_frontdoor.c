/*
** bind_frontdoor.c: g:frontdoor and g:instruments, the routes to an effect
** when no adjustment set exists.
*/
#include <string.h>
#include "bind.h"
#include "notation.h"
#include "separation.h"
#include "adjust.h"
#include "frontdoor.h"
#include "instrument.h"

#define FD_SET_LIMIT 10000     /* sets listed unless limit = says otherwise */
#define FD_MAX_PATHS 5         /* missed directed paths named by a check */

#define FDSETS_MT "sluice.frontdoor_sets"
#define IVLIST_MT "sluice.instruments"

/* Raise "fname: message" at the caller's line. */
static int raise_in(lua_State *L, const char *fname, const sl_error *e) {
  return sl_bind_raise(L, e, fname, NULL, 0);
}

static int raise_msg(lua_State *L, const char *fname, const char *fmt, const char *a) {
  sl_error e;
  e.code = SL_EARG; e.line = e.col = 0;
  snprintf(e.msg, sizeof e.msg, fmt, a);
  return raise_in(L, fname, &e);
}

/* One node as treatment or outcome: a name, or a list holding one name. */
static int32_t check_one(lua_State *L, const sl_graph *g, int arg, const char *fname,
                         const char *role) {
  size_t n;
  int32_t *v = sl_bind_checkset(L, g, arg, &n, 0);
  if (n != 1) {
    char msg[160];
    snprintf(msg, sizeof msg, "the %s must be one node name (%s)", role,
             n ? "sets of several are not supported" : "the list is empty");
    return raise_msg(L, fname, "%s", msg);
  }
  int32_t id = v[0];
  lua_pop(L, 1);
  return id;
}

/* Whether the value at idx is an options table (string keys, no list part). */
static int is_options(lua_State *L, int idx) {
  if (!lua_istable(L, idx) || luaL_len(L, idx) > 0) return 0;
  lua_pushnil(L);
  while (lua_next(L, idx)) {
    lua_pop(L, 2);
    return 1;
  }
  return 0;
}

/* The options {limit = n}: unknown keys are errors that suggest "limit". */
static lua_Integer check_limit(lua_State *L, int idx, const char *fname) {
  lua_Integer limit = FD_SET_LIMIT;
  lua_pushnil(L);
  while (lua_next(L, idx)) {
    const char *k = lua_type(L, -2) == LUA_TSTRING ? lua_tostring(L, -2) : NULL;
    if (!k || strcmp(k, "limit") != 0) {
      static const char *const known[] = {"limit"};
      const char *near = k ? sl_closest(k, known, 1) : NULL;
      if (near) raise_msg(L, fname, "unknown option '%s'; did you mean 'limit'?", k);
      raise_msg(L, fname, "unknown option %s (options: limit)",
                k ? lua_pushfstring(L, "'%s'", k) : luaL_tolstring(L, -2, NULL));
    }
    int ok = lua_isinteger(L, -1);
    if (ok) limit = lua_tointeger(L, -1);
    else if (lua_type(L, -1) == LUA_TNUMBER) {
      lua_Number x = lua_tonumber(L, -1);
      ok = x == x && x >= 1 && x < 9.2e18 && x == (lua_Number)(lua_Integer)x;
      if (ok) limit = (lua_Integer)x;
    }
    if (!ok || limit < 1)
      raise_msg(L, fname, "limit = %s must be a whole number of at least 1",
                luaL_tolstring(L, -1, NULL));
    lua_pop(L, 1);
  }
  return limit;
}

/* Marks for a set of ids, in a userdata pushed on the stack. */
static unsigned char *push_marks(lua_State *L, const sl_graph *g, const int32_t *ids, size_t n) {
  size_t nn = sl_graph_nnodes(g);
  unsigned char *m = lua_newuserdatauv(L, nn ? nn : 1, 0);
  memset(m, 0, nn ? nn : 1);
  for (size_t i = 0; i < n; i++) m[ids[i]] = 1;
  return m;
}

/* A set as text: {a, b} with names written as the notation writes them. */
static void add_set_text(lua_State *L, luaL_Buffer *b, int idx) {
  luaL_addchar(b, '{');
  lua_Integer n = luaL_len(L, idx);
  for (lua_Integer i = 1; i <= n; i++) {
    lua_geti(L, idx, i);
    sl_buf s;
    sl_buf_init(&s);
    sl_name_write(lua_tostring(L, -1) ? lua_tostring(L, -1) : "?", &s);
    lua_pop(L, 1);
    if (i > 1) luaL_addstring(b, ", ");
    luaL_addlstring(b, s.data ? s.data : "", s.len);
    sl_buf_free(&s);
  }
  luaL_addchar(b, '}');
}

/* tostring of a list of front-door sets: one set a line, as g:adjust's. */
static int fdsets_tostring(lua_State *L) {
  luaL_Buffer b;
  luaL_buffinit(L, &b);
  lua_Integer n = luaL_len(L, 1);
  if (n == 0) {
    if (lua_getfield(L, 1, "none") == LUA_TTABLE) {
      lua_pop(L, 1);
      luaL_addstring(&b, "no front-door set exists:");
      lua_getfield(L, 1, "none");
      int nidx = lua_gettop(L);
      for (lua_Integer i = 1; i <= luaL_len(L, nidx); i++) {
        lua_geti(L, nidx, i);
        lua_getfield(L, -1, "text");
        luaL_addstring(&b, "\n  ");
        luaL_addstring(&b, lua_isstring(L, -1) ? lua_tostring(L, -1) : "?");
        lua_pop(L, 2);
      }
      lua_pop(L, 1);
    } else {
      lua_pop(L, 1);
      luaL_addstring(&b, "no front-door set exists");
    }
  }
  for (lua_Integer i = 1; i <= n; i++) {
    lua_geti(L, 1, i);
    int s = lua_gettop(L);
    if (i > 1) luaL_addchar(&b, '\n');
    add_set_text(L, &b, s);
    if (luaL_len(L, s) == 0)
      luaL_addstring(&b, " (the empty set: no directed path from the treatment to the outcome)");
    lua_pop(L, 1);
  }
  if (lua_getfield(L, 1, "truncated") == LUA_TNUMBER) {
    lua_Integer k = lua_tointeger(L, -1);
    lua_pop(L, 1);
    lua_pushfstring(L, "\n... stopped after %d sets (limit)", (int)k);
    luaL_addvalue(&b);
  } else lua_pop(L, 1);
  luaL_pushresult(&b);
  return 1;
}

/* tostring of a list of instruments: "z  given {w, ...}" a line. */
static int ivlist_tostring(lua_State *L) {
  luaL_Buffer b;
  luaL_buffinit(L, &b);
  lua_Integer n = luaL_len(L, 1);
  if (n == 0) luaL_addstring(&b, "no conditional instrument exists");
  for (lua_Integer i = 1; i <= n; i++) {
    lua_geti(L, 1, i);
    int s = lua_gettop(L);
    if (i > 1) luaL_addchar(&b, '\n');
    lua_getfield(L, s, "z");
    sl_buf t;
    sl_buf_init(&t);
    sl_name_write(lua_tostring(L, -1) ? lua_tostring(L, -1) : "?", &t);
    lua_pop(L, 1);
    luaL_addlstring(&b, t.data ? t.data : "", t.len);
    sl_buf_free(&t);
    luaL_addstring(&b, "  given ");
    lua_getfield(L, s, "given");
    add_set_text(L, &b, lua_gettop(L));
    lua_pop(L, 2);
  }
  if (lua_getfield(L, 1, "truncated") == LUA_TNUMBER) {
    lua_Integer k = lua_tointeger(L, -1);
    lua_pop(L, 1);
    lua_pushfstring(L, "\n... stopped after %d instruments (limit)", (int)k);
    luaL_addvalue(&b);
  } else lua_pop(L, 1);
  luaL_pushresult(&b);
  return 1;
}

/* g:frontdoor(x, y): every minimal front-door set. */
static int list_frontdoor(lua_State *L, const sl_graph *g, int32_t x, int32_t y,
                          lua_Integer limit) {
  sl_reasons *why = sl_bind_push_reason_box(L);
  sl_bind_newlist(L, 0);
  int list = lua_gettop(L);
  sl_bind_sets c = {L, g, 0, limit, 0};
  sl_error e;
  int none = 0;
  sl_bind_stop = 0;
  int rc = sl_frontdoor_each(g, x, y, sl_bind_on_set, &c, &none, why, &sl_bind_stop, &e);
  if (rc && !c.truncated) return raise_in(L, "frontdoor", &e);
  if (none) {
    sl_bind_push_reasons(L, g, why, NULL, NULL, NULL, NULL);
    lua_newtable(L);
    sl_bind_explain(L, 1, lua_gettop(L), lua_gettop(L) - 1);
    lua_pop(L, 1);
    lua_setfield(L, list, "none");
  }
  sl_bind_sort_sets(L, list);
  luaL_setmetatable(L, FDSETS_MT);
  if (c.truncated) { lua_pushinteger(L, limit); lua_setfield(L, list, "truncated"); }
  return 1;
}

/* g:frontdoor(x, y, set): true, or false and the reasons. */
static int check_frontdoor(lua_State *L, const sl_graph *g, int32_t x, int32_t y) {
  size_t nz;
  int32_t *z = sl_bind_checkset(L, g, 4, &nz, 0);
  sl_reasons *rs = sl_bind_push_reason_box(L);
  sl_error e;
  int ok = 0;
  if (sl_frontdoor_check(g, x, y, z, nz, &ok, rs, FD_MAX_PATHS, &e))
    return raise_in(L, "frontdoor", &e);
  if (ok) { lua_pushboolean(L, 1); return 1; }
  unsigned char *xm = push_marks(L, g, &x, 1);
  unsigned char *anx = push_marks(L, g, &x, 1);
  if (sl_graph_ancestors(g, &x, 1, anx, &e)) return raise_in(L, "frontdoor", &e);
  anx[x] = 1;
  lua_pushboolean(L, 0);
  sl_bind_push_reasons(L, g, rs, NULL, NULL, xm, anx);
  int r = lua_gettop(L);
  sl_bind_explain(L, 1, 4, r);
  return 2;
}

/* g:frontdoor(x, y [, set | {limit=}]) */
static int l_frontdoor(lua_State *L) {
  sl_graph *g = sl_bind_checkgraph(L, 1);
  lua_settop(L, 4);
  int32_t x = check_one(L, g, 2, "frontdoor", "treatment");
  int32_t y = check_one(L, g, 3, "frontdoor", "outcome");
  if (x == y) raise_msg(L, "frontdoor", "'%s' is both the treatment and the outcome", sl_graph_name(g, x));
  if (lua_isnil(L, 4)) return list_frontdoor(L, g, x, y, FD_SET_LIMIT);
  if (is_options(L, 4)) {
    lua_Integer limit = check_limit(L, 4, "frontdoor");
    return list_frontdoor(L, g, x, y, limit);
  }
  return check_frontdoor(L, g, x, y);
}

typedef struct iv_ctx { lua_State *L; const sl_graph *g; lua_Integer count, limit; int truncated; } iv_ctx;

static int on_instrument(void *ctx, int32_t z, const int32_t *w, size_t nw) {
  iv_ctx *c = ctx;
  if (c->count >= c->limit) { c->truncated = 1; return 1; }
  lua_createtable(c->L, 0, 2);
  lua_pushstring(c->L, sl_graph_name(c->g, z));
  lua_setfield(c->L, -2, "z");
  sl_bind_push_set(c->L, c->g, w, nw);
  lua_setfield(c->L, -2, "given");
  lua_rawseti(c->L, -2, ++c->count);
  return 0;
}

/* g:instruments(x, y [, z, given | {limit=}]) */
static int l_instruments(lua_State *L) {
  sl_graph *g = sl_bind_checkgraph(L, 1);
  lua_settop(L, 5);
  int32_t x = check_one(L, g, 2, "instruments", "treatment");
  int32_t y = check_one(L, g, 3, "instruments", "outcome");
  if (x == y) raise_msg(L, "instruments", "'%s' is both the treatment and the outcome", sl_graph_name(g, x));
  sl_error e;
  if (lua_isnil(L, 4) || is_options(L, 4)) {
    if (!lua_isnil(L, 5)) raise_msg(L, "instruments", "%s", "a list of instruments takes no given set; "
                                    "to check one, pass the instrument's name first");
    lua_Integer limit = lua_isnil(L, 4) ? FD_SET_LIMIT : check_limit(L, 4, "instruments");
    sl_bind_newlist(L, 0);
    int list = lua_gettop(L);
    iv_ctx c = {L, g, 0, limit, 0};
    sl_bind_stop = 0;
    int rc = sl_instruments_each(g, x, y, on_instrument, &c, &sl_bind_stop, &e);
    if (rc && !c.truncated) return raise_in(L, "instruments", &e);
    luaL_setmetatable(L, IVLIST_MT);
    if (c.truncated) { lua_pushinteger(L, limit); lua_setfield(L, list, "truncated"); }
    return 1;
  }
  int32_t z = check_one(L, g, 4, "instruments", "instrument");
  size_t nw;
  int32_t *w = sl_bind_checkset(L, g, 5, &nw, 1);
  unsigned char *wm = push_marks(L, g, w, nw);
  unsigned char *an = push_marks(L, g, w, nw);
  if (sl_graph_ancestors(g, w, nw, an, &e)) return raise_in(L, "instruments", &e);
  for (size_t i = 0; i < nw; i++) an[w[i]] = 1;
  sl_reasons *rs = sl_bind_push_reason_box(L);
  int ok = 0;
  if (sl_instrument_check(g, x, y, z, w, nw, &ok, rs, &e)) return raise_in(L, "instruments", &e);
  lua_pushboolean(L, ok);
  if (ok) return 1;
  sl_bind_push_reasons(L, g, rs, wm, an, NULL, NULL);
  int r = lua_gettop(L);
  if (lua_isnil(L, 5)) {
    lua_newtable(L);
    sl_bind_explain(L, 1, r + 1, r);
    lua_pop(L, 1);
  } else sl_bind_explain(L, 1, 5, r);
  return 2;
}

static const luaL_Reg methods[] = {
  {"frontdoor", l_frontdoor}, {"instruments", l_instruments},
  {NULL, NULL}
};

int sl_open_frontdoor(lua_State *L) {
  sl_bind_printable(L, FDSETS_MT, fdsets_tostring);
  sl_bind_printable(L, IVLIST_MT, ivlist_tostring);
  sl_bind_graph_methods(L, methods);
  return 0;
}
