/*
** bind_public.c: every public function and method is called through one
** wrapper, so that whatever its error says reaches the user in one form:
** "file:line: name: what" at the line the user wrote, under the public name
** (estimate, g:adjust, f:binarize), never a path inside sluice, an
** internal name (_estimate), '?' or a metatable name.  Argument errors
** keep the form of luaL_argerror with the public name:
** "file:line: bad argument #2 to 'f:binarize' (number expected, got nil)".
*/
#include <ctype.h>
#include <string.h>

#include "bind.h"

/* Chunks of the embedded Lua layer are named "@lua/sluice/x.lua". */
#define SL_LAYER_SOURCE "@lua/sluice/"
#define SL_LAYER_SHORT  "lua/sluice/"

/* A public name is at most this long ("g:count_trails"). */
#define SL_PUBLIC_NAME_MAX 64

void sl_bind_where(lua_State *L, int level) {
  lua_Debug ar;
  for (; lua_getstack(L, level, &ar); level++) {
    lua_getinfo(L, "Sl", &ar);
    if (strncmp(ar.source, SL_LAYER_SOURCE, sizeof SL_LAYER_SOURCE - 1) == 0) continue;
    if (ar.currentline > 0) { lua_pushfstring(L, "%s:%d: ", ar.short_src, ar.currentline); return; }
    break;
  }
  lua_pushliteral(L, "");
}

/* Length of a leading "file:line: " in msg (0 when there is none): the
** first ":digits: " of the first line, after a file part without ": ". */
static size_t position_len(const char *msg) {
  for (const char *p = msg; *p && *p != '\n'; p++) {
    if (p[0] == ':' && p[1] == ' ') return 0;   /* "name: " comes first */
    if (p == msg || p[0] != ':' || !isdigit((unsigned char)p[1])) continue;
    const char *q = p + 1;
    while (isdigit((unsigned char)*q)) q++;
    if (q[0] == ':' && q[1] == ' ') return (size_t)(q + 2 - msg);
    return 0;
  }
  return 0;
}

/* Is the position at msg (len bytes) inside sluice rather than the user's? */
static int internal_position(const char *msg, size_t len) {
  return strncmp(msg, SL_LAYER_SHORT, sizeof SL_LAYER_SHORT - 1) == 0 ||
         (len >= 3 && strncmp(msg, "[C]", 3) == 0) || msg[0] == '?';
}

/* Does s begin with word followed by ": "? */
static int starts_with_name(const char *s, const char *word, size_t n) {
  return n > 0 && strncmp(s, word, n) == 0 && s[n] == ':' && s[n + 1] == ' ';
}

/* What a method is called on, for the message of a bad self. */
static const char *object_word(const char *name) {
  switch (name[0]) {
    case 'g': return "a graph";
    case 'f': return "a data frame";
    case 'c': return "a column of a data frame";
    case 'm': return "a model";
    case 'r': return "the result of g:identify";
    default: return "its object";
  }
}

/* Push the body of an argument error "bad argument #n to 'fn' (text)"
** for the public function name; 0 when body is not of that form. */
static int argument_error(lua_State *L, const char *body, const char *name,
                          const char *shortname) {
  int n = 0, self = 0;
  const char *p;
  if (strncmp(body, "bad argument #", 14) == 0) {
    p = body + 14;
    if (!isdigit((unsigned char)*p)) return 0;
    while (isdigit((unsigned char)*p)) n = n * 10 + (*p++ - '0');
    if (strncmp(p, " to '", 5) != 0) return 0;
    p += 5;
  } else if (strncmp(body, "calling '", 9) == 0) {
    p = body + 9;
    self = 1;
  } else return 0;
  const char *fn = p, *end = strchr(fn, '\'');
  if (!end) return 0;
  const char *text = end + 1;
  text += strncmp(text, " on bad self", 12) == 0 ? 12 : 0;
  if (strncmp(text, " (", 2) != 0) return 0;
  text += 2;
  size_t tlen = strlen(text);
  if (tlen == 0 || text[tlen - 1] != ')') return 0;
  tlen--;
  size_t fnlen = (size_t)(end - fn);
  int ours = (fnlen == 1 && fn[0] == '?') ||
             (fnlen == strlen(shortname) && strncmp(fn, shortname, fnlen) == 0) ||
             (fnlen == strlen(name) && strncmp(fn, name, fnlen) == 0);
  if (!ours) {   /* an argument of a function the user did not call */
    lua_pushfstring(L, "%s: ", name);
    lua_pushlstring(L, text, tlen);
    lua_concat(L, 2);
    return 1;
  }
  /* called through this wrapper, a method's self is argument 1 */
  if (strchr(name, ':') != NULL && !self) self = --n == 0;
  if (self) {
    const char *got = strstr(text, "got ");
    lua_pushfstring(L, "%s: call it on %s, as %s(...)", name, object_word(name), name);
    if (got && (size_t)(got - text) < tlen) {
      lua_pushliteral(L, " (");
      lua_pushlstring(L, got, tlen - (size_t)(got - text));
      lua_pushliteral(L, ")");
      lua_concat(L, 4);
    }
    return 1;
  }
  lua_pushfstring(L, "bad argument #%d to '%s' (", n, name);
  lua_pushlstring(L, text, tlen);
  lua_pushliteral(L, ")");
  lua_concat(L, 3);
  return 1;
}

/* The metatable names luaL_checkudata puts in a message, in words. */
static const char *const type_words[][2] = {
  {"sluice.graph", "graph"}, {"sluice.frame", "data frame"},
  {"sluice.column", "column"}, {"sluice.sem", "model from sem()"},
  {"sluice.identified", "result of g:identify"},
};

/* Replace the string on top by its text with metatable names in words. */
static void in_words(lua_State *L) {
  for (size_t i = 0; i < sizeof type_words / sizeof type_words[0]; i++) {
    if (!strstr(lua_tostring(L, -1), type_words[i][0])) continue;
    luaL_gsub(L, lua_tostring(L, -1), type_words[i][0], type_words[i][1]);
    lua_remove(L, -2);
  }
}

/* Push the body of msg as it names the public function: an argument error
** takes the public name, "adjust: ..." becomes "g:adjust: ...", and any
** other text gains "name: " in front. */
static void public_body(lua_State *L, const char *body, const char *name) {
  const char *colon = strchr(name, ':');
  const char *shortname = colon ? colon + 1 : name;
  if (argument_error(L, body, name, shortname)) return;
  if (starts_with_name(body, name, strlen(name))) { lua_pushstring(L, body); return; }
  if (starts_with_name(body, shortname, strlen(shortname))) {
    lua_pushfstring(L, "%s%s", name, body + strlen(shortname));
    return;
  }
  lua_pushfstring(L, "%s: %s", name, body);
}

int sl_bind_public_error(lua_State *L, const char *name, int level) {
  const char *msg = lua_tostring(L, -1);
  if (!msg || strcmp(msg, "interrupted") == 0) return lua_error(L);
  /* keep the user's position (a callback's error), drop sluice's own */
  const char *user = NULL;
  size_t userlen = 0, n;
  while ((n = position_len(msg)) > 0) {
    if (!user && !internal_position(msg, n)) { user = msg; userlen = n; }
    msg += n;
  }
  if (user) lua_pushlstring(L, user, userlen);
  else sl_bind_where(L, level);
  public_body(L, msg, name);
  in_words(L);
  lua_concat(L, 2);
  return lua_error(L);
}

/* The wrapper: upvalue 1 the function, upvalue 2 its public name. */
static int public_call(lua_State *L) {
  int n = lua_gettop(L);
  lua_pushvalue(L, lua_upvalueindex(1));
  lua_insert(L, 1);
  int status = lua_pcall(L, n, LUA_MULTRET, 0);
  if (status == LUA_OK) return lua_gettop(L);
  if (status != LUA_ERRRUN || lua_type(L, -1) != LUA_TSTRING) return lua_error(L);
  return sl_bind_public_error(L, lua_tostring(L, lua_upvalueindex(2)), 1);
}

/* Replace every function of the table at idx whose name does not begin
** with '_' by a wrapper named prefix..name. */
void sl_bind_publish(lua_State *L, int idx, const char *prefix) {
  idx = lua_absindex(L, idx);
  lua_pushnil(L);
  while (lua_next(L, idx)) {
    const char *k = lua_type(L, -2) == LUA_TSTRING ? lua_tostring(L, -2) : NULL;
    if (k && k[0] != '_' && lua_isfunction(L, -1) &&
        strlen(prefix) + strlen(k) < SL_PUBLIC_NAME_MAX &&
        !(lua_tocfunction(L, -1) == public_call)) {
      lua_pushfstring(L, "%s%s", prefix, k);
      lua_pushcclosure(L, public_call, 2);
      lua_pushvalue(L, -2);
      lua_insert(L, -2);
      lua_rawset(L, idx);   /* changing the value of a present key is allowed */
    } else lua_pop(L, 1);
  }
}
