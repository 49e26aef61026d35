/*
** implications.h: the conditional independences among observed nodes that
** a graph implies (its testable implications).
**
**   one per separable pair: for every two observed nodes that are not
**     adjacent and that some set of observed nodes m-separates, one
**     inclusion-minimal separating set of observed nodes.  Whether any
**     observed set separates a and b is decided by the observed members of
**     An({a, b}) (no inducing path: Verma and Pearl 1990; Richardson and
**     Spirtes 2002, section 4); separation by sets within An({a, b}) is
**     vertex separation in the moral graph of that ancestral set
**     (Lauritzen, Dawid, Larsen and Leimer 1990), with each <-> edge a
**     hidden common parent, so a separator is made minimal by keeping the
**     members that touch a's side, then those that touch b's side (Tian,
**     Paz and Pearl 1998).  The later node's observed parents are tried
**     first, so in a graph without hidden nodes the set is always made of
**     them (the local Markov property);
**   the local Markov list (graphs without hidden nodes or <-> edges): each
**     node against each non-descendant that is not a parent, given its
**     parents (Pearl 2009, Causality, section 1.2.3).
*/
#ifndef SL_IMPLICATIONS_H
#define SL_IMPLICATIONS_H

#include "graph.h"

/* Called with each implication a ⊥ b | given (given sorted by name); return
** nonzero to stop.  Pairs come by the position of b in sl_graph_order, then
** of a: a is the earlier node, except in the local list, where a is the node
** whose parents are given. */
typedef int (*sl_implication_fn)(void *ctx, int32_t a, int32_t b,
                                 const int32_t *given, size_t n);

/* One implication per separable non-adjacent pair of observed nodes.
** *untestable counts the non-adjacent observed pairs that no observed set
** separates (among the pairs examined before a stop).  *stop, when set by
** a signal handler, ends the listing with SL_ELIMIT.  Returns SL_OK, the
** callback's nonzero value, or an error code. */
int sl_implications_each(const sl_graph *g, sl_implication_fn fn, void *ctx,
                         size_t *untestable, volatile int *stop, sl_error *e);

/* The local Markov list; SL_EARG when the graph has a hidden node or a <->
** edge (the message names one). */
int sl_implications_local(const sl_graph *g, sl_implication_fn fn, void *ctx,
                          volatile int *stop, sl_error *e);

#endif
