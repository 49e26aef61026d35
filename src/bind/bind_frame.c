/*
** bind_frame.c: data frames in Lua.  A frame is an immutable userdata
** "sluice.frame" that owns its sl_frame; its user value is a table with the
** fingerprint of the file it was read from and the warnings of the read.
** f[name] gives a read-only column object "sluice.column" that keeps its
** frame alive.  The Lua layer (lua/sluice/frame.lua) words the printed
** forms through hooks: frame_text, column_text, summary_text and warn;
** hooks.data_read(path, sha256, bytes), when set, hears of every file read.
*/
#include <math.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>
#include "bind.h"
#include "bind_frame.h"

typedef struct frame_box { sl_frame *f; } frame_box;
typedef struct column_box { int j; } column_box;   /* user value 1: the frame */

#define READONLY "frames are read-only; use f:with_column or f:binarize"

/* ---- boxes ---- */

/* Push an empty frame box and its info table; returns the box. */
static frame_box *new_box(lua_State *L) {
  frame_box *b = lua_newuserdatauv(L, sizeof *b, 1);
  b->f = NULL;
  luaL_setmetatable(L, SL_FRAME_MT);
  lua_createtable(L, 0, 4);
  sl_bind_newlist(L, 0);
  lua_setfield(L, -2, "warnings");
  lua_setiuservalue(L, -2, 1);
  return b;
}

void sl_bind_pushframe(lua_State *L, sl_frame *f) {
  frame_box *b = lua_newuserdatauv(L, sizeof *b, 1);
  b->f = f;                    /* owned from here on, even if what follows fails */
  luaL_setmetatable(L, SL_FRAME_MT);
  lua_createtable(L, 0, 4);
  sl_bind_newlist(L, 0);
  lua_setfield(L, -2, "warnings");
  lua_setiuservalue(L, -2, 1);
}

sl_frame *sl_bind_checkframe(lua_State *L, int arg) {
  frame_box *b = luaL_checkudata(L, arg, SL_FRAME_MT);
  if (!b->f) luaL_argerror(L, arg, "an empty frame box");
  return b->f;
}

/* Raise a library error with the name of the function. */
static int raise_err(lua_State *L, const char *fn, const sl_error *e) {
  return luaL_error(L, "%s: %s", fn, e->msg);
}

/* A new frame from a library call, or its error raised. */
static int push_result(lua_State *L, sl_frame *f, const char *fn, const sl_error *e) {
  if (!f) return raise_err(L, fn, e);
  sl_bind_pushframe(L, f);
  return 1;
}

/* The column of frame argument 1 named by argument arg. */
static int check_column(lua_State *L, const sl_frame *f, int arg) {
  const char *name = luaL_checkstring(L, arg);
  sl_error e;
  int j = sl_frame_lookup(f, name, &e);
  if (j < 0) luaL_argerror(L, arg, e.msg);
  return j;
}

/* Push column j of the frame at index fidx as a column object. */
static void push_column(lua_State *L, int fidx, int j) {
  fidx = lua_absindex(L, fidx);
  column_box *c = lua_newuserdatauv(L, sizeof *c, 1);
  c->j = j;
  lua_pushvalue(L, fidx);
  lua_setiuservalue(L, -2, 1);
  luaL_setmetatable(L, SL_COLUMN_MT);
}

/* Push cell (i, j): a number, a level text, or nil (missing: nilval 1)
** or false (nilval 0). */
static void push_cell(lua_State *L, const sl_frame *f, size_t i, int j, int nil_missing) {
  const sl_column *c = &f->col[j];
  if (c->type == SL_NUMERIC) {
    if (isnan(c->x[i])) goto missing;
    lua_pushnumber(L, c->x[i]);
    return;
  }
  if (c->code[i] < 0) goto missing;
  lua_pushstring(L, c->levels[c->code[i]]);
  return;
missing:
  if (nil_missing) lua_pushnil(L);
  else lua_pushboolean(L, 0);
}

/* Push row i as a table {column = value}, missing cells absent. */
static void push_row(lua_State *L, const sl_frame *f, size_t i) {
  lua_createtable(L, 0, (int)f->ncol);
  for (size_t j = 0; j < f->ncol; j++) {
    push_cell(L, f, i, (int)j, 1);
    lua_setfield(L, -2, f->col[j].name);
  }
}

/* Call hooks[name](value at idx) for a text; 0 when there is no hook. */
static int hook_text(lua_State *L, const char *name, int idx) {
  idx = lua_absindex(L, idx);
  lua_getfield(L, LUA_REGISTRYINDEX, SL_HOOKS);
  if (lua_getfield(L, -1, name) != LUA_TFUNCTION) { lua_pop(L, 2); return 0; }
  lua_pushvalue(L, idx);
  lua_call(L, 1, 1);
  lua_remove(L, -2);
  if (!lua_isstring(L, -1)) { lua_pop(L, 1); return 0; }
  return 1;
}

/* ---- reading ---- */

/* The delimiter option: one of , ; | tab (or "tab") space. */
static char check_delim(lua_State *L, int idx) {
  size_t n;
  const char *s = lua_tolstring(L, idx, &n);
  if (!s) luaL_error(L, "read_csv: option delim must be a string such as \",\" or \"tab\"");
  if (strcmp(s, "tab") == 0 || strcmp(s, "\t") == 0) return '\t';
  if (n == 1 && strchr(",;| ", s[0])) return s[0];
  return (char)luaL_error(L, "read_csv: option delim must be one of \",\" \";\" \"|\" \"tab\" "
                          "or \" \", got \"%s\"", s);
}

/* The na option: a string or a list of strings, kept in a userdata that
** is left on the stack. */
static const char **check_na(lua_State *L, int idx, size_t *n) {
  idx = lua_absindex(L, idx);
  if (lua_type(L, idx) == LUA_TSTRING) {
    const char **v = lua_newuserdatauv(L, sizeof *v, 0);
    v[0] = lua_tostring(L, idx);
    *n = 1;
    return v;
  }
  if (!lua_istable(L, idx)) luaL_error(L, "read_csv: option na must be a string or a list of strings");
  lua_Integer len = luaL_len(L, idx);
  const char **v = lua_newuserdatauv(L, (size_t)(len > 0 ? len : 1) * sizeof *v, 0);
  for (lua_Integer k = 1; k <= len; k++) {
    if (lua_geti(L, idx, k) != LUA_TSTRING)
      luaL_error(L, "read_csv: option na: item %I is a %s, not a string", k,
                 luaL_typename(L, -1));
    v[k - 1] = lua_tostring(L, -1);   /* kept alive by the option table */
    lua_pop(L, 1);
  }
  *n = (size_t)len;
  return v;
}

/* Read the options table of read_csv into o. */
static void csv_options(lua_State *L, int arg, sl_csv_opts *o) {
  static const char *const known[] = {"delim", "na", "coerce"};
  memset(o, 0, sizeof *o);
  if (lua_isnoneornil(L, arg)) return;
  luaL_checktype(L, arg, LUA_TTABLE);
  sl_bind_check_options(L, arg, "read_csv", known, 3);
  if (lua_getfield(L, arg, "delim") != LUA_TNIL) o->delim = check_delim(L, -1);
  lua_pop(L, 1);
  if (lua_getfield(L, arg, "na") != LUA_TNIL) {
    o->na = check_na(L, -1, &o->nna);
    lua_replace(L, -2);   /* keep the userdata, drop the option value */
  } else lua_pop(L, 1);
  /* a typo such as coerce = "yes" must not pass for true */
  int t = lua_getfield(L, arg, "coerce");
  if (t != LUA_TNIL && t != LUA_TBOOLEAN)
    luaL_error(L, "read_csv: option coerce must be true or false, got %s", sl_bind_value_text(L, -1));
  o->coerce = lua_toboolean(L, -1);
  lua_pop(L, 1);
}

/* Store the fingerprint of the read in the info table of the frame on top,
** and tell hooks.data_read(path, sha256, bytes) (the session log). */
static void set_fingerprint(lua_State *L, const char *path, const sl_read_report *rep) {
  char hex[65];
  sl_fingerprint_hex(rep->sha256, hex);
  lua_getiuservalue(L, -1, 1);
  lua_pushstring(L, hex);
  lua_setfield(L, -2, "sha256");
  lua_pushinteger(L, (lua_Integer)rep->bytes);
  lua_setfield(L, -2, "bytes");
  lua_pushstring(L, path);
  lua_setfield(L, -2, "path");
  lua_pop(L, 1);
  lua_getfield(L, LUA_REGISTRYINDEX, SL_HOOKS);
  if (lua_getfield(L, -1, "data_read") == LUA_TFUNCTION) {
    lua_pushstring(L, path);
    lua_pushstring(L, hex);
    lua_pushinteger(L, (lua_Integer)rep->bytes);
    lua_call(L, 3, 0);
  } else lua_pop(L, 1);
  lua_pop(L, 1);
}

/* Record a warning on the frame on top and hand it to hooks.warn. */
static void warn(lua_State *L, const char *msg) {
  lua_getiuservalue(L, -1, 1);
  lua_getfield(L, -1, "warnings");
  lua_pushstring(L, msg);
  lua_rawseti(L, -2, (lua_Integer)luaL_len(L, -2) + 1);
  lua_pop(L, 2);
  lua_getfield(L, LUA_REGISTRYINDEX, SL_HOOKS);
  if (lua_getfield(L, -1, "warn") == LUA_TFUNCTION) {
    lua_pushstring(L, msg);
    lua_call(L, 1, 0);
  } else lua_pop(L, 1);
  lua_pop(L, 1);
}

/* read_csv(path, opts) */
static int l_read_csv(lua_State *L) {
  const char *path = luaL_checkstring(L, 1);
  sl_csv_opts o;
  csv_options(L, 2, &o);
  o.stop = &sl_bind_stop;   /* Ctrl-C ends the read */
  sl_bind_stop = 0;
  frame_box *b = new_box(L);
  sl_read_report rep;
  sl_error e;
  b->f = sl_csv_read(path, &o, &rep, &e);
  if (!b->f) return raise_err(L, "read_csv", &e);
  set_fingerprint(L, path, &rep);
  if (rep.coerced > 0) {
    const sl_column *c = &b->f->col[rep.first_col - 1];
    lua_pushfstring(L, "%s: %I cell%s that %s not a number read as missing (the first: "
                    "row %d, column %d ('%s'): '%s')", path, (lua_Integer)rep.coerced,
                    rep.coerced == 1 ? "" : "s", rep.coerced == 1 ? "is" : "are",
                    (int)rep.first_row, (int)rep.first_col, c->name, rep.first_cell);
    lua_insert(L, -2);
    warn(L, lua_tostring(L, -2));
    lua_remove(L, -2);
  }
  return 1;
}

/* Read the options table of read_sql into o: limit, a whole number of
** rows from 1 on, or math.huge for none. */
static void sql_options(lua_State *L, int arg, sl_sql_opts *o) {
  static const char *const known[] = {"limit"};
  memset(o, 0, sizeof *o);
  if (lua_isnoneornil(L, arg)) return;
  luaL_checktype(L, arg, LUA_TTABLE);
  sl_bind_check_options(L, arg, "read_sql", known, 1);
  int t = lua_getfield(L, arg, "limit");
  if (t == LUA_TNIL) { lua_pop(L, 1); return; }
  if (t != LUA_TNUMBER)
    luaL_error(L, "read_sql: option limit must be a number of rows, got a %s",
               luaL_typename(L, -1));
  lua_Number x = lua_tonumber(L, -1);
  if (x == HUGE_VAL) o->limit = SIZE_MAX;
  else if (!(x >= 1) || x != floor(x))
    luaL_error(L, "read_sql: option limit must be a whole number of rows, 1 or more "
               "(math.huge for no limit), got %s", x != x ? "NaN" : lua_tostring(L, -1));
  else o->limit = x >= 0x1p53 ? SIZE_MAX : (size_t)x;
  lua_pop(L, 1);
}

/* read_sql(dbfile, query, {limit=}) */
static int l_read_sql(lua_State *L) {
  const char *path = luaL_checkstring(L, 1);
  const char *query = luaL_checkstring(L, 2);
  sl_sql_opts o;
  sql_options(L, 3, &o);
  o.stop = &sl_bind_stop;   /* Ctrl-C ends the query */
  sl_bind_stop = 0;
  frame_box *b = new_box(L);
  sl_read_report rep;
  sl_error e;
  b->f = sl_sql_read(path, query, &o, &rep, &e);
  if (!b->f) return raise_err(L, "read_sql", &e);
  set_fingerprint(L, path, &rep);
  return 1;
}

/* ---- frame methods ---- */

static int f_names(lua_State *L) {
  sl_frame *f = sl_bind_checkframe(L, 1);
  sl_bind_newlist(L, (int)f->ncol);
  for (size_t j = 0; j < f->ncol; j++) {
    lua_pushstring(L, f->col[j].name);
    lua_rawseti(L, -2, (lua_Integer)j + 1);
  }
  return 1;
}

static int f_column(lua_State *L) {
  sl_frame *f = sl_bind_checkframe(L, 1);
  push_column(L, 1, check_column(L, f, 2));
  return 1;
}

/* Set field k of the table on top to x, leaving NaN out. */
static void set_number(lua_State *L, const char *k, double x) {
  if (isnan(x)) return;
  lua_pushnumber(L, x);
  lua_setfield(L, -2, k);
}

static int f_summary(lua_State *L) {
  sl_frame *f = sl_bind_checkframe(L, 1);
  lua_createtable(L, (int)f->ncol, 0);
  luaL_setmetatable(L, SL_SUMMARY_MT);
  for (size_t j = 0; j < f->ncol; j++) {
    const sl_column *c = &f->col[j];
    sl_summary s;
    sl_error e;
    if (sl_column_summary(c, f->nrow, &s, &e) != SL_OK) return raise_err(L, "summary", &e);
    lua_createtable(L, 0, 12);
    lua_pushstring(L, c->name);
    lua_setfield(L, -2, "column");
    lua_pushstring(L, c->type == SL_NUMERIC ? "number" : "category");
    lua_setfield(L, -2, "type");
    lua_pushinteger(L, (lua_Integer)s.n);
    lua_setfield(L, -2, "n");
    lua_pushinteger(L, (lua_Integer)s.missing);
    lua_setfield(L, -2, "missing");
    if (c->type == SL_CATEGORICAL) {
      lua_pushinteger(L, (lua_Integer)c->nlevels);
      lua_setfield(L, -2, "levels");
    }
    set_number(L, "mean", s.mean);
    set_number(L, "sd", s.sd);
    set_number(L, "min", s.min);
    set_number(L, "q1", s.q1);
    set_number(L, "median", s.median);
    set_number(L, "q3", s.q3);
    set_number(L, "max", s.max);
    lua_rawseti(L, -2, (lua_Integer)j + 1);
  }
  return 1;
}

/* The number at arg as the user would write it (NaN as "NaN", not the
** "-nan" of printf). */
static const char *num_text(lua_State *L, int arg) {
  lua_Number x = lua_tonumber(L, arg);
  if (x != x) return lua_pushliteral(L, "NaN");
  return luaL_tolstring(L, arg, NULL);
}

/* Argument arg as a whole number (a float too, however large), or an
** argument error saying what it counts and what was given: luaL_checkinteger
** said "number has no integer representation" and wrapped 1e18 around. */
static lua_Number check_whole(lua_State *L, int arg, const char *what) {
  int ok;
  lua_Number x = lua_tonumberx(L, arg, &ok);
  if (!ok) luaL_typeerror(L, arg, "number");
  if (x != floor(x))   /* NaN too */
    luaL_argerror(L, arg, lua_pushfstring(L, "%s must be a whole number, got %s", what,
                                          num_text(L, arg)));
  return x;
}

static int f_head(lua_State *L) {
  sl_frame *f = sl_bind_checkframe(L, 1);
  lua_Number n = lua_isnoneornil(L, 2) ? 6 : check_whole(L, 2, "the number of rows");
  if (n < 0)
    luaL_argerror(L, 2, lua_pushfstring(L, "the number of rows must be 0 or more, got %s",
                                        num_text(L, 2)));
  size_t k = n >= (lua_Number)f->nrow ? f->nrow : (size_t)n;   /* math.huge: every row */
  sl_error e;
  return push_result(L, sl_frame_head(f, k, &e), "head", &e);
}

/* f:binarize(col, level or {levels}, name) for a categorical column. */
static int binarize_levels(lua_State *L, sl_frame *f, int j) {
  lua_settop(L, 4);   /* what is pushed below stays above the arguments */
  int list = lua_istable(L, 3);
  if (!list && lua_type(L, 3) != LUA_TSTRING)
    luaL_argerror(L, 3, lua_pushfstring(L, "column '%s' is categorical: give the level, or a list "
                                        "of levels, to count as 1 (got %s)", f->col[j].name,
                                        luaL_typename(L, 3)));
  lua_Integer n = list ? luaL_len(L, 3) : 1;
  luaL_argcheck(L, n >= 1 && n <= 100000, 3, "a list of one or more levels");
  const char **lv = lua_newuserdatauv(L, (size_t)n * sizeof *lv, 0);
  for (lua_Integer k = 0; k < n; k++) {
    if (list) lua_geti(L, 3, k + 1); else lua_pushvalue(L, 3);
    if (lua_type(L, -1) != LUA_TSTRING)
      luaL_argerror(L, 3, lua_pushfstring(L, "item %I is a %s, not a level", k + 1, luaL_typename(L, -1)));
    lv[k] = lua_tostring(L, -1);   /* kept alive by the table or argument 3 */
    lua_pop(L, 1);
  }
  const char *name = lua_isnil(L, 4) ? NULL : luaL_checkstring(L, 4);
  if (!name) name = n == 1 ? lua_pushfstring(L, "%s_%s", f->col[j].name, lv[0])
                           : lua_pushfstring(L, "%s_in", f->col[j].name);
  sl_error e;
  return push_result(L, sl_frame_binarize_levels(f, j, lv, (size_t)n, name, &e), "binarize", &e);
}

static int f_binarize(lua_State *L) {
  sl_frame *f = sl_bind_checkframe(L, 1);
  int j = check_column(L, f, 2);
  if (f->col[j].type != SL_NUMERIC) return binarize_levels(L, f, j);
  double cut = luaL_checknumber(L, 3);
  luaL_argcheck(L, !isnan(cut), 3, "the cut is not a number");
  const char *name = luaL_optstring(L, 4, NULL);
  if (!name) name = lua_pushfstring(L, "%s_high", f->col[j].name);
  sl_error e;
  return push_result(L, sl_frame_binarize(f, j, cut, name, &e), "binarize", &e);
}

/* f:select{...} or f:select(a, b, ...) */
static int f_select(lua_State *L) {
  sl_frame *f = sl_bind_checkframe(L, 1);
  int table = lua_istable(L, 2);
  lua_Integer n = table ? luaL_len(L, 2) : lua_gettop(L) - 1;
  luaL_argcheck(L, n >= 1, 2, "a list of column names");
  luaL_argcheck(L, n <= (lua_Integer)f->ncol, 2, "more names than the frame has columns");
  int *cols = lua_newuserdatauv(L, (size_t)n * sizeof *cols, 0);
  for (lua_Integer k = 0; k < n; k++) {
    if (table) lua_geti(L, 2, k + 1);
    else lua_pushvalue(L, (int)k + 2);
    if (lua_type(L, -1) != LUA_TSTRING)
      luaL_argerror(L, 2, lua_pushfstring(L, "item %I is a %s, not a column name", k + 1,
                                          luaL_typename(L, -1)));
    sl_error e;
    cols[k] = sl_frame_lookup(f, lua_tostring(L, -1), &e);
    if (cols[k] < 0) luaL_argerror(L, 2, e.msg);
    for (lua_Integer m = 0; m < k; m++)
      if (cols[m] == cols[k])
        luaL_argerror(L, 2, lua_pushfstring(L, "column '%s' is listed twice",
                                            lua_tostring(L, -1)));
    lua_pop(L, 1);
  }
  sl_error e;
  return push_result(L, sl_frame_select(f, cols, (size_t)n, &e), "select", &e);
}

/* f:filter(fn): the rows where fn(row, i) is truthy. */
static int f_filter(lua_State *L) {
  sl_frame *f = sl_bind_checkframe(L, 1);
  luaL_checktype(L, 2, LUA_TFUNCTION);
  unsigned char *keep = lua_newuserdatauv(L, f->nrow ? f->nrow : 1, 0);
  for (size_t i = 0; i < f->nrow; i++) {
    lua_pushvalue(L, 2);
    push_row(L, f, i);
    lua_pushinteger(L, (lua_Integer)i + 1);
    lua_call(L, 2, 1);
    keep[i] = (unsigned char)lua_toboolean(L, -1);
    lua_pop(L, 1);
  }
  sl_error e;
  return push_result(L, sl_frame_filter(f, keep, &e), "filter", &e);
}

static int f_row(lua_State *L) {
  sl_frame *f = sl_bind_checkframe(L, 1);
  lua_Number i = check_whole(L, 2, "the row");
  if (!(i >= 1 && i <= (lua_Number)f->nrow))
    luaL_argerror(L, 2, lua_pushfstring(L, "row %s is outside 1..%I, the rows of the frame",
                                        num_text(L, 2), (lua_Integer)f->nrow));
  push_row(L, f, (size_t)i - 1);
  return 1;
}

/* qsort order of C strings. */
static int cmp_str(const void *a, const void *b) {
  return strcmp(*(const char *const *)a, *(const char *const *)b);
}

/* The values for f:with_column, one per row at the top of the stack in a
** table (argument 3 as a list, or fn(row, i) for every row). */
static void column_values(lua_State *L, const sl_frame *f) {
  if (lua_isfunction(L, 3)) {
    lua_createtable(L, (int)f->nrow, 0);
    for (size_t i = 0; i < f->nrow; i++) {
      lua_pushvalue(L, 3);
      push_row(L, f, i);
      lua_pushinteger(L, (lua_Integer)i + 1);
      lua_call(L, 2, 1);
      lua_rawseti(L, -2, (lua_Integer)i + 1);
    }
    return;
  }
  luaL_argexpected(L, lua_istable(L, 3), 3, "list or function");
  lua_Integer n = luaL_len(L, 3);
  if ((size_t)n != f->nrow)
    luaL_argerror(L, 3, lua_pushfstring(L, "%I values for a frame of %I rows", n,
                                        (lua_Integer)f->nrow));
  lua_pushvalue(L, 3);
}

/* Build the new column from the value table on top into frame g. */
static int add_values(lua_State *L, sl_frame *g, const char *name, sl_error *e) {
  int vt = lua_gettop(L);
  size_t n = g->nrow, ntext = 0, nnum = 0;
  for (size_t i = 0; i < n; i++) {
    int t = lua_geti(L, vt, (lua_Integer)i + 1);
    if (t == LUA_TNUMBER) nnum++;
    else if (t == LUA_TSTRING) ntext++;
    else if (t != LUA_TNIL && !(t == LUA_TBOOLEAN && !lua_toboolean(L, -1)))
      luaL_argerror(L, 3, lua_pushfstring(L, "value %d is a %s; give numbers or texts "
                                          "(nil or false for missing)", (int)i + 1,
                                          luaL_typename(L, -1)));
    lua_pop(L, 1);
  }
  if (nnum && ntext) luaL_argerror(L, 3, "the values mix numbers and texts");
  if (!ntext) {
    double *x = lua_newuserdatauv(L, (n ? n : 1) * sizeof *x, 0);
    for (size_t i = 0; i < n; i++) {
      lua_geti(L, vt, (lua_Integer)i + 1);
      x[i] = lua_type(L, -1) == LUA_TNUMBER ? lua_tonumber(L, -1) : NAN;
      lua_pop(L, 1);
    }
    return sl_frame_add_numeric(g, name, x, e);
  }
  /* texts: the distinct ones sorted, then codes by binary search */
  const char **txt = lua_newuserdatauv(L, (n ? n : 1) * sizeof *txt, 0);
  int32_t *code = lua_newuserdatauv(L, (n ? n : 1) * sizeof *code, 0);
  size_t k = 0;
  for (size_t i = 0; i < n; i++) {
    lua_geti(L, vt, (lua_Integer)i + 1);
    if (lua_type(L, -1) == LUA_TSTRING) txt[k++] = lua_tostring(L, -1);  /* held by vt */
    lua_pop(L, 1);
  }
  qsort(txt, k, sizeof *txt, cmp_str);
  size_t nl = 0;
  for (size_t i = 0; i < k; i++)
    if (nl == 0 || strcmp(txt[nl - 1], txt[i]) != 0) txt[nl++] = txt[i];
  for (size_t i = 0; i < n; i++) {
    lua_geti(L, vt, (lua_Integer)i + 1);
    code[i] = -1;
    if (lua_type(L, -1) == LUA_TSTRING) {
      const char *s = lua_tostring(L, -1);
      const char **hit = bsearch(&s, txt, nl, sizeof *txt, cmp_str);
      code[i] = (int32_t)(hit - txt);
    }
    lua_pop(L, 1);
  }
  return sl_frame_add_categorical(g, name, code, txt, nl, e);
}

/* f:with_column(name, values): a new frame with the column added, or put
** in place of the column of that name. */
static int f_with_column(lua_State *L) {
  sl_frame *f = sl_bind_checkframe(L, 1);
  const char *name = luaL_checkstring(L, 2);
  lua_settop(L, 3);
  column_values(L, f);                                  /* 4: the values */
  int old = sl_frame_find(f, name);
  int *cols = lua_newuserdatauv(L, (f->ncol ? f->ncol : 1) * sizeof *cols, 0);
  size_t k = 0;
  for (size_t j = 0; j < f->ncol; j++)
    if ((int)j != old) cols[k++] = (int)j;
  frame_box *b = new_box(L);                            /* 6: the result */
  sl_error e;
  if (!(b->f = sl_frame_select(f, cols, k, &e))) return raise_err(L, "with_column", &e);
  lua_pushvalue(L, 4);
  if (add_values(L, b->f, name, &e) != SL_OK) return raise_err(L, "with_column", &e);
  if (old >= 0) {                  /* the new column goes where the old one was */
    sl_frame *g = b->f;
    sl_column c = g->col[g->ncol - 1];
    memmove(&g->col[old + 1], &g->col[old], (g->ncol - 1 - (size_t)old) * sizeof c);
    g->col[old] = c;
  }
  lua_pushvalue(L, 6);
  return 1;
}

static int f_write_csv(lua_State *L) {
  sl_frame *f = sl_bind_checkframe(L, 1);
  const char *path = luaL_checkstring(L, 2);
  sl_error e;
  if (sl_csv_write(f, path, &e) != SL_OK) return raise_err(L, "write_csv", &e);
  lua_pushvalue(L, 2);
  return 1;
}

static int f_fingerprint(lua_State *L) {
  sl_bind_checkframe(L, 1);
  lua_getiuservalue(L, 1, 1);
  if (lua_getfield(L, -1, "sha256") == LUA_TNIL) return 1;
  lua_getfield(L, -2, "bytes");
  return 2;
}

static int f_warnings(lua_State *L) {
  sl_bind_checkframe(L, 1);
  lua_getiuservalue(L, 1, 1);
  lua_getfield(L, -1, "warnings");
  lua_Integer n = luaL_len(L, -1);
  sl_bind_newlist(L, (int)n);
  for (lua_Integer k = 1; k <= n; k++) {
    lua_geti(L, -2, k);
    lua_rawseti(L, -2, k);
  }
  return 1;
}

static const luaL_Reg frame_methods[] = {
  {"names", f_names}, {"column", f_column}, {"summary", f_summary}, {"head", f_head},
  {"binarize", f_binarize}, {"select", f_select}, {"filter", f_filter}, {"row", f_row},
  {"with_column", f_with_column}, {"write_csv", f_write_csv},
  {"fingerprint", f_fingerprint}, {"warnings", f_warnings},
  {NULL, NULL}
};

/* f.method or f[column]; upvalue 1: the methods. */
static int f_index(lua_State *L) {
  sl_frame *f = sl_bind_checkframe(L, 1);
  if (lua_type(L, 2) != LUA_TSTRING)
    return luaL_error(L, "frames are indexed by column name, not by %s (f:row(i) gives "
                      "row i)", luaL_typename(L, 2));
  if (lua_getfield(L, lua_upvalueindex(1), lua_tostring(L, 2)) != LUA_TNIL) return 1;
  sl_error e;
  int j = sl_frame_lookup(f, lua_tostring(L, 2), &e);
  if (j < 0) return luaL_error(L, "%s", e.msg);
  push_column(L, 1, j);
  return 1;
}

static int f_newindex(lua_State *L) {
  return luaL_error(L, READONLY);
}

static int f_len(lua_State *L) {
  lua_pushinteger(L, (lua_Integer)sl_bind_checkframe(L, 1)->nrow);
  return 1;
}

static int f_gc(lua_State *L) {
  frame_box *b = luaL_checkudata(L, 1, SL_FRAME_MT);
  sl_frame_free(b->f);
  b->f = NULL;
  return 0;
}

static int f_tostring(lua_State *L) {
  sl_frame *f = sl_bind_checkframe(L, 1);
  if (hook_text(L, "frame_text", 1)) return 1;
  lua_pushfstring(L, "frame: %I rows, %I columns", (lua_Integer)f->nrow, (lua_Integer)f->ncol);
  return 1;
}

/* ---- columns ---- */

/* The column box at arg, its frame and column index. */
static const sl_column *check_col(lua_State *L, int arg, sl_frame **fp) {
  column_box *c = luaL_checkudata(L, arg, SL_COLUMN_MT);
  lua_getiuservalue(L, arg, 1);
  sl_frame *f = sl_bind_checkframe(L, -1);
  lua_pop(L, 1);   /* the column's user value keeps the frame alive */
  if (fp) *fp = f;
  return &f->col[c->j];
}

/* A numeric column, or an error naming the statistic. */
static const sl_column *check_numeric(lua_State *L, const char *what, size_t *nrow) {
  sl_frame *f;
  const sl_column *c = check_col(L, 1, &f);
  if (c->type != SL_NUMERIC)
    luaL_error(L, "column '%s' is categorical: it has no %s", c->name, what);
  *nrow = f->nrow;
  return c;
}

/* Push a number, or nil when NaN. */
static void push_or_nil(lua_State *L, double x) {
  if (isnan(x)) lua_pushnil(L);
  else lua_pushnumber(L, x);
}

/* One statistic of a numeric column: the moments and extremes in one pass
** (sl_column_moments, as f:summary() has them), the median through
** sl_column_summary, which sorts. */
static int col_stat(lua_State *L, const char *what) {
  size_t n;
  const sl_column *c = check_numeric(L, what, &n);
  sl_summary s;
  if (strcmp(what, "median") != 0) sl_column_moments(c, n, &s);
  else {
    sl_error e;
    if (sl_column_summary(c, n, &s, &e) != SL_OK) return raise_err(L, what, &e);
  }
  double v = strcmp(what, "mean") == 0 ? s.mean : strcmp(what, "sd") == 0 ? s.sd
           : strcmp(what, "min") == 0 ? s.min : strcmp(what, "max") == 0 ? s.max : s.median;
  push_or_nil(L, v);
  return 1;
}

static int c_mean(lua_State *L) { return col_stat(L, "mean"); }
static int c_sd(lua_State *L) { return col_stat(L, "sd"); }
static int c_min(lua_State *L) { return col_stat(L, "min"); }
static int c_max(lua_State *L) { return col_stat(L, "max"); }
static int c_median(lua_State *L) { return col_stat(L, "median"); }

static int c_sum(lua_State *L) {
  size_t n;
  const sl_column *c = check_numeric(L, "sum", &n);
  double s = 0;
  for (size_t i = 0; i < n; i++)
    if (!isnan(c->x[i])) s += c->x[i];
  push_or_nil(L, s);   /* nil for inf + -inf, as the mean */
  return 1;
}

static int c_missing(lua_State *L) {
  sl_frame *f;
  const sl_column *c = check_col(L, 1, &f);
  size_t m = 0;
  for (size_t i = 0; i < f->nrow; i++)
    m += c->type == SL_NUMERIC ? isnan(c->x[i]) : c->code[i] < 0;
  lua_pushinteger(L, (lua_Integer)m);
  return 1;
}

/* c:values(): every cell, missing as false so that the list has no holes. */
static int c_values(lua_State *L) {
  sl_frame *f;
  const sl_column *c = check_col(L, 1, &f);
  int j = (int)(c - f->col);
  sl_bind_newlist(L, (int)f->nrow);
  for (size_t i = 0; i < f->nrow; i++) {
    push_cell(L, f, i, j, 0);
    lua_rawseti(L, -2, (lua_Integer)i + 1);
  }
  return 1;
}

static int c_levels(lua_State *L) {
  const sl_column *c = check_col(L, 1, NULL);
  if (c->type != SL_CATEGORICAL)
    return luaL_error(L, "column '%s' holds numbers: it has no levels", c->name);
  sl_bind_newlist(L, (int)c->nlevels);
  for (size_t k = 0; k < c->nlevels; k++) {
    lua_pushstring(L, c->levels[k]);
    lua_rawseti(L, -2, (lua_Integer)k + 1);
  }
  return 1;
}

static const luaL_Reg column_methods[] = {
  {"mean", c_mean}, {"sd", c_sd}, {"min", c_min}, {"max", c_max}, {"median", c_median},
  {"sum", c_sum}, {"missing", c_missing}, {"values", c_values}, {"levels", c_levels},
  {NULL, NULL}
};

/* c[i], c.name, c.type, c:method; upvalue 1: the methods. */
static int c_index(lua_State *L) {
  sl_frame *f;
  const sl_column *c = check_col(L, 1, &f);
  if (lua_type(L, 2) == LUA_TNUMBER) {
    lua_Integer i = lua_tointeger(L, 2);
    if (!lua_isinteger(L, 2) && (double)i != lua_tonumber(L, 2)) return 0;
    if (i < 1 || (size_t)i > f->nrow) return 0;
    push_cell(L, f, (size_t)i - 1, (int)(c - f->col), 1);
    return 1;
  }
  const char *k = lua_tostring(L, 2);
  if (!k) return 0;
  if (strcmp(k, "name") == 0) { lua_pushstring(L, c->name); return 1; }
  if (strcmp(k, "type") == 0) {
    lua_pushstring(L, c->type == SL_NUMERIC ? "number" : "category");
    return 1;
  }
  lua_getfield(L, lua_upvalueindex(1), k);
  return 1;
}

static int c_newindex(lua_State *L) {
  return luaL_error(L, READONLY);
}

static int c_len(lua_State *L) {
  sl_frame *f;
  check_col(L, 1, &f);
  lua_pushinteger(L, (lua_Integer)f->nrow);
  return 1;
}

static int c_tostring(lua_State *L) {
  sl_frame *f;
  const sl_column *c = check_col(L, 1, &f);
  if (hook_text(L, "column_text", 1)) return 1;
  lua_pushfstring(L, "column %s (%s, %I rows)", c->name,
                  c->type == SL_NUMERIC ? "number" : "category", (lua_Integer)f->nrow);
  return 1;
}

/* ---- summaries ---- */

static int s_tostring(lua_State *L) {
  if (hook_text(L, "summary_text", 1)) return 1;
  lua_pushfstring(L, "summary of %I columns", luaL_len(L, 1));
  return 1;
}

/* ---- registration ---- */

/* A metatable whose __index is a C function with the methods as upvalue. */
static void new_meta(lua_State *L, const char *name, const luaL_Reg *meta,
                     const luaL_Reg *methods, lua_CFunction index) {
  luaL_newmetatable(L, name);
  luaL_setfuncs(L, meta, 0);
  lua_newtable(L);                   /* listed for help and completion, */
  luaL_setfuncs(L, methods, 0);      /* and made public (bind_public.c) */
  lua_pushvalue(L, -1);
  lua_setfield(L, -3, "methods");
  lua_pushcclosure(L, index, 1);
  lua_setfield(L, -2, "__index");
  lua_pop(L, 1);
}

static const luaL_Reg frame_meta[] = {
  {"__gc", f_gc}, {"__tostring", f_tostring}, {"__len", f_len}, {"__newindex", f_newindex},
  {NULL, NULL}
};

static const luaL_Reg column_meta[] = {
  {"__tostring", c_tostring}, {"__len", c_len}, {"__newindex", c_newindex},
  {NULL, NULL}
};

static const luaL_Reg frame_funcs[] = {
  {"read_csv", l_read_csv}, {"read_sql", l_read_sql},
  {NULL, NULL}
};

int sl_open_frame(lua_State *L) {
  new_meta(L, SL_FRAME_MT, frame_meta, frame_methods, f_index);
  new_meta(L, SL_COLUMN_MT, column_meta, column_methods, c_index);
  luaL_newmetatable(L, SL_SUMMARY_MT);
  lua_pushcfunction(L, s_tostring);
  lua_setfield(L, -2, "__tostring");
  lua_pushliteral(L, SL_SUMMARY_MT);
  lua_setfield(L, -2, "__name");
  lua_pop(L, 1);
  luaL_setfuncs(L, frame_funcs, 0);   /* into the module table on top */
  return 0;
}
