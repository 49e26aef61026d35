/*
** bind_options.c: the options table of a binding ({limit = 10, ...}):
** an unknown name is an error that suggests the closest known one.
*/
#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <string.h>

#include "bind.h"

int sl_bind_opt_error(lua_State *L, const char *fname, const char *fmt, ...) {
  sl_error e;
  va_list ap;
  va_start(ap, fmt);
  vsnprintf(e.msg, sizeof e.msg, fmt, ap);
  va_end(ap);
  e.code = SL_EARG;
  e.line = e.col = 0;
  return sl_bind_raise(L, &e, fname, NULL, 0);
}

void sl_bind_check_options(lua_State *L, int idx, const char *fname,
                           const char *const *known, size_t nknown) {
  if (lua_isnoneornil(L, idx)) return;
  if (!lua_istable(L, idx))
    sl_bind_opt_error(L, fname, "the options are a table such as {%s = ...}, got %s", known[0],
              sl_bind_value_text(L, idx));
  lua_pushnil(L);
  while (lua_next(L, idx)) {
    lua_pop(L, 1);
    const char *k = lua_type(L, -1) == LUA_TSTRING ? lua_tostring(L, -1) : NULL;
    size_t i = 0;
    while (k && i < nknown && strcmp(k, known[i]) != 0) i++;
    if (k && i < nknown) continue;
    const char *near = k ? sl_closest(k, known, nknown) : NULL;
    if (near) sl_bind_opt_error(L, fname, "unknown option '%s'; did you mean '%s'?", k, near);
    luaL_Buffer b;
    luaL_buffinit(L, &b);
    for (i = 0; i < nknown; i++) {
      if (i) luaL_addstring(&b, ", ");
      luaL_addstring(&b, known[i]);
    }
    luaL_pushresult(&b);
    const char *names = lua_tostring(L, -1);
    sl_bind_opt_error(L, fname, "unknown option %s (options: %s)",
              k ? lua_pushfstring(L, "'%s'", k) : sl_bind_value_text(L, -2), names);
  }
}

double *sl_bind_numbers(lua_State *L, int idx, size_t *n) {
  luaL_checktype(L, idx, LUA_TTABLE);
  *n = (size_t)luaL_len(L, idx);
  double *v = lua_newuserdatauv(L, (*n ? *n : 1) * sizeof *v, 0);
  for (size_t i = 0; i < *n; i++) {
    lua_geti(L, idx, (lua_Integer)i + 1);
    v[i] = lua_isnumber(L, -1) ? lua_tonumber(L, -1) : NAN;
    lua_pop(L, 1);
  }
  return v;
}
