/*
** bind_diag.c: the diagnostics of weighting in Lua, raw (lua/sluice/
** diagnostics.lua gives them their public form, balance{} and overlap{}):
** sluice._balance and sluice._overlap of a data frame or a lazy table
** (sumdiag.h), and sluice._histograms, the picture of two histograms from
** their counts.
*/
#include <math.h>
#include <stdlib.h>
#include <string.h>
#include "bind.h"
#include "estimate.h"
#include "plot.h"
#include "sumdiag.h"

#define BALANCE_MT "sluice.balance_sums"
#define OVERLAP_MT "sluice.overlap_sums"

/* The results live in userdata, so that an error while building the
** tables frees them. */
static int balance_gc(lua_State *L) {
  sl_balance_free(luaL_checkudata(L, 1, BALANCE_MT));
  return 0;
}
static int overlap_gc(lua_State *L) {
  sl_overlap_free(luaL_checkudata(L, 1, OVERLAP_MT));
  return 0;
}

static void set_number(lua_State *L, const char *k, double v) {
  lua_pushnumber(L, v);
  lua_setfield(L, -2, k);
}

/* A count as an integer (sums of 0/1 values are whole numbers). */
static void set_count(lua_State *L, const char *k, double v) {
  lua_pushinteger(L, (lua_Integer)v);
  lua_setfield(L, -2, k);
}

/* sluice._balance(data, treatment, outcome, {set}, opts) -> {n =, dropped
** =, warnings =, {covariate =, before =, after =, treated_mean =, ...}} */
static int l_balance(lua_State *L) {
  sl_est_spec s;
  sl_bind_read_spec(L, &s);
  sl_balance *b = lua_newuserdatauv(L, sizeof *b, 0);
  memset(b, 0, sizeof *b);
  luaL_setmetatable(L, BALANCE_MT);
  sl_error e;
  if (sl_diag_balance(&s, b, &e)) return sl_bind_raise(L, &e, NULL, NULL, 0);
  static const char *const arm[2] = {"control", "treated"};
  static const char *const when[2] = {"", "_after"};
  lua_createtable(L, (int)b->q, 4);
  set_count(L, "n", (double)b->n);
  set_count(L, "dropped", (double)b->dropped);
  lua_pushstring(L, b->warnings);
  lua_setfield(L, -2, "warnings");
  for (size_t j = 0; j < b->q; j++) {
    const sl_balance_col *c = &b->col[j];
    lua_createtable(L, 0, 11);
    lua_pushstring(L, c->name);
    lua_setfield(L, -2, "covariate");
    set_number(L, "before", c->smd[0]);
    set_number(L, "after", c->smd[1]);
    for (int w = 0; w < 2; w++)
      for (int a = 0; a < 2; a++) {
        lua_pushfstring(L, "%s_mean%s", arm[a], when[w]);
        lua_pushnumber(L, c->mean[w][a]);
        lua_rawset(L, -3);
        lua_pushfstring(L, "%s_var%s", arm[a], when[w]);
        lua_pushnumber(L, c->var[w][a]);
        lua_rawset(L, -3);
      }
    lua_rawseti(L, -2, (lua_Integer)j + 1);
  }
  return 1;
}

/* sluice._overlap(data, treatment, outcome, {set}, opts, bins) -> {n =,
** dropped =, extreme =, warnings =, groups = {treated, control: group =,
** n =, min =, q1 =, median =, q3 =, max =}, hist = {{treated, control}
** of each bin}} */
static int l_overlap(lua_State *L) {
  sl_est_spec s;
  sl_bind_read_spec(L, &s);
  lua_Integer bins = luaL_checkinteger(L, 6);
  if (bins < 1 || bins > SL_OVERLAP_BINS_MAX)
    return luaL_argerror(L, 6, "bins from 1 to 1000");
  sl_overlap *o = lua_newuserdatauv(L, sizeof *o, 0);
  memset(o, 0, sizeof *o);
  luaL_setmetatable(L, OVERLAP_MT);
  sl_error e;
  if (sl_diag_overlap(&s, (size_t)bins, o, &e)) return sl_bind_raise(L, &e, NULL, NULL, 0);
  lua_createtable(L, 0, 6);
  set_count(L, "n", (double)o->n);
  set_count(L, "dropped", (double)o->dropped);
  set_count(L, "extreme", (double)o->extreme);
  lua_pushstring(L, o->warnings);
  lua_setfield(L, -2, "warnings");
  lua_createtable(L, 2, 0);
  for (int g = 0; g < 2; g++) {
    int a = 1 - g;   /* the treated first */
    lua_createtable(L, 0, 7);
    lua_pushstring(L, a ? "treated" : "control");
    lua_setfield(L, -2, "group");
    set_count(L, "n", o->count[a]);
    set_number(L, "min", o->min[a]);
    set_number(L, "q1", o->q1[a]);
    set_number(L, "median", o->median[a]);
    set_number(L, "q3", o->q3[a]);
    set_number(L, "max", o->max[a]);
    lua_rawseti(L, -2, g + 1);
  }
  lua_setfield(L, -2, "groups");
  lua_createtable(L, (int)o->bins, 0);
  for (size_t k = 0; k < o->bins; k++) {
    lua_createtable(L, 2, 0);
    lua_pushinteger(L, (lua_Integer)o->hist[2 * k + 1]);
    lua_rawseti(L, -2, 1);
    lua_pushinteger(L, (lua_Integer)o->hist[2 * k]);
    lua_rawseti(L, -2, 2);
    lua_rawseti(L, -2, (lua_Integer)k + 1);
  }
  lua_setfield(L, -2, "hist");
  return 1;
}

/* The list of counts at idx, in a userdata pushed on the stack. */
static double *counts(lua_State *L, int idx, size_t *n) {
  double *v = sl_bind_numbers(L, idx, n);
  for (size_t i = 0; i < *n; i++) if (isnan(v[i])) luaL_argerror(L, idx, "a list of counts");
  return v;
}
/* sluice._histograms(path, title, xlabel, a, alabel, b, blabel, lo, hi):
** a and b the counts of the same bins on [lo, hi] */
static int l_histograms(lua_State *L) {
  size_t na, nb;
  double *a = counts(L, 4, &na), *b = counts(L, 6, &nb);
  if (na != nb) luaL_argerror(L, 6, "as many counts as the first histogram");
  if (na < 1 || na > 1000) luaL_argerror(L, 4, "1 to 1000 counts");
  sl_error e;
  if (sl_plot_histograms(luaL_checkstring(L, 1), luaL_checkstring(L, 2), luaL_checkstring(L, 3),
                         a, luaL_checkstring(L, 5), b, luaL_checkstring(L, 7),
                         luaL_checknumber(L, 8), luaL_checknumber(L, 9), (int)na, &e))
    return sl_bind_raise(L, &e, NULL, NULL, 0);
  lua_pushvalue(L, 1);
  return 1;
}

static const luaL_Reg funcs[] = {
  {"_balance", l_balance}, {"_overlap", l_overlap}, {"_histograms", l_histograms},
  {NULL, NULL}
};

int sl_open_diag(lua_State *L) {
  luaL_newmetatable(L, BALANCE_MT);
  lua_pushcfunction(L, balance_gc);
  lua_setfield(L, -2, "__gc");
  luaL_newmetatable(L, OVERLAP_MT);
  lua_pushcfunction(L, overlap_gc);
  lua_setfield(L, -2, "__gc");
  lua_pop(L, 2);
  luaL_setfuncs(L, funcs, 0);
  return 0;
}
