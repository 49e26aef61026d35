/*
** frontdoor.h: Pearl's front-door criterion for the effect of one node x on
** one node y (Pearl 2009, Causality, definition 3.3.3), in graphs with
** hidden nodes and <-> edges.  A set Z is a front-door set when
**   (i)   Z intercepts every directed path from x to y;
**   (ii)  no back-door trail from x to a member is open given the empty set
**         (x and Z are d-separated once the arrows out of x are removed);
**   (iii) every back-door trail from a member to y is blocked by x (Z and y
**         are d-separated given x once the arrows out of Z are removed).
** Hidden nodes, x and y are never members.  When x has no directed path to
** y the empty set qualifies (the effect is nil).
*/
#ifndef SL_FRONTDOOR_H
#define SL_FRONTDOOR_H

#include "graph.h"
#include "adjust.h"

/* Check one set.  *ok is 1 when z is a front-door set; else every reason is
** appended to rs: x or y in the set (SL_WHY_TREATMENT, SL_WHY_OUTCOME), up to
** max_paths directed paths the set misses (SL_WHY_FD_MISSED), and for each
** member an open back-door trail from x (SL_WHY_FD_FROM_X) and one to y
** given x (SL_WHY_FD_TO_Y).  A hidden member, x = y or a hidden x or y is
** an SL_EARG error. */
int sl_frontdoor_check(const sl_graph *g, int32_t x, int32_t y, const int32_t *z,
                       size_t nz, int *ok, sl_reasons *rs, size_t max_paths,
                       sl_error *e);

/* Every inclusion-minimal front-door set, each passed to fn (ids sorted by
** name; fn returns nonzero to stop).  When none exists *none is set and why
** (if not NULL) receives a directed path that no allowed set intercepts
** (SL_WHY_FD_NONE).  *stop ends the listing with SL_ELIMIT. */
int sl_frontdoor_each(const sl_graph *g, int32_t x, int32_t y, sl_set_fn fn, void *ctx,
                      int *none, sl_reasons *why, volatile int *stop, sl_error *e);

/* The largest set that satisfies (ii) and (iii) (every front-door set lies
** within it); *n = 0 and *ok = 0 when it misses a directed path, i.e. when
** no front-door set exists.  *set is malloc'd (ids by name). */
int sl_frontdoor_find(const sl_graph *g, int32_t x, int32_t y, int32_t **set, size_t *n,
                      int *ok, sl_error *e);

#endif
