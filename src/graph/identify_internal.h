/*
** identify_internal.h: what the files of the identification share: the
** observed ADMG, node sets as bit sets, the expression pool and its
** constructors, and the simplifier.
*/
#ifndef SL_IDENTIFY_INTERNAL_H
#define SL_IDENTIFY_INTERNAL_H

#include <setjmp.h>
#include "identify.h"

/* ---- the pool: every expression node and set of one query ---- */

/* Allocations never fail from the caller's view: on failure the pool
** jumps to its handler (set by sl_identify), which frees everything. */
struct sl_idpool {
  struct sl_idblock *head;
  jmp_buf *fail;
};
sl_idpool *sl_idpool_alloc(void);
void sl_idpool_free(sl_idpool *p);
void *sl_idpool_get(sl_idpool *p, size_t bytes);    /* zeroed, 8-aligned */

/* ---- node sets as bits ---- */
typedef uint64_t sl_bits;
#define SL_BITS_WORDS(n) (((n) + 63) / 64)
static inline int bits_has(const sl_bits *s, int32_t v) { return (int)((s[v >> 6] >> (v & 63)) & 1); }
static inline void bits_set(sl_bits *s, int32_t v) { s[v >> 6] |= (sl_bits)1 << (v & 63); }
static inline void bits_clear(sl_bits *s, int32_t v) { s[v >> 6] &= ~((sl_bits)1 << (v & 63)); }

/* ---- the observed ADMG (the latent projection), local ids 0..n-1 ---- */
typedef struct sl_admg {
  size_t n, words;
  int32_t *node;            /* local -> graph id */
  int32_t *local;           /* graph id -> local, -1 for hidden nodes */
  int32_t *pos;             /* local -> position in the topological order */
  int32_t *order;           /* position -> local */
  uint32_t *pa_off, *sb_off;
  int32_t *pa, *sb;         /* parents and <-> siblings, by local id */
  uint32_t *ch_off;
  int32_t *ch;              /* children */
} sl_admg;

int sl_admg_build(sl_admg *a, const sl_graph *g, sl_error *e);
void sl_admg_free(sl_admg *a);

/* Reusable scratch for separation and set queries on one ADMG. */
typedef struct sl_admg_ws {
  const sl_admg *a;
  unsigned char *mx, *my, *mz, *anz, *seen, *no_in, *no_out;   /* n; seen 2n */
  int32_t *queue;                                              /* 2n */
} sl_admg_ws;
int sl_admg_ws_init(sl_admg_ws *w, const sl_admg *a);
void sl_admg_ws_free(sl_admg_ws *w);

/* X and Y m-separated given Z (marks in w->mx, w->my, w->mz, filled by the
** caller) in the graph without the edges into the nodes marked no_in
** (directed and <->) and without the directed edges out of no_out (each
** may be all zero). */
int sl_admg_separated(sl_admg_ws *w);

/* Ancestors of y within v (y included), not going above the nodes of
** cut (edges into cut removed); cut may be NULL. */
void sl_admg_ancestors(const sl_admg *a, const sl_bits *v, const sl_bits *y,
                       const sl_bits *cut, sl_bits *out, int32_t *stack);
/* The c-components of the nodes of v: comp[u] for each u in v, numbered
** 0.. in the order of their first member; returns the count. */
size_t sl_admg_components(const sl_admg *a, const sl_bits *v, int32_t *comp,
                          int32_t *stack);

/* ---- expressions ---- */
const sl_idx *sl_idx_one(sl_idpool *p);
/* P(a | b); the arrays are copied and sorted. */
const sl_idx *sl_idx_prob(sl_idpool *p, const int32_t *a, size_t na, const int32_t *b,
                          size_t nb);
const sl_idx *sl_idx_product(sl_idpool *p, const sl_idx *const *kid, size_t n);
const sl_idx *sl_idx_sum(sl_idpool *p, const int32_t *w, size_t nw, const sl_idx *body);
const sl_idx *sl_idx_quotient(sl_idpool *p, const sl_idx *num, const sl_idx *den,
                              int32_t head);
/* A copy of x with another head. */
const sl_idx *sl_idx_with_head(sl_idpool *p, const sl_idx *x, int32_t head);
int sl_idx_equal(const sl_idx *a, const sl_idx *b);
/* Whether v is in the sorted set s. */
int sl_set_has(const int32_t *s, size_t n, int32_t v);
/* Union and difference of sorted sets, allocated in the pool. */
const int32_t *sl_set_union(sl_idpool *p, const int32_t *a, size_t na, const int32_t *b,
                            size_t nb, size_t *n);
const int32_t *sl_set_minus(sl_idpool *p, const int32_t *a, size_t na, const int32_t *b,
                            size_t nb, size_t *n);

/* The simplifier: rules that hold for every distribution the graph
** allows (see identify_simplify.c). */
typedef struct sl_idsimp {
  sl_idpool *pool;
  sl_admg_ws *ws;           /* m-separation in the observed ADMG */
  int32_t *scratch;         /* n ints */
} sl_idsimp;
const sl_idx *sl_idx_simplify(sl_idsimp *s, const sl_idx *x);

#endif
