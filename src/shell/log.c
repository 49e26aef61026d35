/*
** log.c: the C half of the session log.  The log itself (its text, the
** capture of output, replay and the sandbox) lives in sluice.session; this
** file gives it what Lua lacks and calls its hooks from the prompt.
*/
#include <errno.h>
#include <limits.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

#include <cmark.h>
#include <lua.h>
#include <lauxlib.h>
#include <lualib.h>

#include "log.h"

#define HOOKS "sluice.hooks"

/* hooks.fsync(file): flush a Lua file and force it to the disk. */
static int l_fsync(lua_State *L) {
  luaL_Stream *p = luaL_checkudata(L, 1, LUA_FILEHANDLE);
  if (p->closef == NULL || p->f == NULL)
    return luaL_error(L, "fsync: the file is closed");
  if (fflush(p->f) != 0 || fsync(fileno(p->f)) != 0) {
    luaL_pushfail(L);
    lua_pushstring(L, strerror(errno));
    return 2;
  }
  lua_pushboolean(L, 1);
  return 1;
}

/* hooks.mkdir(path): make a folder unless it is there; true or fail, msg. */
static int l_mkdir(lua_State *L) {
  const char *path = luaL_checkstring(L, 1);
  struct stat st;
  if (mkdir(path, 0777) != 0 && !(errno == EEXIST && stat(path, &st) == 0 &&
                                   S_ISDIR(st.st_mode))) {
    luaL_pushfail(L);
    lua_pushfstring(L, "cannot make the folder %s: %s", path, strerror(errno));
    return 2;
  }
  lua_pushboolean(L, 1);
  return 1;
}

/* hooks.realpath(path): the absolute path with every link resolved, or
** nil when it does not exist. */
static int l_realpath(lua_State *L) {
  const char *path = luaL_checkstring(L, 1);
  char *r = realpath(path, NULL);
  if (r == NULL) {
    luaL_pushfail(L);
    return 1;
  }
  lua_pushstring(L, r);
  free(r);
  return 1;
}

/* hooks.markdown_html(text): CommonMark rendered by libcmark (safe mode:
** raw HTML and unsafe links are left out). */
static int l_markdown_html(lua_State *L) {
  size_t len;
  const char *md = luaL_checklstring(L, 1, &len);
  char *html = cmark_markdown_to_html(md, len, CMARK_OPT_DEFAULT);
  if (html == NULL)
    return luaL_error(L, "report: not enough memory to render the HTML");
  lua_pushstring(L, html);
  free(html);
  return 1;
}

/* Install the services above into the hooks table. */
void log_install(lua_State *L) {
  static const luaL_Reg fns[] = {
    {"fsync", l_fsync}, {"mkdir", l_mkdir}, {"realpath", l_realpath},
    {"markdown_html", l_markdown_html}, {NULL, NULL}
  };
  if (lua_getfield(L, LUA_REGISTRYINDEX, HOOKS) == LUA_TTABLE)
    luaL_setfuncs(L, fns, 0);
  lua_pop(L, 1);
}

/* Push hooks[name] and return 1 when it is a function; else push nothing. */
static int get_hook(lua_State *L, const char *name) {
  if (lua_getfield(L, LUA_REGISTRYINDEX, HOOKS) != LUA_TTABLE) {
    lua_pop(L, 1);
    return 0;
  }
  int t = lua_getfield(L, -1, name);
  lua_remove(L, -2);
  if (t != LUA_TFUNCTION) {
    lua_pop(L, 1);
    return 0;
  }
  return 1;
}

/* Call the hook on the stack with narg arguments; a failure is a warning. */
static void call_hook(lua_State *L, const char *name, int narg, int nres) {
  if (lua_pcall(L, narg, nres, 0) != LUA_OK) {
    const char *msg = lua_tostring(L, -1);
    fprintf(stderr, "sluice: warning: the session log (%s): %s\n", name,
            msg ? msg : "(no message)");
    lua_pop(L, 1);
    for (int i = 0; i < nres; i++)
      lua_pushnil(L);
  }
}

void log_session_start(lua_State *L) {
  if (get_hook(L, "session_start"))
    call_hook(L, "session_start", 0, 0);
}

/* require("sluice.session").open(path) and say where the log goes. */
int log_start(lua_State *L, const char *path, int say) {
  lua_getglobal(L, "require");
  lua_pushliteral(L, "sluice.session");
  if (lua_pcall(L, 1, 1, 0) != LUA_OK || !lua_istable(L, -1)) {
    fprintf(stderr, "sluice: %sno session log: the session layer did not load\n",
            path ? "" : "warning: ");
    lua_pop(L, 1);
    return 0;
  }
  lua_getfield(L, -1, "open");
  if (path != NULL)
    lua_pushstring(L, path);
  else
    lua_pushnil(L);
  if (lua_pcall(L, 1, 2, 0) != LUA_OK) {
    lua_pushnil(L);
    lua_insert(L, -2);
  }
  int open = lua_isstring(L, -2);
  if (open && say) {
    printf("session log: %s (--no-log to go without, log(false) to stop)\n",
           lua_tostring(L, -2));
    fflush(stdout);
  } else if (!open) {
    const char *msg = lua_tostring(L, -1);
    fflush(stdout);
    if (path != NULL)
      fprintf(stderr, "sluice: --log %s: cannot write the session log there: %s\n",
              path, msg ? msg : "(no message)");
    else
      fprintf(stderr, "sluice: warning: no session log: cannot open a file in "
              "./sluice-logs: %s\n", msg ? msg : "(no message)");
  }
  lua_pop(L, 3);
  return open;
}

void log_begin(lua_State *L, int n, const char *text, int expr) {
  if (!get_hook(L, "session_begin"))
    return;
  lua_pushinteger(L, n);
  lua_pushstring(L, text);
  lua_pushboolean(L, expr);
  call_hook(L, "session_begin", 3, 0);
}

void log_out(lua_State *L, const char *s, size_t len) {
  if (!get_hook(L, "session_out"))
    return;
  lua_pushlstring(L, s, len);
  call_hook(L, "session_out", 1, 0);
}

void log_end(lua_State *L, const char *msg, int nres) {
  if (!get_hook(L, "session_end"))
    return;
  if (msg != NULL)
    lua_pushstring(L, msg);
  else
    lua_pushnil(L);
  lua_pushinteger(L, nres);
  call_hook(L, "session_end", 2, 0);
}

void log_skip(lua_State *L, int n, const char *text, const char *msg) {
  if (!get_hook(L, "session_skip"))
    return;
  lua_pushinteger(L, n);
  lua_pushstring(L, text);
  lua_pushstring(L, msg ? msg : "");
  call_hook(L, "session_skip", 3, 0);
}

/* hooks.session_load(code, name): the input as a function, or nil and the
** message of a syntax error. */
int log_load(lua_State *L, const char *code, size_t len, const char *name) {
  if (!get_hook(L, "session_load"))
    return luaL_loadbuffer(L, code, len, name);
  lua_pushlstring(L, code, len);
  lua_pushstring(L, name);
  if (lua_pcall(L, 2, 2, 0) != LUA_OK)
    return LUA_ERRSYNTAX;            /* the message is on top */
  if (lua_isfunction(L, -2)) {
    lua_pop(L, 1);
    return LUA_OK;
  }
  lua_remove(L, -2);
  if (!lua_isstring(L, -1)) {
    lua_pop(L, 1);
    lua_pushstring(L, "the input could not be compiled");
  }
  return LUA_ERRSYNTAX;
}
