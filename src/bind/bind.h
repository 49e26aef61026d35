/*
** bind.h: helpers shared by the Lua bindings (one file per object type).
*/
#ifndef SL_BIND_H
#define SL_BIND_H

#include <lua.h>
#include <lauxlib.h>
#include "graph.h"
#include "adjust.h"

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

/* Sets, trails and reasons as the graph methods return them (bind_reasons.c). */
void sl_bind_push_set(lua_State *L, const sl_graph *g, const int32_t *s, size_t n);
void sl_bind_push_trail(lua_State *L, const sl_graph *g, const sl_trail *t,
                        sl_mark z, sl_mark an_z);
const char *sl_bind_reason_kind(int kind);
/* The reasons as a list; trails are judged given z (an_z: z and its
** ancestors), front-door trails to the outcome given xz when it is not NULL. */
void sl_bind_push_reasons(lua_State *L, const sl_graph *g, const sl_reasons *rs,
                          sl_mark z, sl_mark an_z, sl_mark xz, sl_mark an_xz);
/* hooks.explain(g, set, reasons) words each reason (adds .text). */
void sl_bind_explain(lua_State *L, int gidx, int setidx, int ridx);
/* An empty sl_reasons owned by a userdata pushed on the stack. */
sl_reasons *sl_bind_push_reason_box(lua_State *L);
/* A value as the user would write it, for messages: 2.5, nan, "x", a table. */
const char *sl_bind_value_text(lua_State *L, int idx);

/* Push "file:line: " of the line the user wrote: the first frame from
** level up outside the embedded Lua layer, or "" when that is a C
** function (bind_public.c). */
void sl_bind_where(lua_State *L, int level);
/* Raise the message on top as the error of public function name: at the
** user's line (found from level up), under the public name, without
** sluice's insides; "interrupted" is raised as it is. */
int sl_bind_public_error(lua_State *L, const char *name, int level);
/* Call every function of the table at idx (but names beginning with '_')
** through a wrapper that raises its errors as public function
** prefix..name would (sl_bind_public_error). */
void sl_bind_publish(lua_State *L, int idx, const char *prefix);

/* Raise "fname: message" (printf-style) at the user's line. */
int sl_bind_opt_error(lua_State *L, const char *fname, const char *fmt, ...);
/* Refuse an option of the table at idx that is not in known, suggesting the
** closest name (bind_options.c). */
void sl_bind_check_options(lua_State *L, int idx, const char *fname,
                           const char *const *known, size_t nknown);
/* The list at idx as numbers (NaN where an item is not one), in a
** userdata pushed on the stack; *n gets its length. */
double *sl_bind_numbers(lua_State *L, int idx, size_t *n);

/* Gathering listed sets into the list on top of the stack, up to a limit. */
typedef struct sl_bind_sets { lua_State *L; const sl_graph *g; lua_Integer count, limit;
                              int truncated; } sl_bind_sets;
int sl_bind_on_set(void *ctx, const int32_t *set, size_t n);   /* an sl_set_fn */
/* Sort the list of sets at idx by size, then by names. */
void sl_bind_sort_sets(lua_State *L, int idx);

/* Add methods to the graph's method table; make a metatable that prints. */
void sl_bind_graph_methods(lua_State *L, const luaL_Reg *methods);
void sl_bind_printable(lua_State *L, const char *mt, lua_CFunction tostring_fn);

int sl_open_graph(lua_State *L);   /* registers the graph functions */
int sl_open_adjust(lua_State *L);  /* adds trails and adjustment methods */
int sl_open_stats(lua_State *L);   /* models, estimators, pictures (raw) */
int sl_open_sem(lua_State *L);     /* linear structural models */
int sl_open_frontdoor(lua_State *L); /* front-door sets and instruments */
int sl_open_identify(lua_State *L); /* g:identify and its result */
int sl_open_implications(lua_State *L); /* g:implications */
int sl_open_citest(lua_State *L);   /* tests of implications (raw) */
int sl_open_sensitivity(lua_State *L); /* E-values and omitted-variable bias (raw) */
int sl_open_db(lua_State *L);       /* connect, lazy tables of a database */
int sl_open_pois(lua_State *L);     /* hidden checks of the Poisson weights (after db) */
int sl_open_diag(lua_State *L);     /* balance and overlap (raw), their picture */

/* Set when the user asks to stop a long computation (the shell's SIGINT
** handler); library loops poll it. */
extern volatile int sl_bind_stop;

/* The lazy table (db:table, db:query) at arg, or an argument error
** (bind_db.c; the fits of bind_stats.c take one as data). */
struct sl_db_table *sl_bind_checklazy(lua_State *L, int arg);
/* The column of lazy table t named by the string at idx, or an error
** naming the closest column. */
int sl_bind_db_column(lua_State *L, const struct sl_db_table *t, int idx);
/* The estimators' question from the arguments (frame or lazy table,
** treatment, outcome or nil, {set}, opts) (bind_stats.c). */
struct sl_est_spec;
void sl_bind_read_spec(lua_State *L, struct sl_est_spec *s);

#endif
