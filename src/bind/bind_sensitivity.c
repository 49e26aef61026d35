/*
** bind_sensitivity.c: the raw primitives of sensitivity to unmeasured
** confounding (sluice._sens_*); lua/sluice/sensitivity.lua gives them their
** public form (evalue, sensitivity{}, compare{hidden =}).
*/
#include <math.h>
#include <string.h>
#include "bind.h"
#include "sensitivity.h"
#include "plot.h"
#include <gsl/gsl_cdf.h>

#define CONTOUR_SIDE 81   /* grid points a side of the contour picture */
#define SET_MAX 512       /* nodes in one set of compare{hidden =} */

/* Raise e for the public function fname. */
static int raise(lua_State *L, const sl_error *e, const char *fname) {
  return sl_bind_raise(L, e, fname, NULL, 0);
}

/* sluice._sens_rv(t, df, q, alpha) -> rv, rv_alpha */
static int l_rv(lua_State *L) {
  double rv, rva;
  sl_error e;
  if (sl_sens_rv(luaL_checknumber(L, 1), luaL_checknumber(L, 2), luaL_checknumber(L, 3),
                 luaL_checknumber(L, 4), &rv, &rva, &e))
    return raise(L, &e, "sensitivity");
  lua_pushnumber(L, rv);
  lua_pushnumber(L, rva);
  return 2;
}

/* sluice._sens_tcrit(alpha, df) -> the two-sided critical t */
static int l_tcrit(lua_State *L) {
  double alpha = luaL_checknumber(L, 1), df = luaL_checknumber(L, 2);
  luaL_argcheck(L, alpha > 0 && alpha < 1 && df > 0, 1, "0 < alpha < 1 and df > 0");
  lua_pushnumber(L, gsl_cdf_tdist_Qinv(alpha / 2, df));
  return 1;
}

/* sluice._sens_bound(r2dx, r2yx, kd, ky) -> r2dz, r2yz, capped */
static int l_bound(lua_State *L) {
  double dz, yz;
  int capped;
  sl_error e;
  if (sl_sens_bound(luaL_checknumber(L, 1), luaL_checknumber(L, 2), luaL_checknumber(L, 3),
                    luaL_checknumber(L, 4), &dz, &yz, &capped, &e))
    return raise(L, &e, "sensitivity");
  lua_pushnumber(L, dz);
  lua_pushnumber(L, yz);
  lua_pushboolean(L, capped);
  return 3;
}

/* sluice._sens_adjust(est, se, df, r2dz, r2yz) -> est, se, t */
static int l_adjust(lua_State *L) {
  double a, s, t;
  sl_error e;
  if (sl_sens_adjust(luaL_checknumber(L, 1), luaL_checknumber(L, 2), luaL_checknumber(L, 3),
                     luaL_checknumber(L, 4), luaL_checknumber(L, 5), &a, &s, &t, &e))
    return raise(L, &e, "sensitivity");
  lua_pushnumber(L, a);
  lua_pushnumber(L, s);
  lua_pushnumber(L, t);
  return 3;
}

/* The list at idx as n numbers in a userdata pushed on the stack. */
static double *numbers(lua_State *L, int idx, size_t n) {
  size_t k;
  double *v = sl_bind_numbers(L, idx, &k);
  if (k != n) luaL_argerror(L, idx, "one value per point");
  return v;
}
/* sluice._sens_contour(path, title, est, se, df, xmax, ymax, special, speciallabel,
**                      labels, px, py): the adjusted estimate over the grid. */
static int l_contour(lua_State *L) {
  const char *path = luaL_checkstring(L, 1), *title = luaL_checkstring(L, 2);
  double est = luaL_checknumber(L, 3), se = luaL_checknumber(L, 4), df = luaL_checknumber(L, 5);
  double xmax = luaL_checknumber(L, 6), ymax = luaL_checknumber(L, 7);
  double special = luaL_optnumber(L, 8, NAN);
  const char *slabel = luaL_optstring(L, 9, NULL);
  luaL_checktype(L, 10, LUA_TTABLE);
  size_t np = (size_t)luaL_len(L, 10);
  const char **labels = lua_newuserdatauv(L, (np ? np : 1) * sizeof *labels, 0);
  for (size_t i = 0; i < np; i++) {
    lua_geti(L, 10, (lua_Integer)i + 1);
    labels[i] = lua_tostring(L, -1);
    lua_pop(L, 1);   /* the list keeps the strings alive */
    if (!labels[i]) luaL_argerror(L, 10, "labels are strings");
  }
  double *px = numbers(L, 11, np), *py = numbers(L, 12, np);
  size_t side = CONTOUR_SIDE;
  double *z = lua_newuserdatauv(L, side * side * sizeof *z, 0);
  sl_error e;
  for (size_t i = 0; i < side; i++)
    for (size_t j = 0; j < side; j++) {
      double dz = fmin(xmax * (double)i / (double)(side - 1), SL_SENS_R2_MAX);
      double yz = fmin(ymax * (double)j / (double)(side - 1), 1), s, t;
      if (sl_sens_adjust(est, se, df, dz, yz, &z[i * side + j], &s, &t, &e))
        return raise(L, &e, "sensitivity");
    }
  if (sl_plot_contour(path, title, "partial R^2 of the confounder with the treatment",
                      "partial R^2 of the confounder with the outcome", z, side, side,
                      xmax, ymax, special, slabel, px, py, labels, np, &e))
    return raise(L, &e, "sensitivity");
  lua_pushvalue(L, 1);
  return 1;
}

/* sluice._lines(path, title, xlabel, ylabel, x, {{y...}...}, labels, first_dashed) */
static int l_lines(lua_State *L) {
  luaL_checktype(L, 5, LUA_TTABLE);
  luaL_checktype(L, 6, LUA_TTABLE);
  luaL_checktype(L, 7, LUA_TTABLE);
  size_t nx = (size_t)luaL_len(L, 5), ns = (size_t)luaL_len(L, 6);
  if ((size_t)luaL_len(L, 7) != ns) luaL_argerror(L, 7, "one label per line");
  double *x = numbers(L, 5, nx);
  double *y = lua_newuserdatauv(L, (nx && ns ? nx * ns : 1) * sizeof *y, 0);
  const char **labels = lua_newuserdatauv(L, (ns ? ns : 1) * sizeof *labels, 0);
  for (size_t s = 0; s < ns; s++) {
    lua_geti(L, 6, (lua_Integer)s + 1);
    if (!lua_istable(L, -1) || (size_t)luaL_len(L, -1) != nx) luaL_argerror(L, 6, "one value per point");
    for (size_t i = 0; i < nx; i++) {
      lua_geti(L, -1, (lua_Integer)i + 1);
      y[s * nx + i] = lua_isnumber(L, -1) ? lua_tonumber(L, -1) : NAN;
      lua_pop(L, 1);
    }
    lua_pop(L, 1);
    lua_geti(L, 7, (lua_Integer)s + 1);
    labels[s] = lua_tostring(L, -1);
    lua_pop(L, 1);   /* the list keeps the strings alive */
    if (!labels[s]) luaL_argerror(L, 7, "labels are strings");
  }
  sl_error e;
  if (sl_plot_lines(luaL_checkstring(L, 1), luaL_checkstring(L, 2), luaL_checkstring(L, 3),
                    luaL_checkstring(L, 4), x, nx, y, labels, ns, lua_toboolean(L, 8), &e))
    return raise(L, &e, "compare");
  lua_pushvalue(L, 1);
  return 1;
}

/* A node id of the model's graph by name, or an argument error. */
static int32_t sem_node(lua_State *L, const sl_graph *g, int arg) {
  const char *nm = luaL_checkstring(L, arg);
  sl_error e;
  int32_t v = sl_graph_lookup(g, nm, strlen(nm), &e);
  if (v < 0) luaL_argerror(L, arg, e.msg);
  return v;
}

/* sluice._sens_sem_grid(m, u, factor, x, y, sets) -> truth, {limit per set}:
** the model with u's outgoing coefficients times factor.  A model of
** sem() is a userdata whose first member is its sl_sem. */
static int l_sem_grid(lua_State *L) {
  const sl_sem *m = luaL_checkudata(L, 1, "sluice.sem");
  if (!m->B) luaL_argerror(L, 1, "an unfinished model");
  if (!m->exact) luaL_argerror(L, 1, "the model has binary or binarized nodes: no exact limit");
  lua_getiuservalue(L, 1, 1);
  sl_graph *g = sl_bind_checkgraph(L, -1);
  lua_pop(L, 1);
  int32_t u = sem_node(L, g, 2), x = sem_node(L, g, 4), y = sem_node(L, g, 5);
  double factor = luaL_checknumber(L, 3);
  luaL_checktype(L, 6, LUA_TTABLE);
  sl_sem *s = lua_newuserdatauv(L, sizeof *s, 0);   /* freed below on every path */
  memset(s, 0, sizeof *s);
  sl_error e;
  if (sl_sens_sem_scaled(m, u, factor, s, &e)) return raise(L, &e, "compare");
  double v;
  int rc = sl_sem_effect(s, x, y, &v, &e);
  if (rc) { sl_sem_free(s); return raise(L, &e, "compare"); }
  lua_pushnumber(L, v);
  lua_Integer nsets = luaL_len(L, 6);
  lua_createtable(L, (int)nsets, 0);
  int ids[SET_MAX];
  for (lua_Integer i = 1; i <= nsets; i++) {
    lua_geti(L, 6, i);
    lua_Integer k = lua_istable(L, -1) ? luaL_len(L, -1) : -1;
    if (k < 0 || k > SET_MAX) { sl_sem_free(s); luaL_argerror(L, 6, "sets are lists of up to 512 names"); }
    for (lua_Integer j = 1; j <= k; j++) {
      lua_geti(L, -1, j);
      const char *nm = lua_tostring(L, -1);
      int32_t id = nm ? sl_graph_lookup(g, nm, strlen(nm), &e) : -1;
      lua_pop(L, 1);
      if (id < 0) { sl_sem_free(s); luaL_argerror(L, 6, "a set names a node the model lacks"); }
      ids[j - 1] = id;
    }
    lua_pop(L, 1);
    if (sl_sem_limit(s, x, y, ids, (size_t)k, &v, &e)) { sl_sem_free(s); return raise(L, &e, "compare"); }
    lua_pushnumber(L, v);
    lua_seti(L, -2, i);
  }
  sl_sem_free(s);
  return 2;
}

static const luaL_Reg funcs[] = {
  {"_sens_rv", l_rv}, {"_sens_tcrit", l_tcrit}, {"_sens_bound", l_bound}, {"_sens_adjust", l_adjust},
  {"_sens_contour", l_contour}, {"_lines", l_lines}, {"_sens_sem_grid", l_sem_grid},
  {NULL, NULL}
};

int sl_open_sensitivity(lua_State *L) {
  luaL_setfuncs(L, funcs, 0);
  return 0;
}
