/*
** repl.c: reading Lua at the prompt.  A line is first tried as
** "return <line>", so that an expression prints its values; otherwise as a
** statement.  A chunk that ends too early (its error ends in "<eof>")
** waits for more lines.  Errors print one message and leave every variable
** as it was.
*/
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/types.h>
#include <unistd.h>

#include <lua.h>
#include <lauxlib.h>

#include "log.h"
#include "repl.h"
#include "run.h"

#define EOFMARK "<eof>"

/* Fetch require("sluice.print").format (a protected call). */
static int get_format(lua_State *L) {
  lua_getglobal(L, "require");
  lua_pushliteral(L, "sluice.print");
  lua_call(L, 1, 1);
  lua_getfield(L, -1, "format");
  luaL_checktype(L, -1, LUA_TFUNCTION);
  return 1;
}

/* Keep the printer in the registry, or note that tostring must do. */
static void load_format(repl *R) {
  lua_State *L = R->L;
  lua_pushcfunction(L, get_format);
  if (lua_pcall(L, 0, 1, 0) == LUA_OK) {
    R->format_ref = luaL_ref(L, LUA_REGISTRYINDEX);
    return;
  }
  const char *msg = lua_tostring(L, -1);
  fprintf(stderr, "sluice: warning: values print with tostring, because "
          "sluice.print did not load: %s\n", msg ? msg : "(no message)");
  lua_pop(L, 1);
  R->format_ref = LUA_REFNIL;
}

/* A repl with no chunk, its printer loaded. */
void repl_init(repl *R, lua_State *L) {
  memset(R, 0, sizeof *R);
  R->L = L;
  R->done = 1;
  load_format(R);
}

/* Free the chunk and the printer's reference. */
void repl_free(repl *R) {
  if (R->format_ref != LUA_REFNIL)
    luaL_unref(R->L, LUA_REGISTRYINDEX, R->format_ref);
  free(R->chunk);
  R->chunk = NULL;
}

/* The chunk's text, pending or finished. */
const char *repl_text(const repl *R) {
  return R->chunk != NULL ? R->chunk : "";
}

/* The chunk's text while it waits for more lines. */
const char *repl_pending(const repl *R) {
  return R->done ? NULL : repl_text(R);
}

/* Let the next line begin a new chunk. */
void repl_reset(repl *R) {
  R->done = 1;
}

/* The first-line prompt, or the continuation prompt. */
const char *repl_prompt(const repl *R) {
  return R->done ? REPL_PROMPT1 : REPL_PROMPT2;
}

/* Append line to the chunk, after a newline when the chunk has text. */
static int append(repl *R, const char *line) {
  size_t n = strlen(line), need = R->len + n + 2;
  if (need > R->cap) {
    size_t cap = R->cap ? R->cap : 256;
    while (cap < need)
      cap *= 2;
    char *p = realloc(R->chunk, cap);
    if (p == NULL)
      return 0;
    R->chunk = p;
    R->cap = cap;
  }
  if (R->lines > 0)
    R->chunk[R->len++] = '\n';
  memcpy(R->chunk + R->len, line, n + 1);
  R->len += n;
  R->lines++;
  return 1;
}

/* Compile the chunk, first as "return chunk", then as it is.  Once the
** text compiles, the session compiles it again, so that the input sees the
** top-level locals of the inputs before it (log_load). */
static int compile(repl *R) {
  lua_State *L = R->L;
  char name[32];
  snprintf(name, sizeof name, "=[input %d]", R->count);
  const char *code = lua_pushfstring(L, "return %s", R->chunk);
  size_t len = lua_rawlen(L, -1);
  int status = luaL_loadbuffer(L, code, len, name);
  R->expr = status == LUA_OK;
  if (status == LUA_OK) {
    lua_pop(L, 1);
    status = log_load(L, code, len, name);
    lua_remove(L, -2);
    return status;
  }
  lua_pop(L, 2);
  status = luaL_loadbuffer(L, R->chunk, R->len, name);
  if (status != LUA_OK)
    return status;
  lua_pop(L, 1);
  return log_load(L, R->chunk, R->len, name);
}

/* Is the syntax error on top one that more lines could mend? */
static int incomplete(lua_State *L, int status) {
  size_t n, m = sizeof EOFMARK - 1;
  if (status != LUA_ERRSYNTAX)
    return 0;
  const char *msg = lua_tolstring(L, -1, &n);
  return msg != NULL && n >= m && strcmp(msg + n - m, EOFMARK) == 0;
}

/* Write each argument after the first on a line of its own (a text that
** ends in a newline gets no second one), through the printer given as the
** first argument when it is a function. */
static int print_values(lua_State *L) {
  int n = lua_gettop(L);
  for (int i = 2; i <= n; i++) {
    size_t len;
    const char *s = NULL;
    if (lua_isfunction(L, 1)) {
      lua_pushvalue(L, 1);
      lua_pushvalue(L, i);
      if (lua_pcall(L, 1, 1, 0) == LUA_OK && lua_type(L, -1) == LUA_TSTRING)
        s = lua_tolstring(L, -1, &len);
    }
    if (s == NULL)
      s = luaL_tolstring(L, i, &len);
    fwrite(s, 1, len, stdout);
    log_out(L, s, len);
    if (len == 0 || s[len - 1] != '\n') {
      fputc('\n', stdout);
      log_out(L, "\n", 1);
    }
    lua_settop(L, n);
  }
  fflush(stdout);
  return 0;
}

/* Print the results of the chunk: all values above base. */
static int print_results(repl *R, int base) {
  lua_State *L = R->L;
  int n = lua_gettop(L) - base;
  if (n == 0)
    return LUA_OK;
  luaL_checkstack(L, 3, "too many results to print");
  lua_pushcfunction(L, print_values);
  lua_rawgeti(L, LUA_REGISTRYINDEX, R->format_ref);
  lua_rotate(L, base + 1, 2);
  return run_call(L, n + 1, 0, RUN_PROMPT);
}

/* The message without a position inside the one-line chunk just typed. */
static const char *strip_position(repl *R, const char *msg) {
  char id[32];
  int n = snprintf(id, sizeof id, "[input %d]:1: ", R->count);
  if (R->lines == 1 && n > 0 && strncmp(msg, id, (size_t)n) == 0)
    return msg + n;
  return msg;
}

/* The error message on top as show_error prints it. */
static const char *error_text(repl *R) {
  const char *msg = lua_tostring(R->L, -1);
  return msg == NULL ? "(error object is not a string)" : strip_position(R, msg);
}

/* Show the error message on top of the stack.  After Ctrl-C the terminal
** has echoed "^C" without a newline: start a fresh line first. */
static void show_error(repl *R) {
  const char *msg = lua_tostring(R->L, -1);
  fflush(stdout);
  if (msg != NULL && strcmp(msg, "interrupted") == 0 && isatty(STDIN_FILENO))
    fputc('\n', stderr);
  if (msg == NULL)
    msg = "(error object is not a string)";
  fprintf(stderr, "error: %s\n", strip_position(R, msg));
  fflush(stderr);
}

/* Add a line and compile the chunk; on success the function stays on the
** stack for repl_run. */
int repl_take(repl *R, const char *line) {
  lua_State *L = R->L;
  if (R->done) {
    R->len = 0;
    R->lines = 0;
    R->count++;
    R->done = 0;
  }
  if (!append(R, line)) {
    fprintf(stderr, "error: not enough memory for this input\n");
    R->done = 1;
    return REPL_FAILED;
  }
  int status = compile(R);
  if (incomplete(L, status)) {
    lua_pop(L, 1);
    return REPL_MORE;
  }
  R->done = 1;
  if (status != LUA_OK) {
    show_error(R);
    if (R->record)
      log_skip(L, R->count, R->chunk, error_text(R));
    lua_pop(L, 1);
    return REPL_FAILED;
  }
  return REPL_READY;
}

/* Call the compiled chunk on top, then print its values or its error. */
void repl_run(repl *R) {
  lua_State *L = R->L;
  int base = lua_gettop(L) - 1;
  if (R->record)
    log_begin(L, R->count, R->chunk, R->expr);
  int status = run_call(L, 0, LUA_MULTRET, RUN_PROMPT);
  int nres = status == LUA_OK ? lua_gettop(L) - base : -1;
  if (status == LUA_OK)
    status = print_results(R, base);
  if (status != LUA_OK)
    show_error(R);
  if (R->record)
    log_end(L, status == LUA_OK ? NULL : error_text(R), nres);
  lua_settop(L, base);
}

/* Take a line and run the chunk when it is complete. */
int repl_feed(repl *R, const char *line) {
  int st = repl_take(R, line);
  if (st == REPL_READY)
    repl_run(R);
  return st == REPL_MORE;
}

/* Read lines with getline until the end of input. */
void repl_run_plain(repl *R) {
  char *line = NULL;
  size_t cap = 0;
  ssize_t n;
  for (;;) {
    fputs(repl_prompt(R), stdout);
    fflush(stdout);
    if ((n = getline(&line, &cap, stdin)) < 0)
      break;
    while (n > 0 && (line[n - 1] == '\n' || line[n - 1] == '\r'))
      line[--n] = '\0';
    repl_feed(R, line);
  }
  fputc('\n', stdout);
  free(line);
}
