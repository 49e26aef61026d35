/*
** instrument.h: conditional instruments for the effect of one node x on
** one node y (Brito and Pearl 2002, UAI; van der Zander, Textor and
** Liskiewicz 2015, IJCAI, "Efficiently finding conditional instruments for
** causal inference").  z is an instrument given the set W when
**   (a) W holds no descendant of y, nor of any node on a causal path from
**       x to y (nor x, y or z);
**   (b) z and x are d-connected given W;
**   (c) z and y are d-separated given W in the graph without the arrows
**       from x into the causal paths (the edge x -> y alone when that is
**       the only causal path: Brito and Pearl's definition for one edge;
**       removing every first edge makes the instrument identify the total
**       effect when x reaches y through mediators).
** Hidden nodes are never z nor in W.
*/
#ifndef SL_INSTRUMENT_H
#define SL_INSTRUMENT_H

#include "graph.h"
#include "adjust.h"

/* Check one candidate.  *ok is 1 when z is an instrument given w; else the
** reasons go to rs: members of w that descend from y or a mediator
** (SL_WHY_IV_FORBIDDEN, with the directed path), z separated from x
** (SL_WHY_IV_IRRELEVANT), an open trail from z to y (SL_WHY_IV_OPEN).  A
** hidden z or member, z equal to x or y, or x, y or z in w is an SL_EARG
** error. */
int sl_instrument_check(const sl_graph *g, int32_t x, int32_t y, int32_t z,
                        const int32_t *w, size_t nw, int *ok, sl_reasons *rs,
                        sl_error *e);

/* Called with each instrument and its set (ids sorted by name); nonzero
** stops the listing. */
typedef int (*sl_instrument_fn)(void *ctx, int32_t z, const int32_t *w, size_t nw);

/* Every observed z that is an ancestral instrument (an instrument given
** some W within An[y, z] of Gc), in name order of z, each with a W: the
** separator of z and y nearest to y in the moral graph of their ancestors
** (van der Zander et al. 2015), then members dropped one at a time while
** (b) and (c) still hold (tests/oracle finds no smaller W).  A z that is an
** instrument only given a W reaching outside An[y, z] (a collider opened
** to tie z to x) is not listed; sl_instrument_check accepts any W.
** *stop ends the listing with SL_ELIMIT. */
int sl_instruments_each(const sl_graph *g, int32_t x, int32_t y, sl_instrument_fn fn,
                        void *ctx, volatile int *stop, sl_error *e);

#endif
