/*
** bind_reasons.c: how the graph bindings hand sets, trails and reasons to
** Lua.  Every criterion (adjustment, back-door, front-door, instruments,
** the optimal set) answers in the same shapes, so that the Lua layer words
** them all with one explain().
*/
#include <string.h>

#include "bind.h"
#include "notation.h"

/* Push a set of ids as a list of names. */
void sl_bind_push_set(lua_State *L, const sl_graph *g, const int32_t *s, size_t n) {
  sl_bind_newlist(L, (int)n);
  for (size_t i = 0; i < n; i++) {
    lua_pushstring(L, sl_graph_name(g, s[i]));
    lua_rawseti(L, -2, (lua_Integer)i + 1);
  }
}

/* Push a trail table: nodes, text, kind, and its status given the marks
** z and an_z (z and its ancestors). */
void sl_bind_push_trail(lua_State *L, const sl_graph *g, const sl_trail *t,
                        sl_mark z, sl_mark an_z) {
  static const char *const kinds[] = {"causal", "backdoor", "noncausal"};
  static const char *const arrows[] = {" -> ", " <- ", " <-> "};
  lua_createtable(L, 0, 6);
  sl_bind_newlist(L, (int)t->len + 1);
  sl_buf b;
  sl_buf_init(&b);
  for (size_t i = 0; i <= t->len; i++) {
    lua_pushstring(L, sl_graph_name(g, t->nodes[i]));
    lua_rawseti(L, -2, (lua_Integer)i + 1);
    if (i) sl_buf_adds(&b, arrows[t->steps[i - 1]]);
    sl_name_write(sl_graph_name(g, t->nodes[i]), &b);
  }
  lua_setfield(L, -2, "nodes");
  lua_pushlstring(L, b.data ? b.data : "", b.len);
  sl_buf_free(&b);
  lua_setfield(L, -2, "text");
  lua_pushstring(L, kinds[sl_trail_kind(t)]);
  lua_setfield(L, -2, "kind");
  size_t at;
  int why;
  int open = sl_trail_open(t, z, an_z, &at, &why);
  lua_pushboolean(L, open);
  lua_setfield(L, -2, "open");
  if (!open) {
    lua_pushstring(L, sl_graph_name(g, t->nodes[at]));
    lua_setfield(L, -2, "blocked_at");
    lua_pushstring(L, why == SL_BLOCK_COLLIDER ? "collider" : "conditioned");
    lua_setfield(L, -2, "why");
  }
  luaL_setmetatable(L, "sluice.trail");
}

/* The public name of a reason kind (the .kind field explain.lua reads). */
const char *sl_bind_reason_kind(int kind) {
  switch (kind) {
    case SL_WHY_HIDDEN: return "hidden";
    case SL_WHY_TREATMENT: return "treatment";
    case SL_WHY_OUTCOME: return "outcome";
    case SL_WHY_MEDIATOR: return "mediator";
    case SL_WHY_DESCENDANT: return "descendant";
    case SL_WHY_DESC_TREATMENT: return "descendant of treatment";
    case SL_WHY_OPEN: return "open";
    case SL_WHY_NO_CAUSAL_PATH: return "no causal path";
    case SL_WHY_BIDIRECTED: return "bidirected";
    case SL_WHY_FD_MISSED: return "missed path";
    case SL_WHY_FD_FROM_X: return "back-door from treatment";
    case SL_WHY_FD_TO_Y: return "back-door to outcome";
    case SL_WHY_FD_NONE: return "no front-door set";
    case SL_WHY_IV_IRRELEVANT: return "not relevant";
    case SL_WHY_IV_OPEN: return "open to outcome";
    case SL_WHY_IV_FORBIDDEN: return "forbidden";
    case SL_WHY_NO_VALID_SET: return "no valid set";
    case SL_WHY_NOT_JOINT: return "not joint";
    case SL_WHY_TRADEOFF: return "trade-off";
    default: return "other";
  }
}

void sl_bind_push_reasons(lua_State *L, const sl_graph *g, const sl_reasons *rs,
                          sl_mark z, sl_mark an_z, sl_mark xz, sl_mark an_xz) {
  lua_createtable(L, (int)rs->n, 0);
  for (size_t i = 0; i < rs->n; i++) {
    const sl_reason *r = &rs->r[i];
    lua_createtable(L, 0, 4);
    lua_pushstring(L, sl_bind_reason_kind(r->kind));
    lua_setfield(L, -2, "kind");
    if (r->node >= 0) { lua_pushstring(L, sl_graph_name(g, r->node)); lua_setfield(L, -2, "node"); }
    if (r->via >= 0) { lua_pushstring(L, sl_graph_name(g, r->via)); lua_setfield(L, -2, "via"); }
    if (r->npath) {
      sl_trail t = {r->path, r->steps, r->npath - 1};
      if (r->kind == SL_WHY_FD_TO_Y && xz != NULL) sl_bind_push_trail(L, g, &t, xz, an_xz);
      else sl_bind_push_trail(L, g, &t, z, an_z);
      lua_setfield(L, -2, "trail");
    }
    luaL_setmetatable(L, "sluice.reason");
    lua_rawseti(L, -2, (lua_Integer)i + 1);
  }
  luaL_setmetatable(L, "sluice.reasons");
}

void sl_bind_explain(lua_State *L, int gidx, int setidx, int ridx) {
  lua_getfield(L, LUA_REGISTRYINDEX, SL_HOOKS);
  if (lua_getfield(L, -1, "explain") == LUA_TFUNCTION) {
    lua_pushvalue(L, gidx);
    lua_pushvalue(L, setidx);
    lua_pushvalue(L, ridx);
    lua_call(L, 3, 0);
  } else lua_pop(L, 1);
  lua_pop(L, 1);
}

/* Reasons owned by a userdata, so that an error frees them. */
static int reasons_gc(lua_State *L) {
  sl_reasons_free(lua_touserdata(L, 1));
  return 0;
}

sl_reasons *sl_bind_push_reason_box(lua_State *L) {
  sl_reasons *rs = lua_newuserdatauv(L, sizeof *rs, 0);
  memset(rs, 0, sizeof *rs);
  if (luaL_newmetatable(L, "sluice.reasonbox")) {
    lua_pushcfunction(L, reasons_gc);
    lua_setfield(L, -2, "__gc");
  }
  lua_setmetatable(L, -2);
  return rs;
}

const char *sl_bind_value_text(lua_State *L, int idx) {
  int t = lua_type(L, idx);
  if (t == LUA_TNUMBER) {
    lua_Number x = lua_tonumber(L, idx);
    if (x != x) return lua_pushliteral(L, "nan");
    return luaL_tolstring(L, idx, NULL);
  }
  if (t == LUA_TSTRING) return lua_pushfstring(L, "\"%s\"", lua_tostring(L, idx));
  if (t == LUA_TNIL || t == LUA_TNONE) return lua_pushliteral(L, "nil");
  if (t == LUA_TBOOLEAN) return lua_pushstring(L, lua_toboolean(L, idx) ? "true" : "false");
  return lua_pushfstring(L, "a %s", luaL_typename(L, idx));
}

int sl_bind_on_set(void *ctx, const int32_t *set, size_t n) {
  sl_bind_sets *c = ctx;
  if (c->count >= c->limit) { c->truncated = 1; return 1; }
  sl_bind_push_set(c->L, c->g, set, n);
  lua_rawseti(c->L, -2, ++c->count);
  return 0;
}

void sl_bind_sort_sets(lua_State *L, int idx) {
  static const char *sort =
    "local sets = ...\n"
    "table.sort(sets, function(a, b)\n"
    "  if #a ~= #b then return #a < #b end\n"
    "  return table.concat(a, '\\0') < table.concat(b, '\\0') end)\n";
  idx = lua_absindex(L, idx);
  if (luaL_loadstring(L, sort) != LUA_OK)
    lua_error(L);
  lua_pushvalue(L, idx);
  lua_call(L, 1, 0);
}
