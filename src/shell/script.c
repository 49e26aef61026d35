/*
** script.c: a script runs as the prompt runs its inputs.  The session
** layer (sluice.session's plan) divides the text into top-level
** statements, or reads a session log's entries; each runs as an entry of
** the session: recorded for report(), written to the log when one is
** open, its top-level locals kept for the next.  Messages name the
** script's file and line, though each entry runs as "[input N]", the name
** a replay gives it, so that the log replays the same.
*/
#include <errno.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <lua.h>
#include <lauxlib.h>

#include "log.h"
#include "run.h"
#include "script.h"

#define PROGNAME "sluice"
#define HOOKS "sluice.hooks"

/* Push hooks[name]; 0 (nil pushed) when it is not a function. */
static int push_hook(lua_State *L, const char *name) {
  if (lua_getfield(L, LUA_REGISTRYINDEX, HOOKS) != LUA_TTABLE) {
    lua_pop(L, 1);
    lua_pushnil(L);
    return 0;
  }
  int t = lua_getfield(L, -1, name);
  lua_remove(L, -2);
  return t == LUA_TFUNCTION;
}

/* The message on top with every "[input K]:J:" of this run turned into
** the file and line it came from (hooks.session_where); replaced in place. */
static void where(lua_State *L) {
  if (!push_hook(L, "session_where")) {
    lua_pop(L, 1);
    return;
  }
  lua_pushvalue(L, -2);
  if (lua_pcall(L, 1, 1, 0) == LUA_OK && lua_isstring(L, -1))
    lua_replace(L, -2);
  else
    lua_pop(L, 1);
}

/* Report the failed entry's message on top, with its place when it has
** none, the way a script's error reads: "sluice: file:line: message". */
static void report_failure(lua_State *L) {
  const char *msg = lua_tostring(L, -1);
  if (msg == NULL || !run_has_position(msg)) {
    run_entry_position(L);
    lua_insert(L, -2);
    lua_concat(L, 2);
  }
  where(L);
  run_report(L, LUA_ERRRUN);
}

/* The message on top as the prompt shows it: the place of a one-line
** entry left out, as the prompt does with "[input N]:1: ". */
static const char *shown_error(lua_State *L, int k, int one_line) {
  const char *msg = lua_tostring(L, -1);
  char id[40];
  int n = snprintf(id, sizeof id, "[input %d]:1: ", k);
  if (msg == NULL)
    return "(error object is not a string)";
  if (one_line && n > 0 && strncmp(msg, id, (size_t)n) == 0)
    return msg + n;
  return msg;
}

/* A string field of the table on top, or NULL. */
static const char *field(lua_State *L, const char *name) {
  lua_getfield(L, -1, name);
  const char *s = lua_tostring(L, -1);
  lua_pop(L, 1);   /* the table keeps the string alive */
  return s;
}

static int flag(lua_State *L, const char *name) {
  lua_getfield(L, -1, name);
  int b = lua_toboolean(L, -1);
  lua_pop(L, 1);
  return b;
}

/* hooks.session_prepare(k, entry, shown): entry k compiled, its place
** noted; status as lua_load, the function or the message on top. */
static int prepare(lua_State *L, int k, int entry, const char *shown) {
  if (!push_hook(L, "session_prepare")) {
    lua_pop(L, 1);
    lua_pushliteral(L, "the session layer did not load");
    return LUA_ERRRUN;
  }
  lua_pushinteger(L, k);
  lua_pushvalue(L, entry);
  lua_pushstring(L, shown);
  if (lua_pcall(L, 3, 2, 0) != LUA_OK)
    return LUA_ERRRUN;
  if (lua_isfunction(L, -2)) {
    lua_pop(L, 1);
    return LUA_OK;
  }
  lua_remove(L, -2);
  return LUA_ERRSYNTAX;
}

/* Whether the script's statement just run (its results from index first
** to the top) returned before its end: a return at the script's top level,
** inside a block, which ends the script as it would end a Lua chunk. */
static int returned(lua_State *L, int first) {
  int top = lua_gettop(L);
  if (!push_hook(L, "session_returned")) {
    lua_pop(L, 1);
    return 0;
  }
  for (int i = first; i <= top; i++)
    lua_pushvalue(L, i);
  int yes = lua_pcall(L, top - first + 1, 1, 0) == LUA_OK && lua_toboolean(L, -1);
  lua_settop(L, top);
  return yes;
}

/* Run the entry at index e (a table of the plan) as entry *count + 1 (a
** log's entry keeps its number when it is higher).  in_log: an error the
** entry recorded is expected.  *ended: the statement ended the script. */
static int run_entry(lua_State *L, int *count, int e, int in_log,
                     const char *shown, char **args, int nargs, int *ended) {
  lua_getfield(L, e, "n");
  int k = *count + 1, logged = (int)lua_tointeger(L, -1);
  lua_pop(L, 1);
  if (logged > k)
    k = logged;
  *count = k;
  lua_pushvalue(L, e);
  const char *typed = field(L, "typed"), *skip = field(L, "skip");
  int expr = flag(L, "expr"), expected = in_log && flag(L, "error");
  int one_line = typed != NULL && strchr(typed, '\n') == NULL;
  if (skip != NULL) {   /* a log's input that did not compile: kept as it was */
    log_skip(L, k, typed, field(L, "message"));
    lua_pop(L, 1);
    return LUA_OK;
  }
  int base = lua_gettop(L);
  int status = prepare(L, k, e, shown);
  if (status != LUA_OK) {
    log_skip(L, k, typed ? typed : "", shown_error(L, k, one_line));
    report_failure(L);
    lua_settop(L, base - 1);
    return status;
  }
  log_begin(L, k, typed ? typed : "", expr);
  luaL_checkstack(L, nargs, "too many arguments to the script");
  for (int i = 0; i < nargs; i++)
    lua_pushstring(L, args[i]);
  status = run_call(L, nargs, LUA_MULTRET, RUN_ENTRY);
  if (status == LUA_OK) {
    *ended = !in_log && returned(L, base + 1);
    log_end(L, NULL, expr ? 1 : 0);   /* a log's show(...) stays one */
  } else {
    const char *text = shown_error(L, k, one_line);
    log_end(L, text, -1);
    if (expected) {
      fflush(stdout);
      fprintf(stderr, "error: %s\n", text);
      fflush(stderr);
      status = LUA_OK;
    } else {
      report_failure(L);
    }
  }
  lua_settop(L, base - 1);
  return status;
}

/* hooks.session_plan(text, chunkname, shown): the plan on top, or the
** message of why the text cannot run. */
static int plan(lua_State *L, const char *text, size_t len,
                const char *chunkname, const char *shown) {
  if (!push_hook(L, "session_plan")) {
    lua_pop(L, 1);
    lua_pushliteral(L, "the session layer did not load");
    return LUA_ERRRUN;
  }
  lua_pushlstring(L, text, len);
  lua_pushstring(L, chunkname);
  lua_pushstring(L, shown);
  if (lua_pcall(L, 3, 2, 0) != LUA_OK)
    return LUA_ERRRUN;
  if (lua_istable(L, -2)) {
    lua_pop(L, 1);
    return LUA_OK;
  }
  lua_remove(L, -2);
  return LUA_ERRSYNTAX;
}

/* Is the session log on (hooks.session_logging)? */
static int logging(lua_State *L) {
  int on = 0;
  if (push_hook(L, "session_logging") && lua_pcall(L, 0, 1, 0) == LUA_OK)
    on = lua_toboolean(L, -1);
  lua_pop(L, 1);
  return on;
}

/* A precompiled chunk cannot be divided or logged: it runs whole, and not
** at all while a log is kept, which could not hold it. */
static int run_binary(lua_State *L, const char *text, size_t len,
                      const char *chunkname, char **args, int nargs) {
  if (logging(L)) {
    lua_pushfstring(L, "%s: a precompiled script cannot be kept in the session "
                    "log; run its source, or give --no-log", chunkname + 1);
    return run_report(L, LUA_ERRRUN);
  }
  int status = luaL_loadbufferx(L, text, len, chunkname, "b");
  if (status == LUA_OK) {
    luaL_checkstack(L, nargs, "too many arguments to the script");
    for (int i = 0; i < nargs; i++)
      lua_pushstring(L, args[i]);
    status = run_call(L, nargs, 0, RUN_SCRIPT);
  }
  return run_report(L, status);
}

int script_run(lua_State *L, int *count, const char *text, size_t len,
               const char *chunkname, const char *shown, char **args, int nargs) {
  if (len > 0 && text[0] == LUA_SIGNATURE[0])
    return run_binary(L, text, len, chunkname, args, nargs);
  int status = plan(L, text, len, chunkname, shown);
  if (status != LUA_OK)
    return run_report(L, status);
  int p = lua_gettop(L);
  int in_log = (lua_getfield(L, p, "log"), lua_toboolean(L, -1));
  lua_pop(L, 1);
  lua_getfield(L, p, "entries");
  lua_Integer n = luaL_len(L, -1);
  int ended = 0;
  for (lua_Integer i = 1; i <= n && status == LUA_OK && !ended; i++) {
    lua_geti(L, p + 1, i);
    status = run_entry(L, count, lua_gettop(L), in_log, shown, args, nargs, &ended);
    lua_pop(L, 1);
  }
  lua_settop(L, p - 1);
  return status;
}

/* Read all of f into a Lua string on top; 0 after a read error. */
static int slurp(lua_State *L, FILE *f) {
  luaL_Buffer b;
  luaL_buffinit(L, &b);
  size_t got;
  do {
    char *p = luaL_prepbuffer(&b);
    got = fread(p, 1, LUAL_BUFFERSIZE, f);
    luaL_addsize(&b, got);
  } while (got == LUAL_BUFFERSIZE);
  luaL_pushresult(&b);
  return !ferror(f);
}

int script_run_file(lua_State *L, int *count, const char *path, char **args,
                    int nargs) {
  FILE *f = path ? fopen(path, "rb") : stdin;
  if (f == NULL) {
    lua_pushfstring(L, "cannot open %s: %s", path, strerror(errno));
    return run_report(L, LUA_ERRFILE);
  }
  int ok = slurp(L, f);
  int err = errno;
  if (path)
    fclose(f);
  if (!ok) {
    lua_pop(L, 1);
    lua_pushfstring(L, "cannot read %s: %s", path ? path : "stdin", strerror(err));
    return run_report(L, LUA_ERRFILE);
  }
  size_t len;
  const char *text = lua_tolstring(L, -1, &len);
  if (path)
    lua_pushfstring(L, "@%s", path);
  else
    lua_pushliteral(L, "=stdin");
  const char *chunkname = lua_tostring(L, -1);
  int status = script_run(L, count, text, len, chunkname, path ? path : "stdin",
                          args, nargs);
  lua_pop(L, 2);
  return status;
}
