/*
** bind_implications.c: g:implications, the conditional independences the
** graph implies among its observed nodes, as a list of {a =, b =, given =}.
*/
#include <string.h>
#include "bind.h"
#include "notation.h"
#include "implications.h"

#define IMP_LIMIT 10000     /* implications listed unless limit = says otherwise */

#define IMPS_MT "sluice.implications"
#define IMP_MT  "sluice.implication"

/* The string field k of the table at idx, or "?" (raw access: no
** metamethod runs, so nothing raises while a buffer is open). */
static const char *field(lua_State *L, int idx, const char *k) {
  lua_pushstring(L, k);
  lua_rawget(L, idx);
  const char *s = lua_type(L, -1) == LUA_TSTRING ? lua_tostring(L, -1) : "?";
  lua_pop(L, 1);          /* the string stays alive in the table */
  return s;
}

/* Add the names of the list at idx, comma-separated. */
static void add_names(lua_State *L, sl_buf *b, int idx) {
  size_t n = lua_rawlen(L, idx);
  for (size_t i = 1; i <= n; i++) {
    lua_rawgeti(L, idx, (lua_Integer)i);
    const char *s = lua_type(L, -1) == LUA_TSTRING ? lua_tostring(L, -1) : "?";
    if (i > 1) sl_buf_adds(b, ", ");
    sl_name_write(s, b);
    lua_pop(L, 1);
  }
}

/* Add "a ⊥ b | c, d" for the implication at idx; with bs, the b side is
** the list of names at bs instead of the field b. */
static void add_implication(lua_State *L, sl_buf *b, int idx, int bs) {
  sl_name_write(field(L, idx, "a"), b);
  sl_buf_adds(b, " \xe2\x8a\xa5 ");
  if (bs) add_names(L, b, bs);
  else sl_name_write(field(L, idx, "b"), b);
  lua_pushliteral(L, "given");
  if (lua_rawget(L, idx) == LUA_TTABLE && lua_rawlen(L, -1) > 0) {
    sl_buf_adds(b, " | ");
    add_names(L, b, lua_gettop(L));
  }
  lua_pop(L, 1);
}

/* Push the text of b and free it. */
static int push_buf(lua_State *L, sl_buf *b) {
  lua_pushlstring(L, b->data ? b->data : "", b->len);
  sl_buf_free(b);
  return 1;
}

/* tostring of one implication. */
static int imp_tostring(lua_State *L) {
  sl_buf b;
  luaL_checktype(L, 1, LUA_TTABLE);
  sl_buf_init(&b);
  add_implication(L, &b, 1, 0);
  return push_buf(L, &b);
}

/* The lines of a local list: one per node, its non-descendants gathered. */
static void add_local(lua_State *L, sl_buf *b, size_t n) {
  lua_createtable(L, 8, 0);                   /* the b side of a group */
  int bs = lua_gettop(L);
  for (size_t i = 1; i <= n;) {
    lua_rawgeti(L, 1, (lua_Integer)i);
    int first = lua_gettop(L);
    if (lua_type(L, first) != LUA_TTABLE) { lua_pop(L, 1); i++; continue; }
    const char *a = field(L, first, "a");
    size_t k = 0, j = i;
    for (; j <= n; j++) {
      lua_rawgeti(L, 1, (lua_Integer)j);
      int same = lua_type(L, -1) == LUA_TTABLE && strcmp(field(L, lua_gettop(L), "a"), a) == 0;
      if (!same) { lua_pop(L, 1); break; }
      lua_pushliteral(L, "b");
      lua_rawget(L, -2);
      lua_rawseti(L, bs, (lua_Integer)++k);
      lua_pop(L, 1);
    }
    for (size_t t = lua_rawlen(L, bs); t > k; t--) { lua_pushnil(L); lua_rawseti(L, bs, (lua_Integer)t); }
    if (i > 1) sl_buf_adds(b, "\n");
    add_implication(L, b, first, bs);
    lua_pop(L, 1);
    i = j > i ? j : i + 1;
  }
  lua_pop(L, 1);
}

/* The integer field k of the table at 1, or 0. */
static lua_Integer int_field(lua_State *L, const char *k) {
  lua_pushstring(L, k);
  lua_rawget(L, 1);
  lua_Integer v = lua_isinteger(L, -1) ? lua_tointeger(L, -1) : 0;
  lua_pop(L, 1);
  return v;
}

/* tostring of the list: one implication a line (grouped by node for the
** local list), then the untestable pairs and the limit. */
static int imps_tostring(lua_State *L) {
  luaL_checktype(L, 1, LUA_TTABLE);
  size_t n = lua_rawlen(L, 1);
  int local = strcmp(field(L, 1, "basis"), "local") == 0;
  lua_Integer untestable = int_field(L, "untestable"), truncated = int_field(L, "truncated");
  sl_buf b;
  sl_buf_init(&b);
  if (n == 0 && untestable == 0)
    sl_buf_adds(&b, local ? "(none: no node has a non-descendant outside its parents)"
                          : "(none: every two observed nodes are adjacent)");
  if (local) add_local(L, &b, n);
  else
    for (size_t i = 1; i <= n; i++) {
      if (lua_rawgeti(L, 1, (lua_Integer)i) == LUA_TTABLE) {
        if (i > 1) sl_buf_adds(&b, "\n");
        add_implication(L, &b, lua_gettop(L), 0);
      }
      lua_pop(L, 1);
    }
  if (untestable > 0)
    sl_buf_addf(&b, untestable == 1
                ? "%s%lld pair is not adjacent but no measured set separates it: the hidden nodes join the two"
                : "%s%lld pairs are not adjacent but no measured set separates them: the hidden nodes join them",
                n > 0 ? "\n" : "", (long long)untestable);
  if (truncated > 0)
    sl_buf_addf(&b, "\n... stopped after %lld implications (limit); later pairs were not examined",
                (long long)truncated);
  return push_buf(L, &b);
}

typedef struct imp_ctx {
  lua_State *L;
  const sl_graph *g;
  int list;
  lua_Integer count, limit;
  int truncated;
} imp_ctx;

/* Append {a =, b =, given =} to the list, up to the limit. */
static int on_implication(void *ctx, int32_t a, int32_t b, const int32_t *given, size_t n) {
  imp_ctx *c = ctx;
  lua_State *L = c->L;
  if (c->count >= c->limit) { c->truncated = 1; return 1; }
  lua_createtable(L, 0, 3);
  lua_pushstring(L, sl_graph_name(c->g, a));
  lua_setfield(L, -2, "a");
  lua_pushstring(L, sl_graph_name(c->g, b));
  lua_setfield(L, -2, "b");
  sl_bind_push_set(L, c->g, given, n);
  lua_setfield(L, -2, "given");
  luaL_setmetatable(L, IMP_MT);
  lua_rawseti(L, c->list, ++c->count);
  return 0;
}

/* The basis option at index 4: 0 for one per pair, 1 for the local list. */
static int opt_basis(lua_State *L) {
  static const char *const bases[] = {"pairs", "local"};
  if (lua_isnil(L, 4)) return 0;
  if (lua_type(L, 4) != LUA_TSTRING)
    return sl_bind_opt_error(L, "implications", "basis = must be \"local\" or \"pairs\", got %s",
                             sl_bind_value_text(L, 4));
  const char *s = lua_tostring(L, 4);
  for (int i = 0; i < 2; i++) if (strcmp(s, bases[i]) == 0) return i;
  const char *near = sl_closest(s, bases, 2);
  if (near) return sl_bind_opt_error(L, "implications", "basis = \"%s\" is unknown; did you mean \"%s\"?", s, near);
  return sl_bind_opt_error(L, "implications", "basis = \"%s\" is unknown (\"pairs\" or \"local\")", s);
}

/* The limit option at index 3: a whole number of at least 1. */
static lua_Integer opt_limit(lua_State *L) {
  if (lua_isnil(L, 3)) return IMP_LIMIT;
  int ok = lua_type(L, 3) == LUA_TNUMBER;
  lua_Integer limit = 0;
  if (ok && lua_isinteger(L, 3)) limit = lua_tointeger(L, 3);
  else if (ok) {
    lua_Number x = lua_tonumber(L, 3);
    ok = x == x && x >= 1 && x < 9.2e18 && x == (lua_Number)(lua_Integer)x;
    if (ok) limit = (lua_Integer)x;
  }
  if (!ok || limit < 1)
    sl_bind_opt_error(L, "implications", "limit = %s must be a whole number of at least 1",
                      sl_bind_value_text(L, 3));
  return limit;
}

/* g:implications({limit =, basis =}) */
static int l_implications(lua_State *L) {
  sl_graph *g = sl_bind_checkgraph(L, 1);
  static const char *const known[] = {"limit", "basis"};
  lua_settop(L, 2);
  sl_bind_check_options(L, 2, "implications", known, 2);
  if (lua_isnil(L, 2)) { lua_pushnil(L); lua_pushnil(L); }
  else { lua_getfield(L, 2, "limit"); lua_getfield(L, 2, "basis"); }   /* 3, 4 */
  lua_Integer limit = opt_limit(L);
  int local = opt_basis(L);
  sl_bind_newlist(L, 0);
  luaL_setmetatable(L, IMPS_MT);
  imp_ctx c = {L, g, lua_gettop(L), 0, limit, 0};
  sl_error e;
  size_t untestable = 0;
  sl_bind_stop = 0;
  int rc = local ? sl_implications_local(g, on_implication, &c, &sl_bind_stop, &e)
                 : sl_implications_each(g, on_implication, &c, &untestable, &sl_bind_stop, &e);
  if (rc && !c.truncated) return sl_bind_raise(L, &e, "implications", NULL, 0);
  lua_pushinteger(L, (lua_Integer)untestable);
  lua_setfield(L, c.list, "untestable");
  lua_pushstring(L, local ? "local" : "pairs");
  lua_setfield(L, c.list, "basis");
  if (c.truncated) { lua_pushinteger(L, limit); lua_setfield(L, c.list, "truncated"); }
  return 1;
}

static const luaL_Reg methods[] = {
  {"implications", l_implications},
  {NULL, NULL}
};

int sl_open_implications(lua_State *L) {
  sl_bind_printable(L, IMPS_MT, imps_tostring);
  sl_bind_printable(L, IMP_MT, imp_tostring);
  sl_bind_graph_methods(L, methods);
  return 0;
}
