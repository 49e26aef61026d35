/*
** separation.h: trails between node sets, whether each is open given a
** conditioning set, and d-separation (m-separation when the graph has <->
** edges) by reachability in time linear in the size of the graph.
*/
#ifndef SL_SEPARATION_H
#define SL_SEPARATION_H

#include "graph.h"

/* How a trail moves from nodes[i] to nodes[i+1]. */
enum sl_step { SL_FORWARD = 0,   /* nodes[i] -> nodes[i+1] */
               SL_BACKWARD = 1,  /* nodes[i] <- nodes[i+1] */
               SL_BOTH = 2 };    /* nodes[i] <-> nodes[i+1] */

enum sl_trail_kind { SL_CAUSAL = 0, SL_BACKDOOR = 1, SL_NONCAUSAL = 2 };

/* Why a trail is blocked at a node. */
enum sl_block { SL_OPEN = 0,
                SL_BLOCK_CONDITIONED = 1,   /* a non-collider in the set */
                SL_BLOCK_COLLIDER = 2 };    /* a collider with neither it nor a
                                               descendant in the set */

typedef struct sl_trail {
  const int32_t *nodes;        /* len + 1 nodes */
  const unsigned char *steps;  /* len steps (sl_step) */
  size_t len;                  /* number of edges */
} sl_trail;

/* Node-set membership marks, sized nnodes; NULL means the empty set. */
typedef const unsigned char *sl_mark;

/* Called for each trail; return nonzero to stop the enumeration. */
typedef int (*sl_trail_fn)(void *ctx, const sl_trail *t);

/* Every trail from a node of X to a node of Y whose inner nodes are in
** neither X nor Y, each node at most once, in depth-first order from the
** members of X by name.  *stop, when set by another thread or a signal
** handler, ends the search with SL_ELIMIT.  Returns SL_OK, or the callback's
** nonzero value. */
int sl_trails_each(const sl_graph *g, const int32_t *x, size_t nx,
                   const int32_t *y, size_t ny, sl_trail_fn fn, void *ctx,
                   volatile int *stop, sl_error *e);

int sl_trail_kind(const sl_trail *t);

/* Open given Z?  an_z marks Z and its ancestors.  On a block, *at is the
** index in nodes of the first blocking node and *why its sl_block. */
int sl_trail_open(const sl_trail *t, sl_mark z, sl_mark an_z, size_t *at, int *why);

/* Reusable workspace for separation queries on one graph. */
typedef struct sl_sep_ws sl_sep_ws;
sl_sep_ws *sl_sep_alloc(const sl_graph *g);
void sl_sep_free(sl_sep_ws *w);

/* Whether X and Y are d-separated given Z (sets as id arrays).  When they
** are not and witness is non-NULL, it receives an open trail (valid until
** the next call on w).  The sets must be disjoint. */
int sl_separated(sl_sep_ws *w, const int32_t *x, size_t nx, const int32_t *y, size_t ny,
                 const int32_t *z, size_t nz, int *separated, sl_trail *witness,
                 sl_error *e);

/* Same, in a graph from which every edge x -> v with drop_out[x] and
** cut[v] is removed (nodes marked in drop_out with edges to nodes marked in
** cut): the proper back-door graph and its relatives.  Either may be NULL. */
int sl_separated_cut(sl_sep_ws *w, const int32_t *x, size_t nx, const int32_t *y,
                     size_t ny, const int32_t *z, size_t nz, sl_mark drop_out,
                     sl_mark cut, int *separated, sl_trail *witness, sl_error *e);

#endif
