/*
** bind_graph.c: the graph object in Lua (userdata "sluice.graph").
*/
#include <stdlib.h>
#include <string.h>
#include "bind.h"
#include "notation.h"

typedef struct graph_box { sl_graph *g; } graph_box;

int sl_bind_raise(lua_State *L, const sl_error *e, const char *prefix,
                  const char *src, size_t srclen) {
  char buf[SL_MSG_MAX + 512];
  sl_error_format(e, src, srclen, buf, sizeof buf);
  sl_bind_where(L, 1);
  if (prefix) lua_pushfstring(L, "%s: %s", prefix, buf);
  else lua_pushstring(L, buf);
  lua_concat(L, 2);
  return lua_error(L);
}

void sl_bind_newlist(lua_State *L, int n) {
  lua_createtable(L, n, 0);
  luaL_setmetatable(L, SL_LIST_MT);
}

void sl_bind_pushgraph(lua_State *L, sl_graph *g) {
  graph_box *b = lua_newuserdatauv(L, sizeof *b, 0);
  b->g = g;
  luaL_setmetatable(L, SL_GRAPH_MT);
}

sl_graph *sl_bind_checkgraph(lua_State *L, int arg) {
  graph_box *b = luaL_checkudata(L, arg, SL_GRAPH_MT);
  return b->g;
}

/* One node name at the top of the stack, or an argument error. */
static int32_t check_name(lua_State *L, const sl_graph *g, int arg, int idx) {
  size_t len;
  if (lua_type(L, idx) != LUA_TSTRING) {
    lua_pushfstring(L, "node names are strings, got %s", luaL_typename(L, idx));
    luaL_argerror(L, arg, lua_tostring(L, -1));
  }
  const char *s = lua_tolstring(L, idx, &len);
  sl_error e;
  int32_t v = sl_graph_lookup(g, s, len, &e);
  if (v < 0) luaL_argerror(L, arg, e.msg);
  return v;
}

int32_t *sl_bind_checkset(lua_State *L, const sl_graph *g, int arg, size_t *n,
                          int allow_nil) {
  int t = lua_type(L, arg);
  *n = 0;
  if (t == LUA_TNONE || t == LUA_TNIL) {
    if (!allow_nil) luaL_typeerror(L, arg, "node name or list of names");
    return lua_newuserdatauv(L, sizeof(int32_t), 0);
  }
  if (t == LUA_TSTRING) {
    int32_t id = check_name(L, g, arg, arg);
    int32_t *v = lua_newuserdatauv(L, sizeof *v, 0);
    *v = id;
    *n = 1;
    return v;
  }
  if (t != LUA_TTABLE) luaL_typeerror(L, arg, "node name or list of names");
  lua_Integer len = luaL_len(L, arg);
  if (len < 0 || (size_t)len > sl_graph_nnodes(g) * 4 + 16)
    luaL_argerror(L, arg, "the list is longer than the graph could hold");
  int32_t *v = lua_newuserdatauv(L, (size_t)(len ? len : 1) * sizeof *v, 0);
  for (lua_Integer i = 1; i <= len; i++) {
    lua_geti(L, arg, i);
    v[i - 1] = check_name(L, g, arg, -1);
    lua_pop(L, 1);
  }
  *n = (size_t)len;
  return v;
}

/* Text argument: string only. */
static const char *check_text(lua_State *L, int arg, size_t *len) {
  if (lua_type(L, arg) != LUA_TSTRING) luaL_typeerror(L, arg, "string");
  return lua_tolstring(L, arg, len);
}

/* graph(text) */
static int l_graph(lua_State *L) {
  if (lua_type(L, 1) == LUA_TUSERDATA && luaL_testudata(L, 1, SL_GRAPH_MT)) {
    lua_settop(L, 1);   /* a graph is already a graph */
    return 1;
  }
  size_t len;
  const char *text = check_text(L, 1, &len);
  sl_error e;
  sl_graph *g = sl_graph_parse(text, len, &e);
  if (!g) return sl_bind_raise(L, &e, "graph", text, len);
  sl_bind_pushgraph(L, g);
  return 1;
}

/* read_graph(path) */
static int l_read_graph(lua_State *L) {
  const char *path = luaL_checkstring(L, 1);
  sl_error e;
  sl_graph *g = sl_graph_read(path, &e);
  if (g) { sl_bind_pushgraph(L, g); return 1; }
  if (e.line <= 0) return sl_bind_raise(L, &e, "read_graph", NULL, 0);
  /* reread the text for the caret view */
  FILE *f = fopen(path, "rb");
  luaL_Buffer b;
  luaL_buffinit(L, &b);
  if (f) {
    char chunk[4096];
    size_t n;
    while ((n = fread(chunk, 1, sizeof chunk, f)) > 0) luaL_addlstring(&b, chunk, n);
    fclose(f);
  }
  luaL_pushresult(&b);
  size_t len;
  const char *src = lua_tolstring(L, -1, &len);
  char buf[SL_MSG_MAX + 512];
  sl_error_format(&e, src, len, buf, sizeof buf);
  /* "path:line:col: message" is the usual form for a file position */
  const char *rest = strchr(buf, ':');
  luaL_where(L, 1);
  lua_pushfstring(L, "%s:%d:%d%s", path, e.line, e.col, rest ? rest : "");
  lua_concat(L, 2);
  return lua_error(L);
}

static int l_gc(lua_State *L) {
  graph_box *b = luaL_checkudata(L, 1, SL_GRAPH_MT);
  sl_graph_free(b->g);
  b->g = NULL;
  return 0;
}

/* Push a buffer as a string, freeing it. */
static int push_buf(lua_State *L, sl_buf *b) {
  if (b->failed) { sl_buf_free(b); return luaL_error(L, "out of memory"); }
  lua_pushlstring(L, b->data ? b->data : "", b->len);
  sl_buf_free(b);
  return 1;
}

/* The canonical notation, without the final newline so print(g) shows no
** blank line. */
static int l_tostring(lua_State *L) {
  sl_buf b;
  sl_buf_init(&b);
  sl_graph_write(sl_bind_checkgraph(L, 1), &b);
  if (b.len && b.data[b.len - 1] == '\n') b.data[--b.len] = '\0';
  return push_buf(L, &b);
}

static int l_eq(lua_State *L) {
  lua_pushboolean(L, sl_graph_equal(sl_bind_checkgraph(L, 1), sl_bind_checkgraph(L, 2)));
  return 1;
}

static int l_len(lua_State *L) {
  lua_pushinteger(L, (lua_Integer)sl_graph_nnodes(sl_bind_checkgraph(L, 1)));
  return 1;
}

/* Push the names of ids as a list. */
static void push_names(lua_State *L, const sl_graph *g, const int32_t *v, size_t n) {
  sl_bind_newlist(L, (int)n);
  for (size_t i = 0; i < n; i++) {
    lua_pushstring(L, sl_graph_name(g, v[i]));
    lua_rawseti(L, -2, (lua_Integer)i + 1);
  }
}

/* Push the marked nodes, sorted by name. */
static void push_marked(lua_State *L, const sl_graph *g, const unsigned char *mark) {
  size_t n = sl_graph_nnodes(g), k = 0;
  sl_bind_newlist(L, 0);
  for (size_t r = 0; r < n; r++) {
    int32_t v = sl_graph_by_rank(g, (int32_t)r);
    if (!mark[v]) continue;
    lua_pushstring(L, sl_graph_name(g, v));
    lua_rawseti(L, -2, (lua_Integer)++k);
  }
}

static int l_nodes(lua_State *L) {
  sl_graph *g = sl_bind_checkgraph(L, 1);
  size_t n = sl_graph_nnodes(g);
  sl_bind_newlist(L, (int)n);
  for (size_t r = 0; r < n; r++) {
    lua_pushstring(L, sl_graph_name(g, sl_graph_by_rank(g, (int32_t)r)));
    lua_rawseti(L, -2, (lua_Integer)r + 1);
  }
  return 1;
}

static int l_hidden(lua_State *L) {
  sl_graph *g = sl_bind_checkgraph(L, 1);
  size_t n = sl_graph_nnodes(g);
  unsigned char *mark = lua_newuserdatauv(L, n ? n : 1, 0);
  for (size_t v = 0; v < n; v++) mark[v] = (unsigned char)sl_graph_is_hidden(g, (int32_t)v);
  push_marked(L, g, mark);
  return 1;
}

static int l_edges(lua_State *L) {
  sl_graph *g = sl_bind_checkgraph(L, 1);
  size_t n = sl_graph_ndirected(g) + sl_graph_nbidirected(g);
  sl_edge *e = lua_newuserdatauv(L, (n ? n : 1) * sizeof *e, 0);
  sl_graph_edges(g, e);
  sl_bind_newlist(L, (int)n);
  for (size_t i = 0; i < n; i++) {
    lua_createtable(L, 0, 3);
    lua_pushstring(L, sl_graph_name(g, e[i].from));
    lua_setfield(L, -2, "from");
    lua_pushstring(L, sl_graph_name(g, e[i].to));
    lua_setfield(L, -2, "to");
    lua_pushstring(L, e[i].kind == SL_DIRECTED ? "->" : "<->");
    lua_setfield(L, -2, "kind");
    luaL_setmetatable(L, SL_EDGE_MT);
    lua_rawseti(L, -2, (lua_Integer)i + 1);
  }
  return 1;
}

/* parents / children of one node. */
static int neighbours(lua_State *L, int which) {
  sl_graph *g = sl_bind_checkgraph(L, 1);
  size_t n;
  int32_t *set = sl_bind_checkset(L, g, 2, &n, 0);
  if (n == 1) {
    size_t k;
    const int32_t *adj = which == 0 ? sl_graph_parents(g, set[0], &k)
                                    : sl_graph_children(g, set[0], &k);
    push_names(L, g, adj, k);
    return 1;
  }
  /* a set: the union of its members' lists */
  size_t nn = sl_graph_nnodes(g);
  unsigned char *mark = lua_newuserdatauv(L, nn ? nn : 1, 0);
  memset(mark, 0, nn);
  for (size_t i = 0; i < n; i++) {
    size_t k;
    const int32_t *adj = which == 0 ? sl_graph_parents(g, set[i], &k)
                                    : sl_graph_children(g, set[i], &k);
    for (size_t j = 0; j < k; j++) mark[adj[j]] = 1;
  }
  push_marked(L, g, mark);
  return 1;
}
static int l_parents(lua_State *L) { return neighbours(L, 0); }
static int l_children(lua_State *L) { return neighbours(L, 1); }

static int lineage(lua_State *L, int up) {
  sl_graph *g = sl_bind_checkgraph(L, 1);
  size_t n, nn = sl_graph_nnodes(g);
  int32_t *set = sl_bind_checkset(L, g, 2, &n, 0);
  unsigned char *mark = lua_newuserdatauv(L, nn ? nn : 1, 0);
  sl_error e;
  int rc = up ? sl_graph_ancestors(g, set, n, mark, &e)
              : sl_graph_descendants(g, set, n, mark, &e);
  if (rc) return sl_bind_raise(L, &e, NULL, NULL, 0);
  push_marked(L, g, mark);
  return 1;
}
static int l_ancestors(lua_State *L) { return lineage(L, 1); }
static int l_descendants(lua_State *L) { return lineage(L, 0); }

static int l_order(lua_State *L) {
  sl_graph *g = sl_bind_checkgraph(L, 1);
  size_t n = sl_graph_nnodes(g);
  int32_t *order = lua_newuserdatauv(L, (n ? n : 1) * sizeof *order, 0);
  sl_graph_order(g, order);
  push_names(L, g, order, n);
  return 1;
}

static int l_with(lua_State *L) {
  sl_graph *g = sl_bind_checkgraph(L, 1);
  size_t len;
  const char *text = check_text(L, 2, &len);
  sl_error e;
  sl_builder *b = sl_builder_alloc();
  if (!b) return luaL_error(L, "out of memory");
  sl_graph *out = NULL;
  if (sl_builder_add_graph(b, g, &e) == SL_OK && sl_notation_parse(b, text, len, &e) == SL_OK)
    out = sl_builder_finish(b, &e);
  sl_builder_free(b);
  if (!out) return sl_bind_raise(L, &e, "with", text, len);
  sl_bind_pushgraph(L, out);
  return 1;
}

static int l_without(lua_State *L) {
  sl_graph *g = sl_bind_checkgraph(L, 1);
  size_t len;
  const char *text = check_text(L, 2, &len);
  sl_error e;
  sl_removal r;
  if (sl_removal_parse(g, text, len, &r, &e) != SL_OK)
    return sl_bind_raise(L, &e, "without", e.line ? text : NULL, len);
  sl_graph *out = sl_graph_without(g, r.drop_node, r.edges, r.nedges, &e);
  sl_removal_free(&r);
  if (!out) return sl_bind_raise(L, &e, "without", NULL, 0);
  sl_bind_pushgraph(L, out);
  return 1;
}

static int l_dot(lua_State *L) {
  sl_buf b;
  sl_buf_init(&b);
  sl_graph_dot(sl_bind_checkgraph(L, 1), &b);
  return push_buf(L, &b);
}

static int l_show(lua_State *L) {
  sl_buf b;
  sl_buf_init(&b);
  sl_graph_show(sl_bind_checkgraph(L, 1), &b);
  if (b.len && b.data[b.len - 1] == '\n') b.data[--b.len] = '\0';
  return push_buf(L, &b);
}

static int l_draw(lua_State *L) {
  sl_graph *g = sl_bind_checkgraph(L, 1);
  if (lua_type(L, 2) != LUA_TSTRING) {
    sl_error e;
    sl_error_set(&e, SL_EARG, 0, 0, "path = must be a file name ending in .svg, .png or .pdf, "
                 "got %s", luaL_typename(L, 2));
    return sl_bind_raise(L, &e, "g:draw", NULL, 0);
  }
  const char *path = lua_tostring(L, 2);
  sl_error e;
  if (sl_graph_draw(g, path, &e) != SL_OK) return sl_bind_raise(L, &e, "g:draw", NULL, 0);
  lua_pushvalue(L, 2);
  return 1;
}

/* sluice._name(s): a node name as the notation writes it (print.lua). */
static int l_name(lua_State *L) {
  size_t len;
  const char *s = luaL_checklstring(L, 1, &len);
  if (strlen(s) != len) return luaL_argerror(L, 1, "a node name holds no NUL byte");
  sl_buf b;
  sl_buf_init(&b);
  sl_name_write(s, &b);
  return push_buf(L, &b);
}

static const luaL_Reg graph_methods[] = {
  {"nodes", l_nodes}, {"edges", l_edges}, {"hidden", l_hidden},
  {"parents", l_parents}, {"children", l_children},
  {"ancestors", l_ancestors}, {"descendants", l_descendants},
  {"order", l_order}, {"with", l_with}, {"without", l_without},
  {"dot", l_dot}, {"draw", l_draw}, {"show", l_show},
  {NULL, NULL}
};

static const luaL_Reg graph_meta[] = {
  {"__gc", l_gc}, {"__tostring", l_tostring}, {"__eq", l_eq}, {"__len", l_len},
  {NULL, NULL}
};

static const luaL_Reg graph_funcs[] = {
  {"graph", l_graph}, {"read_graph", l_read_graph}, {"_name", l_name},
  {NULL, NULL}
};

int sl_open_graph(lua_State *L) {
  luaL_newmetatable(L, SL_GRAPH_MT);
  luaL_setfuncs(L, graph_meta, 0);
  luaL_newlib(L, graph_methods);
  lua_setfield(L, -2, "__index");
  lua_pop(L, 1);
  luaL_setfuncs(L, graph_funcs, 0);   /* into the module table on top */
  return 0;
}

/* Add methods to the graph's method table (each binding file adds its own). */
void sl_bind_graph_methods(lua_State *L, const luaL_Reg *methods) {
  luaL_getmetatable(L, SL_GRAPH_MT);
  lua_getfield(L, -1, "__index");
  luaL_setfuncs(L, methods, 0);
  lua_pop(L, 2);
}

/* A metatable named mt whose values print with tostring_fn. */
void sl_bind_printable(lua_State *L, const char *mt, lua_CFunction tostring_fn) {
  luaL_newmetatable(L, mt);
  lua_pushcfunction(L, tostring_fn);
  lua_setfield(L, -2, "__tostring");
  lua_pop(L, 1);
}
