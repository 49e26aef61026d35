/*
** replay.c: the command line side of replay.  The work is done by
** sluice.replay, in Lua (with the child process of replayer.c); this
** file hands it the options.
*/
#include <stdio.h>

#include <lua.h>
#include <lauxlib.h>

#include "replay.h"
#include "run.h"

/* Field name = s (or nothing when s is NULL) in the table on top. */
static void set_string(lua_State *L, const char *name, const char *s) {
  if (s == NULL)
    return;
  lua_pushstring(L, s);
  lua_setfield(L, -2, name);
}

int replay_run(lua_State *L, const sl_options *o) {
  lua_getglobal(L, "require");
  lua_pushliteral(L, "sluice.replay");
  if (run_report(L, run_call(L, 1, 1, RUN_SCRIPT)) != LUA_OK)
    return 1;
  lua_getfield(L, -1, "replay");
  lua_remove(L, -2);
  lua_createtable(L, 0, 4);
  set_string(L, "log", o->replay);
  set_string(L, "out", o->out_dir);
  lua_pushboolean(L, o->trust);
  lua_setfield(L, -2, "trust");
  lua_pushboolean(L, o->update);
  lua_setfield(L, -2, "update");
  if (o->limit > 0) {
    lua_pushnumber(L, o->limit);
    lua_setfield(L, -2, "limit");
  }
  if (run_report(L, run_call(L, 1, 1, RUN_SCRIPT)) != LUA_OK)
    return 1;
  int status = lua_isinteger(L, -1) ? (int)lua_tointeger(L, -1) : 1;
  lua_pop(L, 1);
  fflush(stdout);
  return status;
}
