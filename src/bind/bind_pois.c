/*
** bind_pois.c: the Poisson bootstrap's row weights (poisson_weight.h) in
** Lua, hidden, for the tests that hold the SQL to the C on SQLite and
** PostgreSQL: sluice._pois_weight(key, seed, r), the C value, and
** t:_pois(keycol, seed, r), the weights the database computes for the
** rows of a lazy table, in the order of the key.
*/
#include <stdint.h>
#include <stdlib.h>
#include "bind.h"
#include "db.h"
#include "poisson_weight.h"

#define SL_LAZY_MT "sluice.lazy"   /* bind_db.c's lazy tables */
#define WEIGHTS_MT "sluice.pois_weights"

/* The weights read from the database, freed by the collector if building
** the list runs out of memory. */
typedef struct weights_box { int *w; } weights_box;

static int weights_gc(lua_State *L) {
  weights_box *b = luaL_checkudata(L, 1, WEIGHTS_MT);
  free(b->w);
  b->w = NULL;
  return 0;
}

/* A replicate number at arg: a whole number from 0 to 2^32 - 1. */
static uint32_t check_r(lua_State *L, int arg) {
  lua_Integer r = luaL_checkinteger(L, arg);
  if (r < 0 || r > (lua_Integer)UINT32_MAX)
    luaL_argerror(L, arg, "a replicate number from 0 to 4294967295");
  return (uint32_t)r;
}

/* A seed at arg: any integer, its 64 bits taken as unsigned. */
static uint64_t check_seed(lua_State *L, int arg) {
  return (uint64_t)luaL_checkinteger(L, arg);
}

/* sluice._pois_weight(key, seed, r) */
static int l_pois_weight(lua_State *L) {
  int64_t key = (int64_t)luaL_checkinteger(L, 1);
  uint64_t seed = check_seed(L, 2);
  uint32_t r = check_r(L, 3);
  lua_pushinteger(L, sl_pois_weight(key, seed, r));
  return 1;
}

/* t:_pois(keycol, seed, r): a list of the weights, rows ordered by key. */
static int t_pois(lua_State *L) {
  sl_db_table *t = sl_bind_checklazy(L, 1);
  int key = sl_bind_db_column(L, t, 2);
  uint64_t seed = check_seed(L, 3);
  uint32_t r = check_r(L, 4);
  weights_box *b = lua_newuserdatauv(L, sizeof *b, 0);
  b->w = NULL;
  luaL_setmetatable(L, WEIGHTS_MT);
  size_t n;
  sl_error e;
  sl_bind_stop = 0;
  if (sl_pois_db(t, (size_t)key, seed, r, &b->w, &n, &e) != SL_OK) {
    lua_pushstring(L, e.msg);
    return lua_error(L);
  }
  lua_createtable(L, n > INT32_MAX ? INT32_MAX : (int)n, 0);
  for (size_t i = 0; i < n; i++) {
    lua_pushinteger(L, b->w[i]);
    lua_rawseti(L, -2, (lua_Integer)i + 1);
  }
  free(b->w);
  b->w = NULL;
  return 1;
}

/* Adds _pois_weight to the module table on top and _pois to the lazy
** tables' methods; after sl_open_db. */
int sl_open_pois(lua_State *L) {
  luaL_newmetatable(L, WEIGHTS_MT);
  lua_pushcfunction(L, weights_gc);
  lua_setfield(L, -2, "__gc");
  lua_pop(L, 1);
  lua_pushcfunction(L, l_pois_weight);
  lua_setfield(L, -2, "_pois_weight");
  luaL_getmetatable(L, SL_LAZY_MT);
  if (lua_istable(L, -1) && lua_getfield(L, -1, "__index") == LUA_TTABLE) {
    lua_pushcfunction(L, t_pois);
    lua_setfield(L, -2, "_pois");
    lua_pop(L, 1);
  } else if (lua_istable(L, -1)) lua_pop(L, 1);
  lua_pop(L, 1);
  return 0;
}
