/*
** complete.c: Tab completion.  Readline's completion callbacks carry no
** user pointer, so the state they read (the Lua state and the pending
** chunk) is kept here, set by the prompt.  Every look-up in Lua runs in a
** protected call and follows only raw fields and __index tables; the node
** names of a graph and the columns of a frame are read from the C objects
** themselves.  Completion calls no Lua function at all, so a method or
** metamethod that the user replaced never runs.
*/
#include <stdlib.h>
#include <string.h>

#include <readline/readline.h>

#include <lua.h>
#include <lauxlib.h>

#include "bind.h"
#include "bind_frame.h"
#include "complete.h"
#include "scan.h"

#define CHAIN_MAX 8                /* __index tables followed at most */

static lua_State *complete_L = NULL;
static const char *complete_chunk = NULL;

/* Word breaks in code: "." and ":" stay inside a word. */
static char code_breaks[] = " \t\n\"'`@$><=;|&{(+-*/%^#~,)[]}";
/* Word breaks inside graph notation. */
static char notation_breaks[] = " \t\n\"',;<>-[]=(){}#";
/* Word breaks inside a string holding one name: only its quote. */
static char double_quote[] = "\"", single_quote[] = "'";

/* What a completion request asks the Lua side. */
typedef struct request {
  const char *text;  /* the word being completed */
  int notation;      /* the string holds notation, not a single name */
  int quote;         /* the quote of the string, 0 in a long string */
  const char *path;  /* collect_columns: the frame's name before "[" */
  size_t npath;
} request;

static const char *const keywords[] = {
  "and", "break", "do", "else", "elseif", "end", "false", "for",
  "function", "goto", "if", "in", "local", "nil", "not", "or", "repeat",
  "return", "then", "true", "until", "while", NULL
};

/* ---- the Lua side ------------------------------------------------ */

/* Is ch a letter, a digit or "_" (in the C locale, as Lua's names)? */
static int is_alnum(unsigned char ch) {
  return ch == '_' || (ch >= 'a' && ch <= 'z') || (ch >= 'A' && ch <= 'Z') ||
         (ch >= '0' && ch <= '9');
}

/* Is s[0..n) a Lua name that is not a keyword? */
static int is_name(const char *s, size_t n) {
  if (n == 0 || (s[0] >= '0' && s[0] <= '9'))
    return 0;
  for (size_t i = 0; i < n; i++)
    if (!is_alnum((unsigned char)s[i]))
      return 0;
  for (int k = 0; keywords[k] != NULL; k++)
    if (strlen(keywords[k]) == n && memcmp(keywords[k], s, n) == 0)
      return 0;
  return 1;
}

/* Replace the value on top by its metatable's __index when that is a
** table; returns 0 (and pops the value) otherwise. */
static int next_in_chain(lua_State *L) {
  if (!lua_getmetatable(L, -1)) {
    lua_pop(L, 1);
    return 0;
  }
  lua_pushliteral(L, "__index");
  lua_rawget(L, -2);
  lua_remove(L, -2);
  lua_remove(L, -2);
  if (!lua_istable(L, -1)) {
    lua_pop(L, 1);
    return 0;
  }
  return 1;
}

/* Push the table "methods" of the metatable named meta (listed there by
** the bindings for help and completion). */
static void push_methods(lua_State *L, const char *meta) {
  luaL_getmetatable(L, meta);
  if (lua_istable(L, -1)) {
    lua_pushliteral(L, "methods");
    lua_rawget(L, -2);
    lua_remove(L, -2);
  }
  if (!lua_istable(L, -1)) {
    lua_pop(L, 1);
    lua_newtable(L);
  }
}

/* The frame at idx, or NULL when the value is no frame. */
static sl_frame *to_frame(lua_State *L, int idx) {
  if (luaL_testudata(L, idx, SL_FRAME_MT) == NULL)
    return NULL;
  return sl_bind_checkframe(L, idx);   /* raises only for a freed box */
}

/* Push what f.k gives, as far as completion cares, without calling the
** frame's __index: a method, or for a column the table of column methods
** (what may follow it); nil when neither. */
static void frame_field(lua_State *L, int idx, const char *k, size_t n) {
  sl_frame *f = to_frame(L, idx);
  push_methods(L, SL_FRAME_MT);
  lua_pushlstring(L, k, n);
  if (lua_rawget(L, -2) != LUA_TNIL) {
    lua_remove(L, -2);
    return;
  }
  lua_pop(L, 2);
  lua_pushlstring(L, k, n);
  int j = sl_frame_find(f, lua_tostring(L, -1));
  lua_pop(L, 1);
  if (j >= 0)
    push_methods(L, SL_COLUMN_MT);
  else
    lua_pushnil(L);
}

/* Push the field k of the value at idx without calling any function;
** nil when there is none. */
static void get_field(lua_State *L, int idx, const char *k, size_t n) {
  if (to_frame(L, idx) != NULL) {
    frame_field(L, idx, k, n);
    return;
  }
  lua_pushvalue(L, idx);
  for (int depth = 0; depth < CHAIN_MAX; depth++) {
    if (lua_istable(L, -1)) {
      lua_pushlstring(L, k, n);
      if (lua_rawget(L, -2) != LUA_TNIL) {
        lua_remove(L, -2);
        return;
      }
      lua_pop(L, 1);
    }
    if (!next_in_chain(L))
      break;
    if (depth + 1 == CHAIN_MAX)
      lua_pop(L, 1);
  }
  lua_pushnil(L);
}

/* Push the value that the dotted name s[0..n) names among the globals. */
static void push_path(lua_State *L, const char *s, size_t n) {
  lua_pushglobaltable(L);
  while (!lua_isnil(L, -1)) {
    const char *dot = memchr(s, '.', n);
    size_t len = dot != NULL ? (size_t)(dot - s) : n;
    if (!is_name(s, len)) {
      lua_pop(L, 1);
      lua_pushnil(L);
      return;
    }
    get_field(L, -1, s, len);
    lua_remove(L, -2);
    if (dot == NULL)
      return;
    s += len + 1;
    n -= len + 1;
  }
}

/* Is the value at idx callable? */
static int is_callable(lua_State *L, int idx) {
  if (lua_isfunction(L, idx))
    return 1;
  int t = luaL_getmetafield(L, idx, "__call");
  if (t != LUA_TNIL)
    lua_pop(L, 1);
  return t != LUA_TNIL;
}

/* Append the string on top to the list at index out, and pop it. */
static void add(lua_State *L, int out) {
  lua_rawseti(L, out, (lua_Integer)lua_rawlen(L, out) + 1);
}

/* Add head..key for every name key of the table on top (popped) that
** begins with prefix; only callable ones when methods is set. */
static void add_keys(lua_State *L, int out, const char *head, size_t nhead,
                     const char *prefix, int methods) {
  size_t np = strlen(prefix);
  lua_pushnil(L);
  while (lua_next(L, -2) != 0) {
    size_t n;
    const char *k = lua_type(L, -2) == LUA_TSTRING ? lua_tolstring(L, -2, &n)
                                                   : NULL;
    if (k != NULL && n >= np && memcmp(k, prefix, np) == 0 && is_name(k, n) &&
        (!methods || is_callable(L, -1))) {
      lua_pushlstring(L, head, nhead);
      lua_pushvalue(L, -3);
      lua_concat(L, 2);
      add(L, out);
    }
    lua_pop(L, 1);
  }
  lua_pop(L, 1);
}

/* Add the fields of the value on top (popped), and of its __index tables. */
static void add_fields(lua_State *L, int out, const char *head, size_t nhead,
                       const char *prefix, int methods) {
  for (int depth = 0; depth < CHAIN_MAX; depth++) {
    if (lua_istable(L, -1)) {
      lua_pushvalue(L, -1);
      add_keys(L, out, head, nhead, prefix, methods);
    }
    if (!next_in_chain(L))
      return;
  }
  lua_pop(L, 1);
}

/* Add head..name for the columns of the frame on top (popped) whose names
** begin with prefix and can follow a "."; then its methods. */
static void add_frame_fields(lua_State *L, int out, const char *head, size_t nhead,
                             const char *prefix, int methods) {
  sl_frame *f = to_frame(L, -1);
  size_t np = strlen(prefix);
  push_methods(L, SL_FRAME_MT);
  int mt = lua_gettop(L);
  for (size_t j = 0; !methods && j < f->ncol; j++) {
    const char *k = f->col[j].name;
    size_t n = strlen(k);
    if (n < np || memcmp(k, prefix, np) != 0 || !is_name(k, n))
      continue;
    lua_pushlstring(L, k, n);
    int shadowed = lua_rawget(L, mt) != LUA_TNIL;   /* f.k is the method */
    lua_pop(L, 1);
    if (shadowed)
      continue;
    lua_pushlstring(L, head, nhead);
    lua_pushlstring(L, k, n);
    lua_concat(L, 2);
    add(L, out);
  }
  add_keys(L, out, head, nhead, prefix, methods);   /* pops the methods */
  lua_pop(L, 1);
}

/* Protected: the list of names that complete a word of code. */
static int collect_names(lua_State *L) {
  const request *q = lua_touserdata(L, 1);
  const char *w = q->text;
  lua_newtable(L);
  int out = lua_gettop(L);
  const char *sep = NULL;
  for (const char *p = w; *p != '\0'; p++)
    if (*p == '.' || *p == ':')
      sep = p;
  if (sep == NULL) {
    size_t n = strlen(w);
    for (int k = 0; keywords[k] != NULL; k++)
      if (strncmp(keywords[k], w, n) == 0) {
        lua_pushstring(L, keywords[k]);
        add(L, out);
      }
    lua_pushglobaltable(L);
    add_fields(L, out, "", 0, w, 0);
    return 1;
  }
  push_path(L, w, (size_t)(sep - w));
  if (to_frame(L, -1) != NULL)
    add_frame_fields(L, out, w, (size_t)(sep - w) + 1, sep + 1, *sep == ':');
  else
    add_fields(L, out, w, (size_t)(sep - w) + 1, sep + 1, *sep == ':');
  return 1;
}

/* May name s be put where the request stands without breaking the code? */
static int fits(const request *q, const char *s, size_t n) {
  for (size_t i = 0; i < n; i++) {
    unsigned char ch = (unsigned char)s[i];
    if (q->notation && !(is_alnum(ch) || ch == '.' || ch >= 0x80))
      return 0;   /* notation would need it quoted */
    if (ch == '\\' || ch == '\n' || (int)ch == q->quote)
      return 0;
  }
  return 1;
}

/* Add the name s if it begins with the word and fits where it goes. */
static void add_if_fits(lua_State *L, int out, const request *q, const char *s) {
  size_t np = strlen(q->text), len = strlen(s);
  if (len >= np && memcmp(s, q->text, np) == 0 && fits(q, s, len)) {
    lua_pushlstring(L, s, len);
    add(L, out);
  }
}

/* Add the node names of the graph at idx that begin with the word: read
** from the graph itself, never through its (replaceable) methods. */
static void add_nodes(lua_State *L, int out, int idx, const request *q) {
  const sl_graph *g = sl_bind_checkgraph(L, idx);
  size_t n = sl_graph_nnodes(g);
  for (size_t v = 0; v < n; v++)
    add_if_fits(L, out, q, sl_graph_name(g, (int32_t)v));
}

/* Protected: the node names, from every graph held in a global, that
** complete the word. */
static int collect_nodes(lua_State *L) {
  const request *q = lua_touserdata(L, 1);
  lua_newtable(L);
  int out = lua_gettop(L);
  lua_pushglobaltable(L);
  lua_pushnil(L);
  while (lua_next(L, -2) != 0) {
    if (luaL_testudata(L, -1, SL_GRAPH_MT) != NULL)
      add_nodes(L, out, lua_gettop(L), q);
    lua_pop(L, 1);
  }
  lua_settop(L, out);
  return 1;
}

/* Protected: the column names of the frame that q->path names (in
** d["...), that complete the word. */
static int collect_columns(lua_State *L) {
  const request *q = lua_touserdata(L, 1);
  lua_newtable(L);
  int out = lua_gettop(L);
  push_path(L, q->path, q->npath);
  sl_frame *f = to_frame(L, -1);
  for (size_t j = 0; f != NULL && j < f->ncol; j++)
    add_if_fits(L, out, q, f->col[j].name);
  lua_settop(L, out);
  return 1;
}

/* ---- the Readline side ------------------------------------------- */

/* Order for qsort over C strings. */
static int by_bytes(const void *a, const void *b) {
  return strcmp(*(const char *const *)a, *(const char *const *)b);
}

/* Readline's match list from the Lua list on top: sorted, without
** repeats, the longest common prefix first; a single match gets close
** appended (NULL: nothing).  NULL when empty. */
static char **to_matches(lua_State *L, const char *close) {
  size_t n = (size_t)lua_rawlen(L, -1), k = 0;
  if (n == 0)
    return NULL;
  const char **all = malloc(n * sizeof *all);
  char **m = malloc((n + 2) * sizeof *m);
  if (all == NULL || m == NULL) {
    free(all);
    free(m);
    return NULL;
  }
  for (size_t i = 0; i < n; i++) {
    lua_rawgeti(L, -1, (lua_Integer)i + 1);
    all[i] = lua_tostring(L, -1);  /* the list keeps the string alive */
    lua_pop(L, 1);
  }
  qsort(all, n, sizeof *all, by_bytes);
  for (size_t i = 0; i < n; i++)
    if (i == 0 || strcmp(all[i], all[i - 1]) != 0)
      all[k++] = all[i];
  size_t common = 0;   /* sorted: the first and last share the prefix */
  while (all[0][common] != '\0' && all[0][common] == all[k - 1][common])
    common++;
  size_t j = 0;
  if (k == 1 && close != NULL) {
    lua_pushstring(L, all[0]);
    lua_pushstring(L, close);
    lua_concat(L, 2);
    all[0] = lua_tostring(L, -1);   /* kept on the stack until the copy */
  }
  m[j++] = strndup(all[0], k == 1 ? strlen(all[0]) : common);
  for (size_t i = 0; k > 1 && i < k; i++)
    m[j++] = strdup(all[i]);
  m[j] = NULL;
  free(all);
  for (size_t i = 0; i < j; i++)
    if (m[i] == NULL) {   /* out of memory: offer nothing */
      for (size_t f = 0; f < j; f++)
        free(m[f]);
      free(m);
      return NULL;
    }
  return m;
}

/* Ask the Lua side (collect_names, collect_nodes or collect_columns) for
** matches; close as for to_matches. */
static char **lua_matches(lua_CFunction collect, const request *q, const char *close) {
  lua_State *L = complete_L;
  char **m = NULL;
  if (L == NULL || !lua_checkstack(L, 8))
    return NULL;
  int top = lua_gettop(L);
  lua_pushcfunction(L, collect);
  lua_pushlightuserdata(L, (void *)q);
  if (lua_pcall(L, 1, 1, 0) == LUA_OK)
    m = to_matches(L, close);
  lua_settop(L, top);
  return m;
}

/* Where the text before position `at` of the current line stands. */
static scan context(int at) {
  scan c;
  scan_init(&c);
  if (complete_chunk != NULL) {
    scan_feed(&c, complete_chunk, strlen(complete_chunk));
    scan_feed(&c, "\n", 1);
  }
  scan_feed(&c, rl_line_buffer, (size_t)at);
  return c;
}

/* Does the string text s[0..n) read as notation rather than one name? */
static int is_notation(const char *s, size_t n) {
  for (size_t i = 0; i < n; i++)
    if (s[i] == ',' || s[i] == ';' || s[i] == '\n' ||
        (i + 1 < n && ((s[i] == '-' && s[i + 1] == '>') ||
                       (s[i] == '<' && s[i + 1] == '-'))))
      return 1;
  return 0;
}

/* Readline asks which characters end the word before the cursor. */
static char *word_breaks(void) {
  scan c = context(rl_point);
  if (c.kind == SCAN_LONG)
    return notation_breaks;
  if (c.kind != SCAN_SHORT)
    return code_breaks;
  if (is_notation(rl_line_buffer + c.start, (size_t)rl_point - c.start))
    return notation_breaks;
  return c.quote == '"' ? double_quote : single_quote;
}

/* Is ch part of a dotted name (a.b.c)? */
static int is_path_char(unsigned char ch) {
  return is_alnum(ch) || ch == '.';
}

/* The dotted name before "[" that a string opened at line[open] (its
** quote) indexes, as in d["age"]: its start and length, 0 when none. */
static size_t index_path(const char *line, size_t open, size_t *from) {
  size_t i = open;
  while (i > 0 && (line[i - 1] == ' ' || line[i - 1] == '\t'))
    i--;
  if (i == 0 || line[i - 1] != '[')
    return 0;
  i--;
  while (i > 0 && (line[i - 1] == ' ' || line[i - 1] == '\t'))
    i--;
  size_t end = i;
  while (i > 0 && is_path_char((unsigned char)line[i - 1]))
    i--;
  if (i > 0 && (line[i - 1] == ':' || line[i - 1] == ')' || line[i - 1] == ']'))
    return 0;   /* the end of a call or index: not a plain name */
  *from = i;
  return end - i;
}

/* Completion of f["... with a column name of the frame f, the string and
** the bracket closed after a single match; NULL when f is no frame. */
static char **complete_column(const char *text, const scan *c) {
  size_t from, n;
  if (c->kind != SCAN_SHORT || c->start == 0 ||
      (n = index_path(rl_line_buffer, c->start - 1, &from)) == 0)
    return NULL;
  request q = { text, 0, c->quote, rl_line_buffer + from, n };
  char close[3] = { (char)c->quote, ']', '\0' };
  rl_completion_append_character = '\0';
  return lua_matches(collect_columns, &q, close);
}

/* Completion inside a string: the columns of an indexed frame, node
** names, else (for a whole-string word) file names. */
static char **complete_string(const char *text, const scan *c, int start) {
  request q = { text, 1, c->kind == SCAN_SHORT ? c->quote : 0, NULL, 0 };
  int whole = c->kind == SCAN_SHORT && (size_t)start == c->start &&
              !is_notation(text, strlen(text));
  char **m = whole ? complete_column(text, c) : NULL;
  if (m != NULL)
    return m;
  q.notation = !whole;
  rl_completion_append_character = whole ? c->quote : ' ';
  m = lua_matches(collect_nodes, &q, NULL);
  if (m == NULL && whole)
    m = rl_completion_matches(text, rl_filename_completion_function);
  return m;
}

/* Readline's entry point: the matches for text = line[start..end). */
static char **complete(const char *text, int start, int end) {
  (void)end;
  rl_attempted_completion_over = 1;   /* never Readline's own file names */
  rl_completion_append_character = '\0';
  scan c = context(start);
  if (c.kind == SCAN_SHORT || c.kind == SCAN_LONG)
    return complete_string(text, &c, start);
  if (c.kind != SCAN_CODE)
    return NULL;
  request q = { text, 0, 0, NULL, 0 };
  return lua_matches(collect_names, &q, NULL);
}

/* Point Readline's completion hooks at this file. */
void complete_install(lua_State *L) {
  complete_L = L;
  rl_attempted_completion_function = complete;
  rl_completion_word_break_hook = word_breaks;
  rl_basic_word_break_characters = code_breaks;
  rl_completer_quote_characters = NULL;
  /* the text after a match is ours alone: without this, Readline appends
  ** the quote that opened the word, even after a closed f["name"] */
  rl_basic_quote_characters = "";
}

/* Remember the lines typed above the current one. */
void complete_pending(const char *chunk) {
  complete_chunk = chunk;
}
