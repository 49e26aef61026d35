/*
** graph.h: an immutable causal graph (directed edges plus bidirected
** "hidden common cause" edges, some nodes hidden) and its structural
** queries.  Plain C: no Lua, no GSL.  Build one with a builder (the
** notation parser in notation.h is a builder client).
*/
#ifndef SL_GRAPH_H
#define SL_GRAPH_H

#include <stddef.h>
#include <stdint.h>
#include "error.h"

/* Documented limits. */
#define SL_MAX_NODES   (1 << 26)    /* 67 108 864 nodes */
#define SL_MAX_EDGES   (1 << 28)    /* 268 435 456 edges of each kind */
#define SL_MAX_NAME    4096         /* bytes in one node name */

enum sl_edge_kind { SL_DIRECTED = 0, SL_BIDIRECTED = 1 };

typedef struct sl_edge {
  int32_t from, to;   /* node ids; for SL_BIDIRECTED from < to by name */
  int kind;           /* sl_edge_kind */
} sl_edge;

typedef struct sl_graph sl_graph;
typedef struct sl_builder sl_builder;

/* ---- building ---- */
sl_builder *sl_builder_alloc(void);
void sl_builder_free(sl_builder *b);
/* Start from every node, edge and hidden mark of g. */
int sl_builder_add_graph(sl_builder *b, const sl_graph *g, sl_error *e);
/* Id of the node with this name, adding it if new; -1 on error. */
int32_t sl_builder_node(sl_builder *b, const char *name, size_t len, sl_error *e);
int sl_builder_hidden(sl_builder *b, int32_t v);
/* Add an edge; line/col locate it for later error messages.  A self-loop is
** refused here (SL_ESYNTAX at line/col).  Repeats are kept once. */
int sl_builder_edge(sl_builder *b, int32_t from, int32_t to, int kind,
                    int line, int col, sl_error *e);
size_t sl_builder_nnodes(const sl_builder *b);
const char *sl_builder_name(const sl_builder *b, int32_t v);
/* Finish: checks acyclicity of the directed part (SL_ECYCLE names the cycle
** as "a -> b -> c -> a" and locates its last edge).  The builder is left
** empty and reusable.  NULL on error. */
sl_graph *sl_builder_finish(sl_builder *b, sl_error *e);

/* ---- the graph ---- */
void sl_graph_free(sl_graph *g);
size_t sl_graph_nnodes(const sl_graph *g);
size_t sl_graph_ndirected(const sl_graph *g);
size_t sl_graph_nbidirected(const sl_graph *g);
const char *sl_graph_name(const sl_graph *g, int32_t v);
int sl_graph_is_hidden(const sl_graph *g, int32_t v);
/* Id of a node by name, or -1. */
int32_t sl_graph_find(const sl_graph *g, const char *name, size_t len);
/* Like find, but on failure fills e with "no node 'x'; did you mean 'y'?". */
int32_t sl_graph_lookup(const sl_graph *g, const char *name, size_t len, sl_error *e);
/* Position of v when nodes are sorted by name (bytewise). */
int32_t sl_graph_rank(const sl_graph *g, int32_t v);
/* Node with a given name-rank. */
int32_t sl_graph_by_rank(const sl_graph *g, int32_t r);
int sl_graph_equal(const sl_graph *a, const sl_graph *b);

/* Adjacency, each sorted by name.  The returned arrays belong to g. */
const int32_t *sl_graph_parents(const sl_graph *g, int32_t v, size_t *n);
const int32_t *sl_graph_children(const sl_graph *g, int32_t v, size_t *n);
const int32_t *sl_graph_siblings(const sl_graph *g, int32_t v, size_t *n); /* <-> */

/* Edges, directed first, each sorted by (from, to) name. out holds
** ndirected + nbidirected entries. */
void sl_graph_edges(const sl_graph *g, sl_edge *out);

/* Marks: mark[v] = 1 for every proper ancestor (descendant) of the set
** src[0..n-1]: nodes reached by a directed path of length >= 1.  A member of
** the set is marked only when it is itself an ancestor (descendant) of
** another member.  mark has nnodes entries. */
int sl_graph_ancestors(const sl_graph *g, const int32_t *src, size_t n,
                       unsigned char *mark, sl_error *e);
int sl_graph_descendants(const sl_graph *g, const int32_t *src, size_t n,
                         unsigned char *mark, sl_error *e);

/* A topological order: the lexicographically smallest by name. out has
** nnodes entries.  Always succeeds for a finished graph. */
void sl_graph_order(const sl_graph *g, int32_t *out);

/* A new graph without the given nodes (and their edges) and edges. */
sl_graph *sl_graph_without(const sl_graph *g, const unsigned char *drop_node,
                           const sl_edge *drop_edges, size_t ndrop, sl_error *e);

#endif
