/*
** module.c: luaopen_sluice, the entry point of the Lua module "sluice".
** The pure-Lua layer (the files of lua/sluice) is compiled in and made available
** through package.preload.
*/
#include <string.h>
#include "bind.h"
#include "embedded.h"
#include "bind_frame.h"
#include <gsl/gsl_errno.h>

#ifndef SLUICE_VERSION
#define SLUICE_VERSION "unknown"
#endif

/* Loader for an embedded Lua file: upvalue 1 is its index. */
static int load_embedded(lua_State *L) {
  const sl_embedded *m = &sl_embedded_lua[lua_tointeger(L, lua_upvalueindex(1))];
  if (luaL_loadbuffer(L, m->source, m->len, m->chunkname) != LUA_OK)
    return lua_error(L);
  lua_pushstring(L, m->module);
  lua_call(L, 1, 1);
  return 1;
}

/* package.preload[name] = loader, for every embedded file. */
static void preload(lua_State *L) {
  luaL_getsubtable(L, LUA_REGISTRYINDEX, LUA_PRELOAD_TABLE);
  for (int i = 0; sl_embedded_lua[i].module; i++) {
    lua_pushinteger(L, i);
    lua_pushcclosure(L, load_embedded, 1);
    lua_setfield(L, -2, sl_embedded_lua[i].module);
  }
  lua_pop(L, 1);
}

/* require(name) and leave the result on the stack. */
static void require(lua_State *L, const char *name) {
  lua_getglobal(L, "require");
  lua_pushstring(L, name);
  lua_call(L, 1, 1);
}

/* Every public function and method raises its errors at the user's line
** under its public name (bind_public.c); the model of ols{} and logit{}
** is metas.model, dressed by the Lua layer. */
static void publish(lua_State *L, int module, int metas) {
  static const struct { const char *mt, *field, *prefix; } tables[] = {
    {SL_GRAPH_MT, "__index", "g:"}, {"sluice.frame", "methods", "f:"},
    {"sluice.column", "methods", "c:"}, {"sluice.sem", "__index", "m:"},
    {"sluice.identified", "__index", "r:"},
  };
  int top = lua_gettop(L);
  sl_bind_publish(L, module, "");
  for (size_t i = 0; i < sizeof tables / sizeof tables[0]; i++) {
    luaL_getmetatable(L, tables[i].mt);
    if (lua_istable(L, -1) && lua_getfield(L, -1, tables[i].field) == LUA_TTABLE)
      sl_bind_publish(L, -1, tables[i].prefix);
    lua_settop(L, top);
  }
  if (lua_getfield(L, metas, "model") == LUA_TTABLE) sl_bind_publish(L, -1, "m:");
  lua_settop(L, top);
}

int luaopen_sluice(lua_State *L) {
  luaL_checkversion(L);
  /* GSL's default handler aborts the process; the library checks the
  ** status codes instead */
  gsl_set_error_handler_off();
  preload(L);
  lua_newtable(L);                          /* the module */
  /* metatables of result values, handed to the Lua layer to dress */
  static const char *const metas[] = {"list", "edge", "trails", "trail", "reasons",
                                      "reason", "sets", NULL};
  lua_newtable(L);
  for (int i = 0; metas[i]; i++) {
    lua_pushfstring(L, "sluice.%s", metas[i]);
    luaL_newmetatable(L, lua_tostring(L, -1));
    lua_setfield(L, -3, metas[i]);
    lua_pop(L, 1);
  }
  int metas_at = lua_gettop(L);
  lua_newtable(L);                          /* hooks the Lua layer fills */
  lua_pushvalue(L, -1);
  lua_setfield(L, LUA_REGISTRYINDEX, SL_HOOKS);
  int hooks_at = lua_gettop(L);
  lua_pushvalue(L, metas_at - 1);
  sl_open_graph(L);
  sl_open_adjust(L);
  sl_open_frame(L);
  sl_open_stats(L);
  sl_open_sem(L);
  sl_open_frontdoor(L);
  sl_open_identify(L);
  sl_open_implications(L);
  sl_open_citest(L);
  sl_open_sensitivity(L);
  sl_open_db(L);
  sl_open_pois(L);
  sl_open_diag(L);
  lua_pushliteral(L, SLUICE_VERSION);
  lua_setfield(L, -2, "version");
  /* the Lua layer: printing, then help; each may add to the module */
  const char *layers[] = {"sluice.print", "sluice.explain", "sluice.identify", "sluice.frame", "sluice.estimate", "sluice.models", "sluice.diagnostics", "sluice.compare", "sluice.citest", "sluice.sensitivity", "sluice.session", "sluice.replay",
                          "sluice.help", NULL};
  for (int i = 0; layers[i]; i++) {
    require(L, layers[i]);     /* a table with install(M, metas, hooks) */
    lua_getfield(L, -1, "install");
    if (lua_isfunction(L, -1)) {
      lua_pushvalue(L, -3);
      lua_pushvalue(L, metas_at);
      lua_pushvalue(L, hooks_at);
      lua_call(L, 3, 0);
    } else lua_pop(L, 1);
    lua_pop(L, 1);
  }
  publish(L, metas_at - 1, metas_at);
  lua_replace(L, metas_at - 1);             /* leave just the module */
  lua_settop(L, metas_at - 1);
  return 1;
}
