/*
** bind_citest.c: the raw primitives behind g:test (lua/sluice/citest.lua
** gives them their public form): sluice._citest tests one implication on
** a frame, sluice._citest_db on a lazy table inside the database,
** sluice._padjust adjusts a list of p-values.
*/
#include <math.h>
#include <string.h>
#include "bind.h"
#include "bind_frame.h"
#include "citest.h"
#include "db.h"

static const char *const methods[] = {"auto", "partial", "lr", "gtest", "residual", NULL};
static const char *const adjusts[] = {"none", "holm", "bh", NULL};

/* Column indices of the names in the list at idx (citest.lua has checked
** them), in a userdata pushed on the stack. */
static int *columns(lua_State *L, const sl_frame *f, int idx, size_t *n) {
  luaL_checktype(L, idx, LUA_TTABLE);
  *n = (size_t)luaL_len(L, idx);
  int *c = lua_newuserdatauv(L, (*n ? *n : 1) * sizeof *c, 0);
  for (size_t i = 0; i < *n; i++) {
    lua_geti(L, idx, (lua_Integer)i + 1);
    sl_error e;
    const char *name = lua_tostring(L, -1);
    if (!name) luaL_argerror(L, idx, "column names are strings");
    c[i] = sl_frame_lookup(f, name, &e);
    if (c[i] < 0) luaL_argerror(L, idx, e.msg);
    lua_pop(L, 1);
  }
  return c;
}

#define SETNUM(k, v) (lua_pushnumber(L, (v)), lua_setfield(L, -2, (k)))

/* The result of a test as the table _citest returns; the response is
** named by the argument a (2) or b (3). */
static int push_result(lua_State *L, const sl_ci_result *r, int boot) {
  lua_createtable(L, 0, 14);
  lua_pushstring(L, sl_citest_name(r->test)); lua_setfield(L, -2, "test");
  lua_pushinteger(L, (lua_Integer)r->n); lua_setfield(L, -2, "n");
  lua_pushinteger(L, (lua_Integer)r->dropped); lua_setfield(L, -2, "dropped");
  SETNUM("effect", r->effect);
  if (!isnan(r->lo)) { SETNUM("lo", r->lo); SETNUM("hi", r->hi); }
  SETNUM("stat", r->stat);
  if (!isnan(r->df)) SETNUM("df", r->df);
  SETNUM("p", r->p);
  if (r->response >= 0) {
    lua_pushvalue(L, r->response == 0 ? 2 : 3);
    lua_setfield(L, -2, "response");
  }
  if (boot) { lua_pushinteger(L, (lua_Integer)r->boot_done); lua_setfield(L, -2, "boot"); }
  if (r->note[0]) { lua_pushstring(L, r->note); lua_setfield(L, -2, "note"); }
  return 1;
}

/* nil, the reason, and the rows used and dropped (nil when no row was
** read). */
static int push_failure(lua_State *L, const sl_ci_result *r, const sl_error *e) {
  lua_pushnil(L);
  lua_pushstring(L, e->msg);
  if (r->n == 0 && r->dropped == 0) { lua_pushnil(L); lua_pushnil(L); return 4; }
  lua_pushinteger(L, (lua_Integer)r->n);
  lua_pushinteger(L, (lua_Integer)r->dropped);
  return 4;
}

/* sluice._citest(frame, a, b, {given}, method, level, boot, seed) -> a
** table, or nil and the reason the test cannot be done. */
static int l_citest(lua_State *L) {
  sl_frame *f = sl_bind_checkframe(L, 1);
  sl_error e;
  int a = sl_frame_lookup(f, luaL_checkstring(L, 2), &e);
  if (a < 0) return luaL_argerror(L, 2, e.msg);
  int b = sl_frame_lookup(f, luaL_checkstring(L, 3), &e);
  if (b < 0) return luaL_argerror(L, 3, e.msg);
  size_t ng;
  int *given = columns(L, f, 4, &ng);
  int method = luaL_checkoption(L, 5, "auto", methods);
  double level = luaL_optnumber(L, 6, 0.95);
  lua_Integer boot = luaL_optinteger(L, 7, 0);
  lua_Integer seed = luaL_optinteger(L, 8, 1);
  if (boot < 0) return luaL_argerror(L, 7, "boot must not be negative");
  sl_ci_result r;
  if (sl_citest(f, a, b, given, ng, method, level, (size_t)boot, (uint64_t)seed, &r, &e)) {
    if (e.code == SL_ENOMEM) return sl_bind_raise(L, &e, NULL, NULL, 0);
    return push_failure(L, &r, &e);
  }
  return push_result(L, &r, boot != 0);
}

/* sluice._citest_db(lazy, a, b, {given}, method, level): the test inside
** the database (citest.lua has refused boot).  A method that does not run
** there, a failure of the connection or of memory and a Ctrl-C are raised;
** what the data rule out comes back as for _citest. */
static int l_citest_db(lua_State *L) {
  sl_db_table *t = sl_bind_checklazy(L, 1);
  int a = sl_bind_db_column(L, t, 2), b = sl_bind_db_column(L, t, 3);
  luaL_checktype(L, 4, LUA_TTABLE);
  size_t ng = (size_t)luaL_len(L, 4);
  if (ng + 2 > SL_DB_MAX_SUMS)
    return luaL_error(L, "%d conditioning columns at most in a test in the database",
                      SL_DB_MAX_SUMS - 2);
  int given[SL_DB_MAX_SUMS];
  for (size_t i = 0; i < ng; i++) {
    lua_geti(L, 4, (lua_Integer)i + 1);
    given[i] = sl_bind_db_column(L, t, lua_gettop(L));
    lua_pop(L, 1);
  }
  int method = luaL_checkoption(L, 5, "auto", methods);
  double level = luaL_optnumber(L, 6, 0.95);
  sl_error e;
  if (sl_citest_db_method(method, &e)) return sl_bind_raise(L, &e, NULL, NULL, 0);
  if (!sl_db_is_open(sl_db_of(t)))
    return luaL_error(L, "the connection is closed (db:close()); connect again");
  sl_ci_result r;
  sl_bind_stop = 0;
  if (sl_citest_db(t, a, b, given, ng, method, level, &r, &e)) {
    if (e.code == SL_ENOMEM || e.code == SL_EIO || sl_bind_stop)
      return sl_bind_raise(L, &e, NULL, NULL, 0);
    return push_failure(L, &r, &e);
  }
  return push_result(L, &r, 0);
}

/* sluice._padjust({p...}, "holm" | "bh" | "none") -> {p_adj...}; entries
** that are not numbers (not tested) stay out of the count and come back
** as false. */
static int l_padjust(lua_State *L) {
  luaL_checktype(L, 1, LUA_TTABLE);
  int method = luaL_checkoption(L, 2, "holm", adjusts);
  size_t m = (size_t)luaL_len(L, 1);
  double *p = lua_newuserdatauv(L, (m ? m : 1) * sizeof *p, 0);
  for (size_t i = 0; i < m; i++) {
    lua_geti(L, 1, (lua_Integer)i + 1);
    p[i] = lua_type(L, -1) == LUA_TNUMBER ? lua_tonumber(L, -1) : NAN;
    if (!isnan(p[i]) && !(p[i] >= 0 && p[i] <= 1))
      return luaL_argerror(L, 1, lua_pushfstring(L, "p-value %d is not in [0, 1]", (int)i + 1));
    lua_pop(L, 1);
  }
  sl_error e;
  int code = method == 1 ? SL_ADJ_HOLM : method == 2 ? SL_ADJ_BH : SL_ADJ_NONE;
  if (sl_citest_adjust(p, m, code, p, &e)) return sl_bind_raise(L, &e, NULL, NULL, 0);
  lua_createtable(L, (int)m, 0);
  for (size_t i = 0; i < m; i++) {
    if (isnan(p[i])) lua_pushboolean(L, 0); else lua_pushnumber(L, p[i]);
    lua_rawseti(L, -2, (lua_Integer)i + 1);
  }
  return 1;
}

static const luaL_Reg funcs[] = {
  {"_citest", l_citest}, {"_citest_db", l_citest_db}, {"_padjust", l_padjust},
  {NULL, NULL}
};

int sl_open_citest(lua_State *L) {
  luaL_setfuncs(L, funcs, 0);
  return 0;
}
