/*
** run.c: calling Lua code with a message handler and Ctrl-C armed, and
** reporting what went wrong the way a command-line program does.
*/
#include <ctype.h>
#include <stdio.h>
#include <string.h>

#include <lua.h>
#include <lauxlib.h>

#include "error.h"
#include "run.h"
#include "signals.h"

#define PROGNAME "sluice"

/* At most this many global functions are weighed as suggestions. */
#define RUN_SUGGEST_MAX 512

/* The names of the functions in the table on top (the global table: the
** module's public functions are copied there), at most max; returns how
** many.  The table stays, and keeps the names alive. */
static size_t global_functions(lua_State *L, const char **names, size_t max) {
  size_t n = 0;
  lua_pushnil(L);
  while (lua_next(L, -2) != 0) {
    if (n < max && lua_type(L, -2) == LUA_TSTRING && lua_isfunction(L, -1))
      names[n++] = lua_tostring(L, -2);   /* kept alive by the table */
    lua_pop(L, 1);
  }
  return n;
}

/* A misspelled function name ("attempt to call a nil value (global
** 'estimat')") gains the closest function of the table on top (popped):
** the message below it is replaced when there is one. */
static void suggest_in(lua_State *L) {
  static const char what[] = "attempt to call a nil value (global '";
  const char *msg = lua_tostring(L, -2);
  const char *at = msg ? strstr(msg, what) : NULL;
  const char *name = at ? at + sizeof what - 1 : NULL;
  const char *end = name ? strchr(name, '\'') : NULL;
  if (!end || end[1] != ')' || end - name >= 128 || !lua_istable(L, -1)) {
    lua_pop(L, 1);
    return;
  }
  char word[128];
  memcpy(word, name, (size_t)(end - name));
  word[end - name] = '\0';
  const char *names[RUN_SUGGEST_MAX];
  size_t n = global_functions(L, names, RUN_SUGGEST_MAX);
  const char *near = sl_closest(word, names, n);
  if (near) {
    lua_pushlstring(L, msg, (size_t)(end + 2 - msg));
    lua_pushfstring(L, "; did you mean '%s'?%s", near, end + 2);
    lua_concat(L, 2);
    lua_replace(L, -3);
  }
  lua_pop(L, 1);   /* the table; names[] are no longer needed */
}

/* The suggestion among the global functions. */
static void suggest_global(lua_State *L) {
  lua_pushglobaltable(L);
  suggest_in(L);
}

/* hooks.suggest_global(msg [, globals]): msg with the closest function of
** globals (default: the global table) suggested, as the prompt shows it,
** so that a replay whose globals are a table of its own prints the same. */
static int l_suggest_global(lua_State *L) {
  luaL_checkstring(L, 1);
  lua_settop(L, 2);
  if (lua_isnil(L, 2)) {
    lua_pop(L, 1);
    lua_pushglobaltable(L);
  }
  suggest_in(L);
  return 1;
}

void run_install(lua_State *L) {
  if (lua_getfield(L, LUA_REGISTRYINDEX, "sluice.hooks") == LUA_TTABLE) {
    lua_pushcfunction(L, l_suggest_global);
    lua_setfield(L, -2, "suggest_global");
  }
  lua_pop(L, 1);
}

/* Look for ":digits: " after a non-empty prefix on the first line. */
int run_has_position(const char *msg) {
  for (const char *p = msg; *p != '\0' && *p != '\n'; p++) {
    if (p[0] != ':' || !isdigit((unsigned char)p[1]))
      continue;
    const char *q = p + 1;
    while (isdigit((unsigned char)*q))
      q++;
    if (q[0] == ':' && q[1] == ' ')
      return p != msg;
  }
  return 0;
}

/* Turn the error object on top into a string, the way lua.c does. */
static const char *error_string(lua_State *L) {
  const char *msg = lua_tostring(L, -1);
  if (msg != NULL)
    return msg;
  if (luaL_callmeta(L, -1, "__tostring")) {
    if (lua_type(L, -1) == LUA_TSTRING)
      return lua_tostring(L, -1);
    lua_pop(L, 1);
  }
  return lua_pushfstring(L, "(error object is a %s value)",
                         luaL_typename(L, -1));
}

/* Push "where:123: ", the place of the innermost Lua function on the
** stack outside sluice's own Lua files (an error raised there belongs to
** the user's line that called it); 0 (nothing pushed) when there is none. */
static int push_position(lua_State *L) {
  lua_Debug ar;
  for (int level = 1; lua_getstack(L, level, &ar); level++) {
    if (lua_getinfo(L, "Sl", &ar) && ar.currentline > 0
        && strncmp(ar.source, "@lua/sluice/", 12) != 0) {
      lua_pushfstring(L, "%s:%d: ", ar.short_src, ar.currentline);
      return 1;
    }
  }
  return 0;
}

/* Prefix msg with the place of the innermost Lua function on the stack. */
static void add_position(lua_State *L, const char *msg) {
  if (push_position(L)) {
    lua_pushstring(L, msg);
    lua_concat(L, 2);
  }
}

/* Message handler for scripts: a string that says where. */
static int script_handler(lua_State *L) {
  const char *msg = error_string(L);
  if (!run_has_position(msg))
    add_position(L, msg);
  suggest_global(L);
  return 1;
}

/* Message handler for the prompt: a string, nothing added but a suggestion. */
static int prompt_handler(lua_State *L) {
  error_string(L);
  suggest_global(L);
  return 1;
}

#define ENTRY_POSITION "sluice.error_position"

/* Message handler for an entry of a script: the message as the prompt
** shows it (and as the log records it), its place kept aside for the
** report on standard error. */
static int entry_handler(lua_State *L) {
  if (!push_position(L))
    lua_pushliteral(L, "");
  lua_setfield(L, LUA_REGISTRYINDEX, ENTRY_POSITION);
  return prompt_handler(L);
}

void run_entry_position(lua_State *L) {
  if (lua_getfield(L, LUA_REGISTRYINDEX, ENTRY_POSITION) != LUA_TSTRING) {
    lua_pop(L, 1);
    lua_pushliteral(L, "");
  }
}

/* lua_pcall with the mode's message handler, Ctrl-C armed. */
int run_call(lua_State *L, int narg, int nres, enum run_mode mode) {
  int base = lua_gettop(L) - narg;
  lua_pushcfunction(L, mode == RUN_SCRIPT ? script_handler
                       : mode == RUN_ENTRY ? entry_handler : prompt_handler);
  lua_insert(L, base);
  sig_run_begin(L);
  int status = lua_pcall(L, narg, nres, base);
  sig_run_end(L);
  lua_remove(L, base);
  return status;
}

/* Print a failed call's message the way a command does. */
int run_report(lua_State *L, int status) {
  if (status != LUA_OK) {
    const char *msg = lua_tostring(L, -1);
    fflush(stdout);
    fprintf(stderr, "%s: %s\n", PROGNAME, msg ? msg : "(no message)");
    fflush(stderr);
    lua_pop(L, 1);
  }
  return status;
}

/* Load and run one piece of code. */
int run_string(lua_State *L, const char *code, const char *chunkname) {
  int status = luaL_loadbuffer(L, code, strlen(code), chunkname);
  if (status == LUA_OK)
    status = run_call(L, 0, 0, RUN_SCRIPT);
  return status;
}

/* Load a file and run it with its arguments. */
int run_script(lua_State *L, const char *path, char **args, int nargs) {
  int status = luaL_loadfile(L, path);
  if (status != LUA_OK)
    return status;
  luaL_checkstack(L, nargs + 1, "too many arguments to the script");
  for (int i = 0; i < nargs; i++)
    lua_pushstring(L, args[i]);
  return run_call(L, nargs, 0, RUN_SCRIPT);
}
