/*
** bind_db.c: connections and lazy tables in Lua.  connect(target) gives a
** userdata "sluice.db" that owns an sl_db; db:table(name) and
** db:query(sql) give a "sluice.lazy" that owns an sl_db_table and keeps
** its connection alive (user value 1).  A lazy table holds no rows: #t,
** t:summary(), t:head(n) and t:fetch{limit=} are queries (src/stats/db.c).
** The methods are published here (bind_public.c), as "db:" and "t:".
*/
#include <math.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>
#include "bind.h"
#include "bind_frame.h"
#include "db.h"

#define SL_DB_MT   "sluice.db"
#define SL_LAZY_MT "sluice.lazy"
#define HEAD_ROWS 6        /* t:head() without a number, as f:head() */

typedef struct db_box { sl_db *db; } db_box;
typedef struct lazy_box { sl_db_table *t; } lazy_box;

/* Raise a library error as the message of the public function. */
static int raise_err(lua_State *L, const sl_error *e) {
  lua_pushstring(L, e->msg);
  return lua_error(L);
}

static sl_db *check_db(lua_State *L, int arg) {
  db_box *b = luaL_checkudata(L, arg, SL_DB_MT);
  if (!b->db) luaL_argerror(L, arg, "an empty connection");
  return b->db;
}

static sl_db_table *check_lazy(lua_State *L, int arg) {
  lazy_box *b = luaL_checkudata(L, arg, SL_LAZY_MT);
  if (!b->t) luaL_argerror(L, arg, "an empty lazy table");
  return b->t;
}

sl_db_table *sl_bind_checklazy(lua_State *L, int arg) {
  return check_lazy(L, arg);
}

/* connect(target) */
static int l_connect(lua_State *L) {
  const char *target = luaL_checkstring(L, 1);
  db_box *b = lua_newuserdatauv(L, sizeof *b, 0);
  b->db = NULL;
  luaL_setmetatable(L, SL_DB_MT);
  sl_error e;
  sl_bind_stop = 0;
  b->db = sl_db_open(target, &sl_bind_stop, &e);
  if (!b->db) return raise_err(L, &e);
  return 1;
}

/* Push a lazy table of the connection at argument 1, or raise. */
/* The options of db:table and db:query at index 3: {key = "column"}, the
** rows' key (a column of whole numbers) for the Poisson bootstrap. */
static void table_options(lua_State *L, sl_db_table *t, const char *fname) {
  if (lua_isnil(L, 3)) return;
  static const char *const known[] = {"key"};
  sl_bind_check_options(L, 3, fname, known, 1);
  if (lua_getfield(L, 3, "key") != LUA_TNIL) {
    if (lua_type(L, -1) != LUA_TSTRING) luaL_argerror(L, 3, "key = must name a column");
    sl_error e;
    if (sl_db_set_key(t, (size_t)sl_bind_db_column(L, t, -1), &e)) luaL_argerror(L, 3, e.msg);
  }
  lua_pop(L, 1);
}

static int push_lazy(lua_State *L, sl_db_table *t, const sl_error *e, const char *fname) {
  if (!t) return raise_err(L, e);
  lazy_box *b = lua_newuserdatauv(L, sizeof *b, 1);
  b->t = t;
  luaL_setmetatable(L, SL_LAZY_MT);
  lua_pushvalue(L, 1);
  lua_setiuservalue(L, -2, 1);
  table_options(L, t, fname);
  return 1;
}

static int db_table(lua_State *L) {
  lua_settop(L, 3);   /* the options, or nil, at 3 */
  sl_db *db = check_db(L, 1);
  const char *name = luaL_checkstring(L, 2);
  sl_error e;
  sl_bind_stop = 0;
  if (!sl_db_is_open(db)) luaL_error(L, "the connection is closed (db:close()); connect again");
  return push_lazy(L, sl_db_table_open(db, name, &e), &e, "db:table");
}

static int db_query(lua_State *L) {
  lua_settop(L, 3);
  sl_db *db = check_db(L, 1);
  const char *sql = luaL_checkstring(L, 2);
  sl_error e;
  sl_bind_stop = 0;
  if (!sl_db_is_open(db)) luaL_error(L, "the connection is closed (db:close()); connect again");
  return push_lazy(L, sl_db_query_open(db, sql, &e), &e, "db:query");
}

static int db_close(lua_State *L) {
  sl_db_disconnect(check_db(L, 1));
  return 0;
}

static int db_gc(lua_State *L) {
  db_box *b = luaL_checkudata(L, 1, SL_DB_MT);
  sl_db_close(b->db);
  b->db = NULL;
  return 0;
}

static int db_tostring(lua_State *L) {
  char buf[512];
  sl_db *db = check_db(L, 1);
  lua_pushfstring(L, "connection to %s, read-only%s", sl_db_describe(db, buf, sizeof buf),
                  sl_db_is_open(db) ? "; db:table(name) or db:query(sql) gives a lazy table" : "");
  return 1;
}

/* ---- lazy tables ---- */

static int t_names(lua_State *L) {
  sl_db_table *t = check_lazy(L, 1);
  sl_bind_newlist(L, (int)sl_db_ncol(t));
  for (size_t j = 0; j < sl_db_ncol(t); j++) {
    lua_pushstring(L, sl_db_colname(t, j));
    lua_rawseti(L, -2, (lua_Integer)j + 1);
  }
  return 1;
}

/* t:types(): {name = "number" or "category"}, as c.type says for a frame. */
static int t_types(lua_State *L) {
  sl_db_table *t = check_lazy(L, 1);
  lua_createtable(L, 0, (int)sl_db_ncol(t));
  for (size_t j = 0; j < sl_db_ncol(t); j++) {
    lua_pushstring(L, sl_db_coltype(t, j) == SL_NUMERIC ? "number" : "category");
    lua_setfield(L, -2, sl_db_colname(t, j));
  }
  return 1;
}

static int t_len(lua_State *L) {
  sl_db_table *t = check_lazy(L, 1);
  uint64_t n;
  sl_error e;
  sl_bind_stop = 0;
  if (sl_db_count(t, &n, &e) != SL_OK) {   /* a metamethod: not published, so here */
    lua_pushstring(L, e.msg);
    return sl_bind_public_error(L, "#t", 1);
  }
  lua_pushinteger(L, (lua_Integer)n);
  return 1;
}

/* Set field k of the table on top to x, leaving NaN out (as f:summary). */
static void set_number(lua_State *L, const char *k, double x) {
  if (isnan(x)) return;
  lua_pushnumber(L, x);
  lua_setfield(L, -2, k);
}

/* t:summary(): the shape of f:summary(), from aggregate queries. */
static int t_summary(lua_State *L) {
  sl_db_table *t = check_lazy(L, 1);
  size_t m = sl_db_ncol(t);
  sl_summary *s = lua_newuserdatauv(L, m * sizeof *s, 0);
  size_t *lev = lua_newuserdatauv(L, m * sizeof *lev, 0);
  sl_error e;
  sl_bind_stop = 0;
  if (sl_db_summary(t, s, lev, &e) != SL_OK) return raise_err(L, &e);
  lua_createtable(L, (int)m, 0);
  luaL_setmetatable(L, SL_SUMMARY_MT);
  for (size_t j = 0; j < m; j++) {
    int num = sl_db_coltype(t, j) == SL_NUMERIC;
    lua_createtable(L, 0, 12);
    lua_pushstring(L, sl_db_colname(t, j));
    lua_setfield(L, -2, "column");
    lua_pushstring(L, num ? "number" : "category");
    lua_setfield(L, -2, "type");
    lua_pushinteger(L, (lua_Integer)s[j].n);
    lua_setfield(L, -2, "n");
    lua_pushinteger(L, (lua_Integer)s[j].missing);
    lua_setfield(L, -2, "missing");
    if (!num) {
      lua_pushinteger(L, (lua_Integer)lev[j]);
      lua_setfield(L, -2, "levels");
    }
    set_number(L, "mean", s[j].mean);
    set_number(L, "sd", s[j].sd);
    set_number(L, "min", s[j].min);
    set_number(L, "q1", s[j].q1);
    set_number(L, "median", s[j].median);
    set_number(L, "q3", s[j].q3);
    set_number(L, "max", s[j].max);
    lua_rawseti(L, -2, (lua_Integer)j + 1);
  }
  return 1;
}

/* A count of rows at arg: a whole number from 0 (from 1 when positive),
** or math.huge for SIZE_MAX. */
static size_t check_rows(lua_State *L, int arg, const char *what, int from) {
  int ok;
  lua_Number x = lua_tonumberx(L, arg, &ok);
  if (!ok) luaL_typeerror(L, arg, "number");
  if (x == HUGE_VAL) return SIZE_MAX;
  if (!(x >= from) || x != floor(x))
    luaL_error(L, "%s must be a whole number of rows, %d or more (math.huge for all), got %s",
               what, from, x != x ? "NaN" : lua_tostring(L, arg));
  return x >= 0x1p53 ? SIZE_MAX : (size_t)x;
}

static int push_frame(lua_State *L, sl_frame *f, const sl_error *e) {
  if (!f) return raise_err(L, e);
  sl_bind_pushframe(L, f);
  return 1;
}

/* t:head(n): the first n rows (6 unless given) as a frame. */
static int t_head(lua_State *L) {
  sl_db_table *t = check_lazy(L, 1);
  size_t n = lua_isnoneornil(L, 2) ? HEAD_ROWS : check_rows(L, 2, "the number of rows", 0);
  sl_error e;
  sl_bind_stop = 0;
  return push_frame(L, sl_db_fetch(t, n, SIZE_MAX, &e), &e);
}

/* t:fetch{limit=}: every row as a frame; more than the limit is an error. */
static int t_fetch(lua_State *L) {
  static const char *const known[] = {"limit"};
  sl_db_table *t = check_lazy(L, 1);
  size_t limit = 0;
  if (!lua_isnoneornil(L, 2)) {
    luaL_checktype(L, 2, LUA_TTABLE);
    sl_bind_check_options(L, 2, "t:fetch", known, 1);
    if (lua_getfield(L, 2, "limit") != LUA_TNIL) {
      if (!lua_isnumber(L, -1))
        luaL_error(L, "option limit must be a number of rows, got %s", sl_bind_value_text(L, -1));
      limit = check_rows(L, lua_gettop(L), "option limit", 1);
    }
    lua_pop(L, 1);
  }
  sl_error e;
  sl_bind_stop = 0;
  return push_frame(L, sl_db_fetch(t, SIZE_MAX, limit, &e), &e);
}

int sl_bind_db_column(lua_State *L, const sl_db_table *t, int idx) {
  const char *name = luaL_checkstring(L, idx);
  size_t m = sl_db_ncol(t);
  const char **names = lua_newuserdatauv(L, (m ? m : 1) * sizeof *names, 0);
  for (size_t j = 0; j < m; j++) {
    names[j] = sl_db_colname(t, j);
    if (strcmp(names[j], name) == 0) { lua_pop(L, 1); return (int)j; }
  }
  const char *near = sl_closest(name, names, m);
  if (near) return luaL_error(L, "no column '%s'; did you mean '%s'?", name, near);
  return luaL_error(L, "no column '%s'", name);
}

/* t:_sums({cols}, {weight=, centre={...}}): the aggregate of sl_db_sums,
** for the estimators to come and for the tests: {n=, dropped=, wsum=,
** sum={...}, cross={{...}}}. */
static int t_sums(lua_State *L) {
  sl_db_table *t = check_lazy(L, 1);
  luaL_checktype(L, 2, LUA_TTABLE);
  lua_Integer p = luaL_len(L, 2);
  if (p < 1 || p > SL_DB_MAX_SUMS) luaL_error(L, "give 1 to %d columns", SL_DB_MAX_SUMS);
  int cols[SL_DB_MAX_SUMS], w = -1;
  double centre[SL_DB_MAX_SUMS];
  int centred = 0;
  for (lua_Integer k = 1; k <= p; k++) {
    lua_geti(L, 2, k);
    cols[k - 1] = sl_bind_db_column(L, t, -1);
    lua_pop(L, 1);
  }
  if (lua_istable(L, 3)) {
    if (lua_getfield(L, 3, "weight") != LUA_TNIL) w = sl_bind_db_column(L, t, -1);
    lua_pop(L, 1);
    if (lua_getfield(L, 3, "centre") == LUA_TTABLE) {
      centred = 1;
      for (lua_Integer k = 1; k <= p; k++) {
        lua_geti(L, -1, k);
        centre[k - 1] = luaL_checknumber(L, -1);
        lua_pop(L, 1);
      }
    }
    lua_pop(L, 1);
  }
  double *sum = lua_newuserdatauv(L, (size_t)p * sizeof *sum, 0);
  double *cross = lua_newuserdatauv(L, (size_t)(p * p) * sizeof *cross, 0);
  sl_db_sums_out o;
  sl_error e;
  sl_bind_stop = 0;
  if (sl_db_sums(t, cols, (size_t)p, w, centred ? centre : NULL, sum, cross, &o, &e) != SL_OK)
    return raise_err(L, &e);
  lua_createtable(L, 0, 5);
  lua_pushinteger(L, (lua_Integer)o.used);
  lua_setfield(L, -2, "n");
  lua_pushinteger(L, (lua_Integer)o.dropped);
  lua_setfield(L, -2, "dropped");
  lua_pushnumber(L, o.wsum);
  lua_setfield(L, -2, "wsum");
  lua_createtable(L, (int)p, 0);
  for (lua_Integer k = 0; k < p; k++) { lua_pushnumber(L, sum[k]); lua_rawseti(L, -2, k + 1); }
  lua_setfield(L, -2, "sum");
  lua_createtable(L, (int)p, 0);
  for (lua_Integer k = 0; k < p; k++) {
    lua_createtable(L, (int)p, 0);
    for (lua_Integer l = 0; l < p; l++) {
      lua_pushnumber(L, cross[k * p + l]);
      lua_rawseti(L, -2, l + 1);
    }
    lua_rawseti(L, -2, k + 1);
  }
  lua_setfield(L, -2, "cross");
  return 1;
}

static int t_gc(lua_State *L) {
  lazy_box *b = luaL_checkudata(L, 1, SL_LAZY_MT);
  sl_db_table_free(b->t);
  b->t = NULL;
  return 0;
}

/* "lazy table "trees" (3 columns: id number, kind category, ...) in
** SQLite file x.db; rows stay in the database". */
static int t_tostring(lua_State *L) {
  sl_db_table *t = check_lazy(L, 1);
  int is_query;
  const char *src = sl_db_source(t, &is_query);
  char buf[512];
  luaL_Buffer b;
  luaL_buffinit(L, &b);
  if (is_query) {
    size_t n = strcspn(src, "\n");
    luaL_addstring(&b, "lazy table of the query \"");
    luaL_addlstring(&b, src, n > 60 ? 60 : n);
    luaL_addstring(&b, n > 60 || src[n] ? "...\"" : "\"");
  } else {
    luaL_addstring(&b, "lazy table \"");
    luaL_addstring(&b, src);
    luaL_addstring(&b, "\"");
  }
  size_t m = sl_db_ncol(t);
  lua_pushfstring(L, ", %I column%s:", (lua_Integer)m, m == 1 ? "" : "s");
  luaL_addvalue(&b);
  for (size_t j = 0; j < m; j++) {
    const char *sql = sl_db_colsql(t, j);
    lua_pushfstring(L, "%s %s [%s%s%s]", j ? "," : "", sl_db_colname(t, j),
                    sl_db_coltype(t, j) == SL_NUMERIC ? "number" : "category",
                    sql[0] ? ", " : "", sql);
    luaL_addvalue(&b);
  }
  lua_pushfstring(L, "\n  in %s; the rows stay there (#t counts them, t:fetch() reads them)",
                  sl_db_describe(sl_db_of(t), buf, sizeof buf));
  luaL_addvalue(&b);
  luaL_pushresult(&b);
  return 1;
}

/* ---- registration ---- */

static const luaL_Reg db_methods[] = {
  {"table", db_table}, {"query", db_query}, {"close", db_close}, {NULL, NULL}
};
/* t:_engine(): "SQLite" or "PostgreSQL", for printouts */
static int t_engine(lua_State *L) {
  sl_db_table *t = check_lazy(L, 1);
  lua_pushstring(L, sl_db_engine(sl_db_of(t)) == SL_DB_POSTGRES ? "PostgreSQL" : "SQLite");
  return 1;
}

static const luaL_Reg lazy_methods[] = {
  {"names", t_names}, {"types", t_types}, {"summary", t_summary}, {"head", t_head},
  {"fetch", t_fetch}, {"_sums", t_sums}, {"_engine", t_engine}, {NULL, NULL}
};

/* A metatable with methods (published under prefix) as __index. */
static void new_meta(lua_State *L, const char *name, const luaL_Reg *meta,
                     const luaL_Reg *methods, const char *prefix) {
  luaL_newmetatable(L, name);
  luaL_setfuncs(L, meta, 0);
  lua_newtable(L);
  luaL_setfuncs(L, methods, 0);
  sl_bind_publish(L, -1, prefix);
  lua_pushvalue(L, -1);
  lua_setfield(L, -3, "methods");
  lua_setfield(L, -2, "__index");
  lua_pop(L, 1);
}

int sl_open_db(lua_State *L) {
  static const luaL_Reg db_meta[] = {{"__gc", db_gc}, {"__tostring", db_tostring}, {NULL, NULL}};
  static const luaL_Reg lazy_meta[] = {{"__gc", t_gc}, {"__tostring", t_tostring},
                                       {"__len", t_len}, {NULL, NULL}};
  new_meta(L, SL_DB_MT, db_meta, db_methods, "db:");
  new_meta(L, SL_LAZY_MT, lazy_meta, lazy_methods, "t:");
  lua_pushcfunction(L, l_connect);
  lua_setfield(L, -2, "connect");   /* into the module table on top */
  return 0;
}
