/*
** bind.h: helpers shared by the Lua bindings (one file per object type).
*/
#ifndef SL_BIND_H
#define SL_BIND_H

#include <lua.h>
#include <lauxlib.h>
#include "graph.h"

#define SL_GRAPH_MT "sluice.graph"
#define SL_LIST_MT  "sluice.list"
#define SL_EDGE_MT  "sluice.edge"
#define SL_HOOKS    "sluice.hooks"   /* registry: functions of the Lua layer */

/* Raise e as a Lua error; src (may be NULL) adds the caret view.
** prefix names the function or file. */
int sl_bind_raise(lua_State *L, const sl_error *e, const char *prefix,
                  const char *src, size_t srclen);

/* Push a new empty list (a table with the list metatable). */
void sl_bind_newlist(lua_State *L, int n);

/* Push the graph as a new userdata that owns it. */
void sl_bind_pushgraph(lua_State *L, sl_graph *g);
sl_graph *sl_bind_checkgraph(lua_State *L, int arg);

/* Read a node-set argument (a name or a list of names) as node ids.  The
** array lives in a userdata pushed on the stack (so an error frees it);
** raises argument errors that name the node. */
int32_t *sl_bind_checkset(lua_State *L, const sl_graph *g, int arg, size_t *n,
                          int allow_nil);

int sl_open_graph(lua_State *L);   /* registers the graph functions */
int sl_open_adjust(lua_State *L);  /* adds trails and adjustment methods */
int sl_open_stats(lua_State *L);   /* models, estimators, pictures (raw) */
int sl_open_sem(lua_State *L);     /* linear structural models */
int sl_open_frontdoor(lua_State *L); /* front-door sets and instruments */
int sl_open_identify(lua_State *L); /* g:identify and its result */

/* Set when the user asks to stop a long computation (the shell's SIGINT
** handler); library loops poll it. */
extern volatile int sl_bind_stop;

#endif
